// Command monitor predicts and measures how a control loop behaves over a
// lossy, delaying network.
//
//	monitor predict LOOP.yaml [--json] [--vary loss=0:0.3:0.01] [--step N] [--plot FILE]
//	monitor simulate LOOP.yaml --periods N --runs R [--seed S] [--paths FILE]
//	monitor run --loop LOOP.yaml --listen HOST:PORT [--metrics HOST:PORT] [--duration D] [--summary FILE]
//
// run receives the rig's sensor datagrams and estimates E[eᵀe] online
// beside the prediction (package engine).
//
// predict computes what theory says (MODEL.md: mean-square stability, the
// spectral radius of the second-moment operator, the steady error moments,
// the loss margin); simulate runs the same jump system by Monte Carlo.
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
)

const usage = `usage: monitor COMMAND [arguments]

commands:
  predict LOOP.yaml    what theory predicts for the loop over its network profile
  simulate LOOP.yaml   Monte-Carlo runs of the same loop model
  rig node|controller  the simulated rig's two ends, on real UDP sockets
  run --loop LOOP.yaml measure E[eᵀe] from the rig's sensor datagrams, beside the prediction
  demo                 rig, relay and monitor on loopback: predicted vs measured
  serve --loop LOOP    relay and monitor of one rig in one process
  soak --loop LOOP --scenario FILE
                       play a scenario's phases on the relay and judge each phase (exit 0 pass,
                       7 a phase failed, 8 safety trip); --report DIR writes HTML and PNG plots

run "monitor COMMAND -h" for the flags of a command
`

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// run dispatches a subcommand and returns the exit code: 0 on success
// (whether or not the loop is stable), 1 on a file or computation error,
// 2 on a usage error.
func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return 2
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
		return 0
	default:
		fmt.Fprintf(stderr, "monitor: unknown command %q\n%s", args[0], usage)
		return 2
	}
	var ue usageError
	var ee exitError
	switch {
	case err == nil:
		return 0
	case errors.As(err, &ee):
		if ee.msg != "" {
			fmt.Fprintf(stderr, "monitor %s: %s\n", args[0], ee.msg)
		}
		return ee.code
	case errors.Is(err, flag.ErrHelp):
		return 0
	case errors.As(err, &ue):
		fmt.Fprintf(stderr, "monitor %s: %v\n", args[0], err)
		return 2
	default:
		fmt.Fprintf(stderr, "monitor %s: %v\n", args[0], err)
		return 1
	}
}

// exitError ends a command with its own exit code (a verdict, say); msg,
// when set, is printed first.
type exitError struct {
	code int
	msg  string
}

func (e exitError) Error() string {
	if e.msg != "" {
		return e.msg
	}
	return fmt.Sprintf("exit status %d", e.code)
}

// usageError is a bad flag or argument (exit code 2).
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error { return usageError{fmt.Sprintf(format, args...)} }

// parseArgs parses flags given before or after the one positional argument
// (the loop file), as in "monitor predict loop.yaml --json".
func parseArgs(fs *flag.FlagSet, args []string) (string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return "", err
			}
			return "", usageError{err.Error()}
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
