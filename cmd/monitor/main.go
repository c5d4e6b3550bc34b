// Command monitor predicts and measures how a control loop behaves over a
// lossy, delaying network.
//
//	monitor predict LOOP.yaml [--json] [--vary loss=0:0.3:0.01] [--step N] [--plot FILE] [--strict]
//	monitor simulate LOOP.yaml --periods N --runs R [--seed S] [--paths FILE]
//	monitor run --loop LOOP.yaml --listen HOST:PORT [--metrics HOST:PORT] [--duration D] [--summary FILE]
//
// run receives the rig's sensor datagrams and estimates E[eᵀe] online
// beside the prediction (package engine).
//
// predict computes what theory says of the sampled-data jump system
// (package estimate: mean-square stability, the spectral radius of the
// second-moment operator, the steady error moments, the loss margin);
// simulate runs the same jump system by Monte Carlo.
//
// Every command exits with a status of the one table in
// cmd/internal/exitcode: an error of its flags or of a file it reads
// (usageError, inputError) is 2, an error while running is 1, and the
// verdicts have their own codes (exitError).
package main

import (
	"fmt"
	"io"
	"os"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
)

var usage = `usage: monitor COMMAND [arguments]

commands:
  predict LOOP.yaml    what theory predicts for the loop over its network profile
                       (--strict: exit 6 when not mean-square stable, 5 when it cannot tell)
  simulate LOOP.yaml   Monte-Carlo runs of the same loop model
  rig node|controller  the simulated rig's two ends, on real UDP sockets
  run --loop LOOP.yaml measure E[eᵀe] from the rig's sensor datagrams, beside the prediction
  demo                 rig, relay and monitor on loopback: predicted vs measured
  serve --loop LOOP    relay and monitor of one rig in one process
  soak --loop LOOP --scenario FILE
                       play a scenario's phases on the relay and judge each phase;
                       --report DIR writes HTML and PNG plots

run "monitor COMMAND -h" for the flags of a command and the statuses it returns

` + exitcode.Help(allStatuses, nil)

// allStatuses is the whole table, for the top-level usage.
var allStatuses = []int{exitcode.OK, exitcode.Failure, exitcode.BadInput, exitcode.Above, exitcode.Below,
	exitcode.Inconclusive, exitcode.NotStable, exitcode.PhaseFailed, exitcode.Tripped}

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// run dispatches a subcommand and returns its exit status (see
// exitStatus).
func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return exitcode.BadInput
	}
	var err error
	switch args[0] {
	case "predict":
		err = cmdPredict(args[1:], stdout, stderr)
	case "simulate":
		err = cmdSimulate(args[1:], stdout, stderr)
	case "rig":
		err = cmdRig(args[1:], stdout, stderr)
	case "demo":
		err = cmdDemo(args[1:], stdout, stderr)
	case "serve":
		err = cmdServe(args[1:], stdout, stderr)
	case "soak":
		err = cmdSoak(args[1:], stdout, stderr)
	case "run":
		err = cmdRun(args[1:], stdout, stderr)
	case "-h", "-help", "--help", "help":
		fmt.Fprint(stdout, usage)
		return exitcode.OK
	default:
		fmt.Fprintf(stderr, "monitor: unknown command %q\n%s", args[0], usage)
		return exitcode.BadInput
	}
	name := args[0]
	if name == "rig" && len(args) > 1 && (args[1] == "node" || args[1] == "controller") {
		name += " " + args[1]
	}
	return cli.Status(err, "monitor "+name, stdout, stderr)
}

// parseArgs parses flags given before or after the one positional argument
// (the loop file), as in "monitor predict loop.yaml --json".
func parseArgs(fs *flags, args []string) (string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			return "", err
		}
		if fs.NArg() == 0 {
			break
		}
		pos = append(pos, fs.Arg(0))
		args = fs.Args()[1:]
	}
	if len(pos) != 1 {
		return "", usagef("want one loop file, got %d arguments", len(pos))
	}
	return pos[0], nil
}
