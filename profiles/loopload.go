package profiles

import (
	"fmt"
	"math"
	"path/filepath"
	"rigwire/emulate/trip"
	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
	"strings"

	"gonum.org/v1/gonum/mat"
	"gopkg.in/yaml.v3"
)

// LoadLoop reads and validates the loop description at path (the loop
// file of the package doc). A profile given as a path is resolved against
// the loop file's directory. Every error names the file, the line and the
// key path:
//
//	loop.yaml:12: controller.d: want 1×1, got 1×2
func LoadLoop(path string) (*Loop, error) {
	data, err := yamlpos.ReadInputFile(path, "loop file", yamlpos.MaxYAMLBytes)
	if err != nil {
		return nil, err
	}
	l, err := ParseLoop(data, path, filepath.Dir(path))
	if err != nil {
		return nil, err
	}
	l.File = path
	return l, nil
}

// ParseLoop validates a loop description held in memory. file names it in
// messages; dir is the directory that the profile path is resolved
// against.
func ParseLoop(data []byte, file, dir string) (*Loop, error) {
	root, err := yamlpos.Document(file, data)
	if err != nil {
		return nil, err
	}
	return parseLoop(root, dir)
}

// Negative eigenvalues of a noise covariance down to this much of its
// largest entry are taken for rounding in the file (common practice).
const psdTolerance = 1e-12

func parseLoop(root yamlpos.Field, dir string) (*Loop, error) {
	keys, err := root.Mapping("period", "plant", "controller", "setpoint", "compute_delay",
		"profile", "actuator", "timing", "decode", "command_decode", "trip", "reference")
	if err != nil {
		return nil, err
	}
	for _, k := range []string{"period", "plant", "controller", "profile"} {
		if keys[k].IsZero() {
			return nil, missing(root, k)
		}
	}
	l := &Loop{File: root.File}
	if l.Period, err = keys["period"].PositiveDuration(); err != nil {
		return nil, err
	}
	if err := parsePlant(keys["plant"], &l.Plant); err != nil {
		return nil, err
	}
	n, m := l.Plant.B.Dims()
	p, _ := l.Plant.C.Dims()
	if err := parseController(keys["controller"], &l.Controller, n, m, p); err != nil {
		return nil, err
	}
	l.Setpoint = make([]float64, p)
	if f := keys["setpoint"]; !f.IsNull() {
		v, err := f.Vector()
		if err != nil {
			return nil, err
		}
		if len(v) != p {
			return nil, f.Errorf("want %d numbers (one per output of plant.c), got %d", p, len(v))
		}
		l.Setpoint = v
	}
	if f := keys["reference"]; !f.IsNull() {
		if err := parseReference(f, l, p); err != nil {
			return nil, err
		}
	}
	l.Compute = laws.Constant{Value: 0}
	if f := keys["compute_delay"]; !f.IsNull() {
		c, err := parseCompute(f, dir, l.Period)
		if err != nil {
			return nil, err
		}
		l.Compute = c
	}
	pf := keys["profile"]
	switch {
	case pf.IsNull():
		return nil, pf.Errorf("want a profile file (a path) or an inline profile (a mapping), got %s", pf.Got())
	case pf.Node.Kind == yaml.ScalarNode:
		rel, err := pf.Text()
		if err != nil {
			return nil, err
		}
		path := rel
		if !filepath.IsAbs(path) && dir != "" {
			path = filepath.Join(dir, path)
		}
		prof, err := Load(path)
		if err != nil {
			return nil, pf.Errorf("%v", err) // keeps err reachable (Errorf sets Err)
		}
		l.Profile, l.ProfileFile = prof, path
	default:
		prof, err := ParseField(pf, dir)
		if err != nil {
			return nil, err
		}
		l.Profile = prof
	}
	if f := keys["actuator"]; !f.IsZero() {
		ak, err := f.Mapping("on_loss")
		if err != nil {
			return nil, err
		}
		if ol := ak["on_loss"]; !ol.IsNull() {
			s, err := ol.Text()
			if err != nil {
				return nil, err
			}
			switch s {
			case "hold":
				l.Actuator.OnLoss = HoldLast
			case "zero":
				l.Actuator.OnLoss = ZeroUnlessFresh
			default:
				return nil, ol.Errorf("want hold or zero, got %s", ol.Got())
			}
		}
	}
	if f := keys["timing"]; !f.IsZero() {
		if err := parseTiming(f, l); err != nil {
			return nil, err
		}
	}
	if f := keys["decode"]; !f.IsZero() {
		if err := parseDecode(f, &l.Decode, p); err != nil {
			return nil, err
		}
	}
	if l.Reference.Sinusoidal() && l.Decode.Format != "" && l.Decode.Sequence == nil {
		return nil, keys["decode"].Errorf("want a sequence field with a sinusoidal reference: the reference's time is the sample's sequence number times the period (key reference)")
	}
	if f := keys["command_decode"]; !f.IsZero() {
		if err := parseCommandDecode(f, &l.CommandDecode); err != nil {
			return nil, err
		}
	}
	if f := keys["trip"]; !f.IsNull() {
		t, err := trip.Parse(f, l.Period)
		if err != nil {
			return nil, err
		}
		l.Trip = t
	}
	return l, nil
}

// missing is the error for a required key that is absent, at the line of
// the mapping that should hold it.
func missing(parent yamlpos.Field, key string) *yamlpos.Error {
	line := parent.Line()
	return &yamlpos.Error{File: parent.File, Line: line, Key: parent.Key(key), Msg: "missing (required)"}
}

func shape(m *mat.Dense) string {
	r, c := m.Dims()
	return fmt.Sprintf("%d×%d", r, c)
}

func parsePlant(f yamlpos.Field, pl *Plant) error {
	keys, err := f.Mapping("a", "b", "c", "process_noise", "sensor_noise")
	if err != nil {
		return err
	}
	for _, k := range []string{"a", "b", "c"} {
		if keys[k].IsZero() {
			return missing(f, k)
		}
	}
	if pl.A, err = keys["a"].Dense(-1, -1); err != nil {
		return err
	}
	n, nn := pl.A.Dims()
	if n != nn {
		return keys["a"].Errorf("want a square matrix, got %s", shape(pl.A))
	}
	if pl.B, err = keys["b"].Dense(-1, -1); err != nil {
		return err
	}
	if r, _ := pl.B.Dims(); r != n {
		return keys["b"].Errorf("want %d rows (plant.a is %d×%d), got %s", n, n, n, shape(pl.B))
	}
	if pl.C, err = keys["c"].Dense(-1, -1); err != nil {
		return err
	}
	if _, c := pl.C.Dims(); c != n {
		return keys["c"].Errorf("want %d columns (plant.a is %d×%d), got %s", n, n, n, shape(pl.C))
	}
	p, _ := pl.C.Dims()
	if pl.W, err = covariance(keys["process_noise"], n); err != nil {
		return err
	}
	if pl.V, err = covariance(keys["sensor_noise"], p); err != nil {
		return err
	}
	return nil
}

// covariance reads an n×n symmetric positive semidefinite matrix; absent
// means zeros.
func covariance(f yamlpos.Field, n int) (*mat.Dense, error) {
	if f.IsNull() {
		return mat.NewDense(n, n, nil), nil
	}
	m, err := f.Dense(n, n)
	if err != nil {
		return nil, err
	}
	scale := 0.0
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			scale = math.Max(scale, math.Abs(m.At(i, j)))
			if i < j && m.At(i, j) != m.At(j, i) {
				return nil, f.Errorf("want a symmetric matrix, got [%d][%d] = %g but [%d][%d] = %g",
					i, j, m.At(i, j), j, i, m.At(j, i))
			}
		}
	}
	for i := 0; i < n; i++ {
		if m.At(i, i) < 0 {
			return nil, f.Errorf("want a covariance (positive semidefinite), got a negative variance [%d][%d] = %g", i, i, m.At(i, i))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(mat.NewSymDense(n, m.RawMatrix().Data), false) {
		return nil, f.Errorf("eigenvalues did not converge")
	}
	if v := eig.Values(nil); len(v) > 0 && v[0] < -psdTolerance*scale {
		return nil, f.Errorf("want a covariance (positive semidefinite), got an eigenvalue %g", v[0])
	}
	return m, nil
}

func parseController(f yamlpos.Field, c *Controller, n, m, p int) error {
	keys, err := f.Mapping("a", "b", "c", "d")
	if err != nil {
		return err
	}
	has := func(k string) bool { return !keys[k].IsNull() }
	dynamic := has("a") || has("b") || has("c")
	if dynamic {
		for _, k := range []string{"a", "b", "c"} {
			if !has(k) {
				return f.Errorf("want a, b and c together (a dynamic controller), got no %s", k)
			}
		}
		if c.A, err = keys["a"].Dense(-1, -1); err != nil {
			return err
		}
		nc, ncc := c.A.Dims()
		if nc != ncc {
			return keys["a"].Errorf("want a square matrix, got %s", shape(c.A))
		}
		if c.B, err = keys["b"].Dense(nc, p); err != nil {
			return err
		}
		if c.C, err = keys["c"].Dense(m, nc); err != nil {
			return err
		}
	} else if !has("d") {
		return f.Errorf("want d (static gain) or a, b, c and d, got neither")
	}
	if has("d") {
		if c.D, err = keys["d"].Dense(m, p); err != nil {
			return err
		}
	} else {
		c.D = mat.NewDense(m, p, nil)
	}
	return nil
}

// parseTiming reads the loop's timing policy (key timing; estimate/model.md
// §13): two horizons in whole periods, the command's no shorter than the
// sample's, and more than one period only for a holding actuator.
func parseTiming(f yamlpos.Field, l *Loop) error {
	keys, err := f.Mapping("sample_horizon", "command_horizon")
	if err != nil {
		return err
	}
	horizon := func(k string) (int, error) {
		g := keys[k]
		if g.IsNull() {
			return 1, nil
		}
		n, err := g.Int()
		if err != nil {
			return 0, g.Errorf("want a whole number of periods from 1 to %d, got %s", MaxHorizon, g.Got())
		}
		if n < 1 || n > MaxHorizon {
			return 0, g.Errorf("want a whole number of periods from 1 to %d, got %s", MaxHorizon, g.Got())
		}
		return n, nil
	}
	ns, err := horizon("sample_horizon")
	if err != nil {
		return err
	}
	na, err := horizon("command_horizon")
	if err != nil {
		return err
	}
	if na < ns {
		g := keys["command_horizon"]
		if g.IsNull() {
			g = f
		}
		return g.Errorf("want a command horizon of at least the sample horizon (%d periods): a command is never younger than the sample it answers, got %d", ns, na)
	}
	if na > 1 && l.Actuator.OnLoss == ZeroUnlessFresh {
		return keys["command_horizon"].Errorf("want 1 with actuator.on_loss: zero (that actuator drops every command at the end of its own period), got %d", na)
	}
	l.Timing = Timing{SampleHorizon: ns, CommandHorizon: na}
	return nil
}

// parseCompute reads compute_delay: a duration (a constant, as it always
// was), any delay law of the profile format, or the path of a rig timing
// file (a .yaml file holding compute_delay, as monitor calibrate writes
// it). Its lowest value must be below the period; a law that reaches
// beyond it makes those commands late.
func parseCompute(f yamlpos.Field, dir string, period float64) (laws.Delay, error) {
	if f.Node != nil && f.Node.Kind == yaml.ScalarNode && IsTimingPath(f.Node.Value) {
		path := f.Node.Value
		if !filepath.IsAbs(path) && dir != "" {
			path = filepath.Join(dir, path)
		}
		d, err := LoadTiming(path, period)
		if err != nil {
			return nil, f.Errorf("%v", err)
		}
		return d, nil
	}
	if f.Node != nil && f.Node.Kind == yaml.ScalarNode {
		c, err := f.DurationIn(0, math.Inf(1))
		if err != nil {
			return nil, err
		}
		if c >= period {
			return nil, f.Errorf("want a duration below the period (%s), got %s", laws.FormatSeconds(period), f.Got())
		}
		return laws.Constant{Value: c}, nil
	}
	d, err := ParseDelay(f, dir)
	if err != nil {
		return nil, err
	}
	if lo, _ := d.Support(); lo >= period {
		return nil, f.Errorf("want a law whose lowest value is below the period (%s), got %s, lowest %s", laws.FormatSeconds(period), laws.Describe(d), laws.FormatSeconds(lo))
	}
	return d, nil
}

// IsTimingPath says whether a compute_delay value names a rig timing file
// rather than a duration: it ends in .yaml or .yml.
func IsTimingPath(s string) bool {
	return strings.HasSuffix(s, ".yaml") || strings.HasSuffix(s, ".yml")
}

// LoadTiming reads a rig timing file: one key, compute_delay, a duration
// or a delay law (profiles/formats.md, the rig timing file), as monitor
// calibrate writes it. The law's lowest value must be below period.
func LoadTiming(path string, period float64) (laws.Delay, error) {
	data, err := yamlpos.ReadInputFile(path, "rig timing file", yamlpos.MaxYAMLBytes)
	if err != nil {
		return nil, err
	}
	root, err := yamlpos.Document(path, data)
	if err != nil {
		return nil, err
	}
	keys, err := root.Mapping("compute_delay")
	if err != nil {
		return nil, err
	}
	f, ok := keys["compute_delay"]
	if !ok || f.IsNull() {
		return nil, missing(root, "compute_delay")
	}
	if f.Node.Kind == yaml.ScalarNode && IsTimingPath(f.Node.Value) {
		return nil, f.Errorf("want a duration or a delay law, got another file %s", f.Got())
	}
	return parseCompute(f, filepath.Dir(path), period)
}
