package cli

import (
	"fmt"
	"io"

	"rigwire/cmd/internal/exitcode"
)

// Command is one subcommand: it parses its own flags from args (the words
// after its name) and returns nil or an error of this package's kinds.
type Command func(args []string, stdout, stderr io.Writer) error

// Dispatch runs the subcommand args[0] of the program prog and returns
// the exit status Status gives its error. Without a subcommand, or with
// an unknown one, it prints usage to stderr and returns 2; help, -h,
// -help and --help print usage to stdout. A subcommand listed in nested
// has subcommands of its own (impair lab build, monitor rig node): its
// messages are prefixed with both words.
func Dispatch(prog, usage string, cmds map[string]Command, nested map[string][]string, args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return exitcode.BadInput
	}
	switch args[0] {
	case "help", "-h", "-help", "--help":
		fmt.Fprint(stdout, usage)
		return exitcode.OK
	}
	cmd, ok := cmds[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "%s: unknown command %q\n%s", prog, args[0], usage)
		return exitcode.BadInput
	}
	err := cmd(args[1:], stdout, stderr)
	name := prog + " " + args[0]
	if len(args) > 1 {
		for _, sub := range nested[args[0]] {
			if args[1] == sub {
				name += " " + sub
			}
		}
	}
	return Status(err, name, stdout, stderr)
}
