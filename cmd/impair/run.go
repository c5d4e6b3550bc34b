package main

import (
	"flag"
	"fmt"
	"io"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate"
	"rigwire/emulate/endpoint"
	"rigwire/emulate/links"
	"rigwire/emulate/trip"
)

// runOpts are the settings of `impair run`: those every link shares
// (emulate/links) and the command's own.
type runOpts struct {
	links        links.Options
	metricsAddr  string
	cautionsRead bool // the safety cautions as one line
}

// maxTimeScale bounds --time-scale.
const maxTimeScale = 100

const runUsage = `usage: impair run --profile FILE --listen HOST:PORT --controller HOST:PORT [flags]
       impair run --scenario FILE [--time-scale F] [--exit-after-scenario] --listen HOST:PORT --controller HOST:PORT [flags]
       impair run --links FILE [flags]
       trip socket: [--trip-listen HOST:PORT [--trip-from HOST] [--on-trip clean|stop_commands]]

Relays a rig's UDP datagrams: those of the sensor node arriving at --listen
go on to --controller, the controller's replies go back to the actuator
(by default the sensor node's address), each delayed and dropped as the
profile's direction says (sensor_to_controller, controller_to_actuator), or
as the scenario's phases say in turn.

Only the rig gets through. The relay takes the first source that sends to
--listen for the sensor node (--sensor pins it: an address, or an address
and port); datagrams from any other source, and datagrams at the
controller-facing socket from anyone but --controller, are strangers:
counted, never forwarded, never sent commands. A sensor node that restarts
on a new port stays a stranger unless --relock-after lets a silent sensor
be replaced (logged and counted). Commands that arrive before the sensor
node has sent, with no --actuator, are counted (no_actuator) and dropped.
The relay does not authenticate the rig's own datagrams: anyone who can
send from the rig's address and port is the rig.

--links
relays several rigs' links from one process. SIGHUP re-reads a profile
(a bad one is refused and the running one kept); SIGINT or SIGTERM stops
reading, releases what is in flight on time and exits; a second signal
abandons what is left. With --trip-listen a safety trip request
("rigwire-trip 1 <reason>") from --trip-from (default: loopback) makes the
link clean or stops its commands (--on-trip). The trip is no emergency
stop: keep one that does not depend on the link or on rigwire.
`

var runExits = exitcode.Help(cli.PlainStatuses, map[int]string{
	exitcode.OK:       "stopped on SIGINT/SIGTERM, or the scenario ended (--exit-after-scenario)",
	exitcode.Failure:  "error while running (a socket, the record file, a relay that failed)",
	exitcode.BadInput: "bad usage, or a profile, scenario or links file that does not load or validate (the message names file, line and key)",
})

func cmdRun(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("impair run", runUsage, runExits)
	var listen, controller, actuator, ctlBind, tap, tripListen cli.AddrFlag
	sensor := cli.SenderFlag{Who: "the rig's sensor node"}
	profilePath := fs.String("profile", "", "network profile `FILE` (YAML)")
	scenarioPath := fs.String("scenario", "", "play the scenario `FILE` (YAML) instead of one profile")
	linksPath := fs.String("links", "", "relay several rigs' links described in `FILE` (YAML) instead of one from flags")
	timeScale := fs.Float64("time-scale", 1, "multiply every duration of the scenario by `F` (0 < F ≤ 100)")
	exitAfter := fs.Bool("exit-after-scenario", false, "drain and exit 0 when the scenario ends (default: keep relaying on its last phase's profile)")
	fs.Var(&listen, "listen", "`HOST:PORT` where the sensor node's datagrams arrive (required)")
	fs.Var(&controller, "controller", "`HOST:PORT` of the controller (required)")
	fs.Var(&actuator, "actuator", "`HOST:PORT` for commands (default: the source of the latest sensor datagram)")
	fs.Var(&sensor, "sensor", "the rig's sensor node: `HOST` (any port) or HOST:PORT (default: the first source to send)")
	relockAfter := fs.Duration("relock-after", 0, "let a new source replace the sensor node once it has been silent this `long` (0: never)")
	fs.Var(&ctlBind, "controller-bind", "local `HOST:PORT` the relay binds to talk to the controller (default: an ephemeral port)")
	fs.Var(&tap, "tap", "send a copy of every sensor datagram, before impairment, to `HOST:PORT`")
	fs.Var(&tripListen, "trip-listen", "accept safety trip requests (\"rigwire-trip 1 <reason>\") on UDP `HOST:PORT`")
	tripFrom := fs.String("trip-from", "", "accept trip requests only from `HOST` (default: loopback addresses only)")
	onTrip := fs.String("on-trip", "clean", "what a trip does: clean (forward everything, no loss or delay) or stop_commands")
	metricsAddr := fs.String("metrics", "127.0.0.1:9471", "serve Prometheus metrics on `HOST:PORT` (\"off\": none)")
	recordPath := fs.String("record", "", "write one line per datagram to `FILE`")
	sampleClock := fs.String("sample-clock", "none", "with --loop and a decode.sample_time: the clock of the sample times, monotonic (the node on this host) or realtime (clocks synchronised), to measure the sensor side's latency; none: not measured")
	loopPath := fs.String("loop", "", "the rig's loop `FILE`: pair each command with the sample it answers (its decode.sequence and command_decode) and measure the controller's turnaround")
	seed := fs.Uint64("seed", 0, "seed of the decisions (default: the profile's, else random)")
	maxDatagram := fs.Int("max-datagram", emulate.DefaultMaxDatagram, "longest datagram accepted, `bytes`")
	maxInFlight := fs.Int("max-in-flight", emulate.DefaultMaxInFlight, "datagrams held at most per direction")
	spin := fs.Duration("spin", emulate.DefaultSpin, "spin this long before each release instead of sleeping (0: never)")
	logger := fs.LogLevel()
	cautionsRead := fs.Bool("cautions-read", false, "print the safety cautions as one line (you have read them)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	fail := cli.Usagef
	if fs.NArg() > 0 {
		return fail("unexpected argument %q", fs.Arg(0))
	}
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	sources := 0
	for _, s := range []string{*profilePath, *scenarioPath, *linksPath} {
		if s != "" {
			sources++
		}
	}
	switch {
	case sources == 0:
		return fail("--profile, --scenario or --links: one of them is required")
	case sources > 1:
		return fail("--profile, --scenario and --links: want exactly one of them")
	case *maxDatagram < 1 || *maxDatagram > 65535:
		return fail("--max-datagram: want 1…65535 bytes, got %d", *maxDatagram)
	case *maxInFlight < 1 || *maxInFlight > 1<<20:
		return fail("--max-in-flight: want 1…1048576, got %d", *maxInFlight)
	case *relockAfter < 0 || *relockAfter > links.MaxRelockAfter:
		return fail("--relock-after: want 0 (never) … 1h, got %s", *relockAfter)
	case *spin < 0 || *spin > 10*time.Millisecond:
		return fail("--spin: want 0…10ms, got %s", *spin)
	case !(*timeScale > 0 && *timeScale <= maxTimeScale):
		return fail("--time-scale: want a factor > 0 and ≤ %d, got %g", maxTimeScale, *timeScale)
	case cli.CheckMetricsAddr(*metricsAddr) != nil:
		return cli.CheckMetricsAddr(*metricsAddr)
	}
	log, err := logger(stderr)
	if err != nil {
		return err
	}
	opts := runOpts{metricsAddr: *metricsAddr, cautionsRead: *cautionsRead, links: links.Options{MaxDatagram: *maxDatagram,
		MaxInFlight: *maxInFlight, Spin: *spin, TimeScale: *timeScale, ExitAfterScenario: *exitAfter}}

	var specs []links.Spec
	if *linksPath != "" {
		for _, name := range []string{"listen", "controller", "actuator", "sensor", "controller-bind", "tap",
			"trip-listen", "trip-from", "on-trip", "record", "seed", "relock-after", "loop", "sample-clock"} {
			if set[name] {
				return fail("--%s: not with --links (give it per link in %s)", name, *linksPath)
			}
		}
		lf, err := links.Load(*linksPath)
		if err != nil {
			return cli.BadInput(err)
		}
		if lf.Metrics != "" && !set["metrics"] {
			opts.metricsAddr = lf.Metrics
		}
		specs = lf.Links
		opts.links.Inputs, opts.links.Labelled = []string{*linksPath}, true
	} else {
		switch {
		case !listen.Given:
			return fail("--listen: required")
		case !controller.Given:
			return fail("--controller: required")
		}
		s := links.Spec{
			Listen: listen.Addr, Controller: controller.Addr, Actuator: actuator.Addr, Sensor: sensor.Addr,
			ControllerBind: ctlBind.Addr, Tap: tap.Addr, ProfilePath: *profilePath, ScenarioPath: *scenarioPath,
			Seed: *seed, SeedSet: set["seed"], RecordPath: *recordPath, RelockAfter: *relockAfter,
		}
		if err := links.CheckFamilies(s, func(key string) string { return "--" + key }); err != nil {
			return fail("%v", err)
		}
		clock, ok := emulate.ParseSampleClock(*sampleClock)
		switch {
		case !ok:
			return fail("--sample-clock: want none, monotonic or realtime, got %q", *sampleClock)
		case clock != emulate.SampleClockNone && *loopPath == "":
			return fail("--sample-clock: only with --loop")
		}
		if *loopPath != "" {
			p, err := links.PairingFromLoop(*loopPath)
			if err != nil {
				return cli.BadInput(fmt.Errorf("--loop: %w", err))
			}
			p.Clock = clock
			if err := p.Check(); err != nil {
				return cli.BadInput(fmt.Errorf("--loop %s: %w", *loopPath, err))
			}
			s.Pairing, s.LoopPath = p, *loopPath
		}
		if tripListen.Given {
			s.TripListen = tripListen.Addr
			a, ok := trip.ParseAction(*onTrip)
			if !ok {
				return fail("--on-trip: want clean or stop_commands, got %q", *onTrip)
			}
			s.OnTrip = a
			if *tripFrom != "" {
				from, err := endpoint.ResolveHost(*tripFrom)
				if err != nil {
					return fail("--trip-from: %v", err)
				}
				s.TripFrom = from
			}
		} else {
			for _, name := range []string{"trip-from", "on-trip"} {
				if set[name] {
					return fail("--%s: only with --trip-listen", name)
				}
			}
		}
		specs = []links.Spec{s}
	}
	if set["time-scale"] || *exitAfter {
		hasScenario := false
		for _, s := range specs {
			hasScenario = hasScenario || s.ScenarioPath != ""
		}
		if !hasScenario {
			name := "--exit-after-scenario"
			if set["time-scale"] {
				name = "--time-scale"
			}
			return fail("%s: only with a scenario (--scenario, or scenario in the links file)", name)
		}
	}
	return runLinks(specs, opts, stderr, log)
}
