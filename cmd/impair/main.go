// Command impair is rigwire's relay: it sits between a rig's sensor and
// actuator node and its controller, and delays and drops their UDP
// datagrams as a network profile says.
//
//	impair run --profile FILE --listen HOST:PORT --controller HOST:PORT [flags]
//	impair run --scenario FILE [--time-scale F] [--exit-after-scenario] --listen HOST:PORT --controller HOST:PORT [flags]
//	impair run --links FILE [flags]
//	  trip wire: [--trip-listen HOST:PORT [--trip-from HOST] [--on-trip clean|stop_commands]]
//	impair check [--interval D] PROFILE
//	impair echo --listen HOST:PORT
//	impair probe --target HOST:PORT --rate R --size B --duration D --out TRACE.csv
//	impair fit TRACE (--one-way | --halve-rtt | --round-trip) [--out PROFILE.yaml] [--loop LOOP.yaml]
//	impair lab build|remove [--config FILE]
//
// Every command exits with a status of the one table in
// cmd/internal/exitcode.
//
// Place in the flow: the relay's command line. It only reads flags, wires
// the libraries and turns their errors into exit statuses: run →
// emulate/links (the links file, one relay per link: emulate, its trip
// socket: emulate/trip), check → profiles/summary, probe and echo →
// emulate/probe, fit → estimate/fit and profiles.Write, lab → deploy/lab.
package main

import (
	"io"
	"os"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
)

var usage = `usage: impair <command> [flags]

commands:
  run     relay a rig's datagrams through a network profile or a scenario
          (--profile FILE | --scenario FILE [--time-scale F] [--exit-after-scenario]),
          or several rigs' links at once (--links FILE); with --trip-listen
          HOST:PORT a safety trip request ("rigwire-trip 1 <reason>") from
          --trip-from (default: loopback) makes the link clean or stops its
          commands (--on-trip clean|stop_commands)
  check   validate a profile and print what it will do
  echo    answer probes: send each one back, stamped
  probe   send timestamped probes to an echo and record their fates in a trace
  fit     fit a profile to a probe trace
  lab     build or remove the lab's network namespaces (build|remove, root)

Run "impair <command> -h" for a command's flags and the statuses it returns.

` + exitcode.Help(exitcode.All,
	map[int]string{
		exitcode.Above:        "(monitor) measured E[eᵀe] above the prediction",
		exitcode.Below:        "(monitor) measured E[eᵀe] below the prediction",
		exitcode.Inconclusive: "(monitor) inconclusive: the data or the computation cannot tell",
		exitcode.NotStable:    "(monitor) prediction: not mean-square stable",
		exitcode.PhaseFailed:  "(monitor) a soak phase failed its check",
		exitcode.Tripped:      "(monitor) the safety trip fired",
	}) + `(3 to 8 are the monitor's verdicts; impair's own commands return 0, 1 or 2.)
`

func main() {
	os.Exit(dispatch(os.Args[1:], os.Stdout, os.Stderr))
}

// commands are impair's subcommands.
var commands = map[string]cli.Command{
	"run":   cmdRun,
	"check": cmdCheck,
	"echo":  cmdEcho,
	"probe": cmdProbe,
	"fit":   cmdFit,
	"lab":   cmdLab,
}

// dispatch runs a subcommand and returns its exit status (cli.Dispatch).
func dispatch(args []string, stdout, stderr io.Writer) int {
	return cli.Dispatch("impair", usage, commands, map[string][]string{"lab": {"build", "remove"}}, args, stdout, stderr)
}
