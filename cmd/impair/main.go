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
package main

import (
	"fmt"
	"io"
	"os"
)

const usage = `usage: impair <command> [flags]

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
  lab     build or remove the lab's network namespaces (up|down, root)

Run "impair <command> -h" for a command's flags.
`

func main() {
	os.Exit(dispatch(os.Args[1:], os.Stdout, os.Stderr))
}

func dispatch(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return 2
	}
	switch args[0] {
	case "run":
		return cmdRun(args[1:], stdout, stderr)
	case "check":
		return cmdCheck(args[1:], stdout, stderr)
	case "echo":
		return cmdEcho(args[1:], stdout, stderr)
	case "probe":
		return cmdProbe(args[1:], stdout, stderr)
	case "fit":
		return cmdFit(args[1:], stdout, stderr)
	case "lab":
		return cmdLab(args[1:], stdout, stderr)
	case "help", "-h", "--help":
		fmt.Fprint(stdout, usage)
		return 0
	}
	fmt.Fprintf(stderr, "impair: unknown command %q\n%s", args[0], usage)
	return 2
}
