package main

import (
	"flag"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
)

const serveHead = `usage: monitor serve --loop LOOP --listen HOST:PORT --controller HOST:PORT [--profile FILE]
                    [--actuator HOST:PORT] [--metrics HOST:PORT] [--duration D] [--summary FILE]

The relay and the monitor of one rig in one process: the relay impairs the
rig's link with the profile (the loop's own, or --profile), the monitor
measures E[eᵀe] from each sensor datagram before impairment, one endpoint
serves both's metrics. Ends after --duration or on SIGINT/SIGTERM and
writes the JSON summary. A trip section in the loop file arms the safety
trip. The trip is no emergency stop: keep one that does not depend on the
link or on rigwire.
`

// serveExits are the statuses of monitor serve.
var serveExits = exitcode.Help(
	[]int{exitcode.OK, exitcode.Failure, exitcode.BadInput, exitcode.Tripped},
	map[int]string{
		exitcode.OK:       "the summary was written (whatever the verdict)",
		exitcode.Failure:  "error while running (a socket, the summary file)",
		exitcode.BadInput: "bad usage, or a loop or profile file that does not load or validate (the message names file, line and key)",
		exitcode.Tripped:  "the loop's safety trip fired",
	})

// benchFlags are the flags of the commands that relay and monitor one rig
// in one process (serve, soak): the loop, the relay's addresses, the
// metrics endpoint, the summary, the seed and the progress interval.
type benchFlags struct {
	loop, listen, controller, actuator, metrics, summary *string
	seed                                                 *uint64
	every                                                *time.Duration
}

// addBenchFlags registers them on fs with the command's defaults.
func addBenchFlags(fs *cli.Flags, loopHelp, metrics string, every time.Duration) *benchFlags {
	return &benchFlags{
		loop:       fs.String("loop", "", loopHelp),
		listen:     fs.String("listen", "", "`HOST:PORT` where the sensor node's datagrams arrive (required)"),
		controller: fs.String("controller", "", "`HOST:PORT` of the controller (required)"),
		actuator:   fs.String("actuator", "", "`HOST:PORT` for commands (default: the source of the latest sensor datagram)"),
		metrics:    fs.String("metrics", metrics, "serve the relay's and the monitor's metrics on `HOST:PORT` (\"off\": none)"),
		summary:    fs.String("summary", "", "write the JSON summary to `FILE` (default: stdout)"),
		seed:       fs.Uint64("seed", 0, "seed of the relay's decisions (default: the profile's, else random)"),
		every:      fs.Duration("progress", every, "status line on stderr every `D` (0: none)"),
	}
}

// check is the checks common to both commands, after fs.Parse. With a
// simulated rig the relay's addresses are the rig's own (not required).
func (f *benchFlags) check(fs *cli.Flags, simulated bool) error {
	switch {
	case fs.NArg() > 0:
		return cli.Usagef("unexpected argument %q", fs.Arg(0))
	case *f.loop == "":
		return cli.Usagef("--loop: required")
	case *f.every < 0:
		return cli.Usagef("--progress: want ≥ 0, got %s", *f.every)
	case cli.CheckMetricsAddr(*f.metrics) != nil:
		return cli.CheckMetricsAddr(*f.metrics)
	case simulated && (*f.controller != "" || *f.actuator != ""):
		return cli.Usagef("--controller, --actuator: not with --simulated-rig (the simulated rig's own addresses are used)")
	case simulated:
		return nil
	case *f.listen == "":
		return cli.Usagef("--listen: required")
	case *f.controller == "":
		return cli.Usagef("--controller: required")
	}
	return nil
}

// seedSet tells whether --seed was given.
func (f *benchFlags) seedSet(fs *cli.Flags) bool {
	set := false
	fs.Visit(func(fl *flag.Flag) { set = set || fl.Name == "seed" })
	return set
}
