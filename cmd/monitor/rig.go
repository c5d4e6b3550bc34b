package main

import (
	"fmt"
	"io"
	"log/slog"
	"os"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/rig"
	"rigwire/emulate/trip"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// rigCaution is printed by the simulated rig's commands before they start.
const rigCaution = "SAFETY: this is a simulated rig — no hardware moves. Before you point the\nsame profile at a real rig:\n" + trip.Cautions

const rigUsage = `usage: monitor rig node --loop LOOP --relay HOST:PORT [--listen HOST:PORT] [--log FILE] [--duration D] [--seed S] [--start steady|rest]
       monitor rig controller --loop LOOP --listen HOST:PORT [--start steady|rest]

node: the plant, its time-driven sensor and its hold actuator; samples go to
--relay (a relay's --listen, or the controller itself), commands come back to
--listen. controller: the loop's controller, replying to each sample's source.
Run "monitor rig node -h" or "monitor rig controller -h" for the flags.
`

const rigNodeHead = `usage: monitor rig node --loop LOOP --relay HOST:PORT [--listen HOST:PORT] [--log FILE]
                        [--duration D] [--seed S] [--start steady|rest]

The simulated rig's node: the plant (integrated exactly between input
changes), its time-driven sensor sending each sample to --relay, and its
hold actuator applying the commands that come back to --listen. Runs for
--duration, or until SIGINT or SIGTERM.
`

const rigControllerHead = `usage: monitor rig controller --loop LOOP --listen HOST:PORT [--start steady|rest]

The simulated rig's controller: the loop's controller, answering each
sample that arrives at --listen with a command to the sample's source.
Runs until SIGINT or SIGTERM.
`

// rigExits are the statuses of both rig commands.
var rigExits = exitcode.Help(cli.PlainStatuses, map[int]string{
	exitcode.OK:       "stopped after --duration or on SIGINT/SIGTERM",
	exitcode.Failure:  "error while running (a socket, the sample log)",
	exitcode.BadInput: "bad usage, or a loop file that does not load or validate (the message names file, line and key)",
})

// cmdRig runs one end of the simulated rig.
func cmdRig(args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		fmt.Fprint(stderr, rigUsage)
		return cli.Usagef("want node or controller")
	}
	switch args[0] {
	case "node":
		return cmdRigNode(args[1:], stderr)
	case "controller":
		return cmdRigController(args[1:], stderr)
	case "-h", "-help", "--help", "help":
		return cli.Help{Text: rigUsage + "\n" + rigExits}
	}
	return cli.Usagef("unknown rig command %q: want node or controller", args[0])
}

func cmdRigNode(args []string, stderr io.Writer) error {
	fs := cli.NewFlags("monitor rig node", rigNodeHead, rigExits)
	cautions := cautionsFlag(fs)
	loopPath := fs.String("loop", "", "loop `FILE` (YAML) the rig simulates (required)")
	var relay, listen cli.AddrFlag
	fs.Var(&relay, "relay", "`HOST:PORT` the samples go to: the relay's --listen, or the controller (required)")
	fs.Var(&listen, "listen", "local `HOST:PORT` of the node's socket, where commands arrive (default: an ephemeral port)")
	logPath := fs.String("log", "", "write the sample log (CSV: k, t_k, y, held u, command delay) to `FILE`")
	var dur durationFlag
	fs.Var(&dur, "duration", "run this long, then stop (default: until SIGINT/SIGTERM)")
	seed := fs.Uint64("seed", 1, "seed of the process and sensor noise")
	start := fs.String("start", "steady", "where the loop begins: steady (the predicted mean) or rest")
	loop, st, log, err := rigSetup(fs, args, loopPath, start, "relay", &relay, stderr)
	if err != nil {
		return err
	}
	cfg := rig.NodeConfig{Loop: loop, Listen: listen.Addr, Relay: relay.Addr, Seed: *seed, Start: st, Logger: log}
	if dur.s > 0 {
		cfg.Periods = max(1, int(dur.s/loop.Period+0.5))
	}
	logFile, err := createLog(*logPath)
	if err != nil {
		return err
	}
	defer logFile.Close()
	if logFile != nil {
		cfg.Log = logFile
	}
	node, err := rig.NewNode(cfg)
	if err != nil {
		return err
	}
	fmt.Fprint(stderr, cautions(rigCaution))
	log.Info("rig node running", "loop", loop.File, "listen", node.LocalAddr().String(),
		"relay", relay.Addr.String(), "period", loop.Period, "periods", cfg.Periods, "start", *start, "seed", *seed)
	ctx, cancel := cli.SignalContext()
	defer cancel()
	if err := node.Run(ctx); err != nil {
		return err
	}
	if err := closeLog(logFile); err != nil {
		return err
	}
	s := node.Stats()
	log.Info("rig node stopped", "samples", s.Samples, "applied", s.Applied, "late", s.Late,
		"duplicate", s.Duplicate, "older", s.Older, "malformed", s.Malformed, "send_errors", s.SendError, "overruns", s.Overruns)
	return nil
}

func cmdRigController(args []string, stderr io.Writer) error {
	fs := cli.NewFlags("monitor rig controller", rigControllerHead, rigExits)
	cautions := cautionsFlag(fs)
	loopPath := fs.String("loop", "", "loop `FILE` (YAML) whose controller to run (required)")
	var listen cli.AddrFlag
	fs.Var(&listen, "listen", "`HOST:PORT` where samples arrive (required)")
	start := fs.String("start", "steady", "controller state at start: steady (the predicted mean) or rest")
	computeText := fs.String("compute", "", "draw the controller's computing time for every sample from `LAW` (a duration or a delay law in the profile format, e.g. \"{kind: gamma, shape: 4, scale: 0.5ms}\"; default: the loop's compute_delay): a slow, jittery controller the loop file does not know about")
	seed := fs.Uint64("seed", 1, "seed of the computing-time draws")
	logPath := fs.String("log", "", "write one CSV line per command sent to `FILE`: seq,arrival_s,sent_s,compute_s")
	loop, st, log, err := rigSetup(fs, args, loopPath, start, "listen", &listen, stderr)
	if err != nil {
		return err
	}
	cfg := rig.ControllerConfig{Loop: loop, Listen: listen.Addr, Start: st, Logger: log, Seed: *seed}
	if *computeText != "" {
		if cfg.Compute, err = profiles.ParseDelayText(*computeText, "--compute", "."); err != nil {
			return cli.BadInput(err)
		}
	}
	logFile, err := createLog(*logPath)
	if err != nil {
		return err
	}
	defer logFile.Close()
	if logFile != nil {
		cfg.Log = logFile
	}
	ctl, err := rig.NewController(cfg)
	if err != nil {
		return err
	}
	comp := loop.ComputeText()
	if cfg.Compute != nil {
		comp = laws.Describe(cfg.Compute) + " (--compute; the loop file says " + comp + ")"
	}
	fmt.Fprint(stderr, cautions(rigCaution))
	log.Info("rig controller running", "loop", loop.File, "listen", ctl.LocalAddr().String(),
		"compute_delay", comp, "start", *start)
	ctx, cancel := cli.SignalContext()
	defer cancel()
	if err := ctl.Run(ctx); err != nil {
		return err
	}
	if err := closeLog(logFile); err != nil {
		return err
	}
	s := ctl.Stats()
	log.Info("rig controller stopped", "used", s.Used, "stale", s.Stale, "duplicate", s.Duplicate, "older", s.Older,
		"malformed", s.Malformed, "send_errors", s.SendError)
	return nil
}

// rigSetup parses a rig command's flags, checks the ones every rig command
// needs (--loop and the command's required address, named addrName), and
// loads the loop and its start point.
func rigSetup(fs *cli.Flags, args []string, loopPath, start *string, addrName string, addr *cli.AddrFlag, stderr io.Writer) (*profiles.Loop, rig.Start, *slog.Logger, error) {
	var st rig.Start
	if err := fs.Parse(args); err != nil {
		return nil, st, nil, err
	}
	switch {
	case fs.NArg() > 0:
		return nil, st, nil, cli.Usagef("unexpected argument %q", fs.Arg(0))
	case *loopPath == "":
		return nil, st, nil, cli.Usagef("--loop: required")
	case !addr.Given:
		return nil, st, nil, cli.Usagef("--%s: required", addrName)
	}
	log := slog.New(slog.NewTextHandler(stderr, nil))
	loop, err := profiles.LoadLoop(*loopPath)
	if err != nil {
		return nil, st, nil, cli.BadInput(err)
	}
	// The datagram layout comes from the loop's decode section: checked
	// here, so that NewNode and NewController fail only on their sockets.
	if _, err := rig.NewLayout(loop); err != nil {
		return nil, st, nil, cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	st, err = rigStart(loop, *start, log)
	return loop, st, log, err
}

// createLog creates a rig end's --log file; nil when path is "".
func createLog(path string) (*os.File, error) {
	if path == "" {
		return nil, nil
	}
	f, err := os.Create(path)
	if err != nil {
		return nil, fmt.Errorf("--log: %w", err)
	}
	return f, nil
}

// closeLog closes a --log file once the run has written it, with the
// error that the deferred Close would lose.
func closeLog(f *os.File) error {
	if f == nil {
		return nil
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("--log: %w", err)
	}
	return nil
}
