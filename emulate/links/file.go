package links

import (
	"errors"
	"fmt"
	"net/netip"
	"path/filepath"
	"regexp"
	"time"

	"rigwire/emulate"
	"rigwire/emulate/endpoint"
	"rigwire/emulate/trip"
	"rigwire/profiles/yamlpos"
)

// Spec is one rig's link as the relay process runs it: from the flags
// of `impair run` (Name "") or from one entry of a links file.
type Spec struct {
	Name string // "" in single-link mode: metrics without a link label
	File string // the links file ("": flags)
	Line int    // line of the entry in the links file (0: flags)

	Listen, Controller, Actuator, Sensor, ControllerBind, Tap netip.AddrPort

	// Exactly one of ProfilePath and ScenarioPath is set.
	ProfilePath, ScenarioPath string

	Seed    uint64
	SeedSet bool

	RecordPath string

	// LoopPath, when set, is the rig's loop file; Pairing, read from its
	// decode and command_decode sections, lets the relay pair each command
	// with its sample and measure the controller's turnaround.
	LoopPath string
	Pairing  *emulate.Pairing

	// RelockAfter lets a new source replace a sensor node silent this long
	// (0: never; emulate.Config.RelockAfter), at most MaxRelockAfter.
	RelockAfter time.Duration

	// TripListen, when valid, is where trip requests are accepted;
	// TripFrom is the only source address accepted (invalid: loopback
	// addresses only).
	TripListen netip.AddrPort
	TripFrom   netip.Addr
	OnTrip     trip.Action
}

// File is a parsed links file.
type File struct {
	File    string
	Metrics string // "" when not given
	Links   []Spec
}

var linkName = regexp.MustCompile(`^[a-z0-9_-]+$`)

// maxLinks bounds the links of one file (each holds sockets and goroutines).
const maxLinks = 256

// MaxRelockAfter bounds a link's relock interval (relock_after, impair
// run --relock-after).
const MaxRelockAfter = time.Hour

// Load reads and validates a links file. Paths inside it are relative
// to its directory. Errors read "file:line: key: what was expected".
func Load(path string) (*File, error) {
	data, err := yamlpos.ReadInputFile(path, "links file", yamlpos.MaxYAMLBytes)
	if err != nil {
		return nil, err
	}
	return Parse(data, path, filepath.Dir(path))
}

// Parse validates a links file held in memory: file names it in
// messages, dir is the directory its relative paths are resolved against.
func Parse(data []byte, file, dir string) (*File, error) {
	root, err := yamlpos.Document(file, data)
	if err != nil {
		return nil, err
	}
	keys, err := root.Mapping("metrics", "links")
	if err != nil {
		return nil, err
	}
	lf := &File{File: file}
	if f, ok := keys["metrics"]; ok {
		s, err := f.Text()
		if err != nil {
			return nil, f.Errorf("want HOST:PORT or \"off\", got %s", f.Got())
		}
		if err := endpoint.CheckMetrics(s); err != nil {
			return nil, f.Errorf("%v", err)
		}
		lf.Metrics = s
	}
	lk, ok := keys["links"]
	if !ok {
		return nil, root.Errorf("links: missing (a list of links, each with name, listen, controller and a profile or scenario)")
	}
	items, err := lk.Seq()
	if err != nil {
		return nil, err
	}
	if len(items) == 0 {
		return nil, lk.Errorf("want at least one link, got an empty list")
	}
	if len(items) > maxLinks {
		return nil, lk.Errorf("want at most %d links, got %d", maxLinks, len(items))
	}
	names := map[string]int{}
	records := map[string]string{} // absolute record path → the link that writes it
	// Local sockets the process binds: listen, controller_bind, trip_listen.
	bound := map[netip.AddrPort]string{}
	for _, it := range items {
		l, err := parseLink(it, dir)
		if err != nil {
			return nil, err
		}
		l.File = file
		if prev, dup := names[l.Name]; dup {
			return nil, it.Errorf("name: %q already names the link at line %d", l.Name, prev)
		}
		names[l.Name] = l.Line
		if l.RecordPath != "" {
			abs, err := filepath.Abs(l.RecordPath)
			if err != nil {
				abs = filepath.Clean(l.RecordPath)
			}
			if prev, dup := records[abs]; dup {
				return nil, it.Errorf("record: %s is already the record of link %q (each link needs its own)", l.RecordPath, prev)
			}
			records[abs] = l.Name
		}
		for _, b := range []struct {
			key string
			ap  netip.AddrPort
		}{{"listen", l.Listen}, {"controller_bind", l.ControllerBind}, {"trip_listen", l.TripListen}} {
			if !b.ap.IsValid() || b.ap.Port() == 0 {
				continue
			}
			if prev, dup := bound[b.ap]; dup {
				return nil, it.Errorf("%s: %s is already used by %s", b.key, b.ap, prev)
			}
			bound[b.ap] = fmt.Sprintf("%s of link %q", b.key, l.Name)
		}
		lf.Links = append(lf.Links, l)
	}
	return lf, nil
}

func parseLink(it yamlpos.Field, dir string) (Spec, error) {
	keys, err := it.Mapping("name", "listen", "controller", "actuator", "sensor", "relock_after", "controller_bind", "tap",
		"profile", "scenario", "seed", "record", "loop", "sample_clock", "trip_listen", "trip_from", "on_trip")
	if err != nil {
		return Spec{}, err
	}
	l := Spec{Line: it.Line()}
	f, ok := keys["name"]
	if !ok {
		return l, it.Errorf("name: missing (a unique name of a-z, 0-9, _ and -)")
	}
	if l.Name, err = f.Text(); err != nil || !linkName.MatchString(l.Name) || len(l.Name) > 64 {
		return l, f.Errorf("want a name of a-z, 0-9, _ and - (at most 64), got %s", f.Got())
	}
	addr := func(key string, required bool, dst *netip.AddrPort) error {
		f, ok := keys[key]
		if !ok {
			if required {
				return it.Errorf("%s: missing (HOST:PORT)", key)
			}
			return nil
		}
		s, err := f.Text()
		if err != nil {
			return f.Errorf("want HOST:PORT, got %s", f.Got())
		}
		ap, err := endpoint.Resolve(s)
		if err != nil {
			return f.Errorf("%v", err)
		}
		*dst = ap
		return nil
	}
	for _, a := range []struct {
		key string
		req bool
		dst *netip.AddrPort
	}{
		{"listen", true, &l.Listen}, {"controller", true, &l.Controller},
		{"actuator", false, &l.Actuator},
		{"controller_bind", false, &l.ControllerBind}, {"tap", false, &l.Tap},
		{"trip_listen", false, &l.TripListen},
	} {
		if err := addr(a.key, a.req, a.dst); err != nil {
			return l, err
		}
	}
	if f, ok := keys["sensor"]; ok {
		s, err := f.Text()
		if err == nil {
			l.Sensor, err = endpoint.ParseSender(s, "the rig's sensor node")
		}
		if err != nil {
			return l, f.Errorf("%v", err)
		}
	}
	if f, ok := keys["relock_after"]; ok {
		s, err := f.Text()
		var d time.Duration
		if err == nil {
			d, err = time.ParseDuration(s)
		}
		if err != nil || d < 0 || d > MaxRelockAfter {
			return l, f.Errorf("want a duration from 0 (never) to 1h, such as 2s, got %s", f.Got())
		}
		l.RelockAfter = d
	}
	if err := CheckFamilies(l, func(key string) string { return key }); err != nil {
		return l, it.Errorf("%v", err)
	}
	if l.Controller.Port() == 0 {
		return l, keys["controller"].Errorf("want a port > 0, got %s", keys["controller"].Got())
	}
	path := func(key string) (string, error) {
		f, ok := keys[key]
		if !ok {
			return "", nil
		}
		s, err := f.Text()
		if err != nil || s == "" {
			return "", f.Errorf("want a file path, got %s", f.Got())
		}
		if !filepath.IsAbs(s) {
			s = filepath.Join(dir, s)
		}
		return s, nil
	}
	if l.ProfilePath, err = path("profile"); err != nil {
		return l, err
	}
	if l.ScenarioPath, err = path("scenario"); err != nil {
		return l, err
	}
	switch {
	case l.ProfilePath == "" && l.ScenarioPath == "":
		return l, it.Errorf("want exactly one of profile and scenario, got neither")
	case l.ProfilePath != "" && l.ScenarioPath != "":
		return l, keys["scenario"].Errorf("want exactly one of profile and scenario, got both")
	}
	if l.RecordPath, err = path("record"); err != nil {
		return l, err
	}
	if l.LoopPath, err = path("loop"); err != nil {
		return l, err
	}
	if l.LoopPath != "" {
		if l.Pairing, err = PairingFromLoop(l.LoopPath); err != nil {
			return l, keys["loop"].Errorf("%v", err)
		}
	}
	if f, ok := keys["sample_clock"]; ok {
		s, _ := f.Text()
		c, ok := emulate.ParseSampleClock(s)
		switch {
		case !ok:
			return l, f.Errorf("want none, monotonic or realtime, got %s", f.Got())
		case l.Pairing == nil && c != emulate.SampleClockNone:
			return l, f.Errorf("only with loop")
		}
		if l.Pairing != nil {
			l.Pairing.Clock = c
			if err := l.Pairing.Check(); err != nil {
				return l, f.Errorf("%v", err)
			}
		}
	}
	if f, ok := keys["seed"]; ok {
		if l.Seed, err = f.Uint64(); err != nil {
			return l, err
		}
		l.SeedSet = true
	}
	if f, ok := keys["on_trip"]; ok {
		s, _ := f.Text()
		a, ok := trip.ParseAction(s)
		if !ok {
			return l, f.Errorf("want clean or stop_commands, got %s", f.Got())
		}
		l.OnTrip = a
	}
	if f, ok := keys["trip_from"]; ok {
		s, err := f.Text()
		if err == nil {
			l.TripFrom, err = endpoint.ResolveHost(s)
		}
		if err != nil {
			return l, f.Errorf("want a host (an address or a name), got %s", f.Got())
		}
	}
	if !l.TripListen.IsValid() {
		for _, k := range []string{"on_trip", "trip_from"} {
			if f, ok := keys[k]; ok {
				return l, f.Errorf("only with trip_listen (where trip requests arrive)")
			}
		}
	}
	return l, nil
}

// CheckFamilies refuses a link whose addresses one socket would have to
// serve in two families (emulate.CheckFamilies); name spells a key (a
// flag, or a key of the links file).
func CheckFamilies(l Spec, name func(key string) string) error {
	err := emulate.CheckFamilies(emulate.Config{Listen: l.Listen, Actuator: l.Actuator, Sensor: l.Sensor,
		Controller: l.Controller, ControllerBind: l.ControllerBind})
	var fe *emulate.FamilyError
	if errors.As(err, &fe) {
		return errors.New(fe.Spell(name))
	}
	return err
}
