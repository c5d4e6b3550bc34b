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
	"errors"
	"flag"
	"fmt"
	"io"
	"net"
	"os"
	"strconv"
	"strings"

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

// plainStatuses are those of a command without a verdict.
var plainStatuses = []int{exitcode.OK, exitcode.Failure, exitcode.BadInput}

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
	return exitStatus(err, "monitor "+name, stdout, stderr)
}

// exitStatus prints what err says and returns the exit status: 0 for
// none or a help request (the help goes to stdout), the error's own code
// for an exitError, 2 for a bad flag or argument (usageError) or an input
// file that does not load or validate (inputError), 1 for anything else
// (an error while running).
func exitStatus(err error, cmd string, stdout, stderr io.Writer) int {
	var (
		he helpError
		ee exitError
		ue usageError
		ie inputError
	)
	switch {
	case err == nil:
		return exitcode.OK
	case errors.As(err, &he):
		fmt.Fprint(stdout, he.text)
		return exitcode.OK
	case errors.Is(err, flag.ErrHelp):
		return exitcode.OK
	case errors.As(err, &ee):
		if ee.msg != "" {
			fmt.Fprintf(stderr, "%s: %s\n", cmd, ee.msg)
		}
		return ee.code
	case errors.As(err, &ue):
		fmt.Fprintf(stderr, "%s: %v\nrun \"%s -h\" for its flags\n", cmd, err, cmd)
		return exitcode.BadInput
	case errors.As(err, &ie):
		fmt.Fprintf(stderr, "%s: %v\n", cmd, err)
		return exitcode.BadInput
	}
	fmt.Fprintf(stderr, "%s: %v\n", cmd, err)
	return exitcode.Failure
}

// exitError ends a command with its own exit status (a verdict, say); msg,
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

// usageError is a bad flag or argument (exit status 2).
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error { return usageError{fmt.Sprintf(format, args...)} }

// inputError is an input file that does not load or validate (a loop,
// profile, scenario or trace file; the message names file, line and key),
// or a loop the prediction cannot use (too large, overflowing, a law that
// cannot be integrated): exit status 2.
type inputError struct{ err error }

func (e inputError) Error() string { return e.err.Error() }
func (e inputError) Unwrap() error { return e.err }

// badInput marks err, when not nil, as an error of the input.
func badInput(err error) error {
	if err == nil {
		return nil
	}
	return inputError{err}
}

// helpError is a help request (-h): its text goes to stdout, exit 0.
type helpError struct{ text string }

func (e helpError) Error() string        { return "help requested" }
func (e helpError) Is(target error) bool { return target == flag.ErrHelp }

// flags is a command's flag set with its help. Parse turns -h into a
// helpError carrying the help (the head, the flags, the exit statuses)
// and a bad flag into a usageError; the flag package itself prints
// nothing.
type flags struct {
	*flag.FlagSet
	head  string // synopsis and description, ending in a newline
	exits string // the exit-status paragraph (exitcode.Help)
}

func newFlags(name, head, exits string) *flags {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return &flags{FlagSet: fs, head: head, exits: exits}
}

// Parse parses args; see flags.
func (f *flags) Parse(args []string) error {
	err := f.FlagSet.Parse(args)
	switch {
	case err == nil:
		return nil
	case errors.Is(err, flag.ErrHelp):
		return helpError{f.help()}
	}
	return usageError{err.Error()}
}

// help is the command's help text.
func (f *flags) help() string {
	var b strings.Builder
	b.WriteString(f.head)
	b.WriteString("\nflags:\n")
	f.SetOutput(&b)
	f.PrintDefaults()
	f.SetOutput(io.Discard)
	b.WriteString("\n")
	b.WriteString(f.exits)
	return b.String()
}

// checkMetricsAddr checks a --metrics value: "off" or HOST:PORT with a
// port number (whether it can be bound is found out when it is bound).
func checkMetricsAddr(s string) error {
	if s == "off" {
		return nil
	}
	_, port, err := net.SplitHostPort(s)
	if err == nil {
		_, err = strconv.ParseUint(port, 10, 16)
	}
	if err != nil {
		return usagef("--metrics: want HOST:PORT or \"off\", got %q", s)
	}
	return nil
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
