package main

import (
	"flag"
	"fmt"
	"io"

	"rigwire/deploy/lab"
)

const labUsage = `usage: impair lab up|down [--config FILE]

Builds (up) or removes (down) the lab topology: network namespaces joined
by veth pairs with private addresses and routes, so that a dry run with
the simulated rig crosses real interfaces. Without --config, three
namespaces in a chain: rw-rig (10.213.1.1) – (10.213.1.2) rw-relay
(10.213.2.1) – (10.213.2.2) rw-ctl. Both are idempotent and need root.
Run a program inside one with: ip netns exec rw-relay impair run ...
`

// cmdLab runs `impair lab up|down`.
func cmdLab(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 || (args[0] != "up" && args[0] != "down") {
		if len(args) > 0 && (args[0] == "-h" || args[0] == "--help" || args[0] == "help") {
			fmt.Fprint(stdout, labUsage)
			return 0
		}
		fmt.Fprint(stderr, labUsage)
		return 2
	}
	verb := args[0]
	fs := flag.NewFlagSet("impair lab "+verb, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() { fmt.Fprint(stderr, labUsage); fs.PrintDefaults() }
	config := fs.String("config", "", "topology `FILE` (YAML; default: the three-namespace chain)")
	if err := fs.Parse(args[1:]); err != nil {
		return 2
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(stderr, "impair lab %s: unexpected argument %q\n", verb, fs.Arg(0))
		return 2
	}
	cfg := lab.Default()
	if *config != "" {
		var err error
		if cfg, err = lab.Load(*config); err != nil {
			fmt.Fprintf(stderr, "impair lab %s: %v\n", verb, err)
			return 1
		}
	}
	var err error
	if verb == "up" {
		err = lab.Up(cfg, stdout)
	} else {
		err = lab.Down(cfg, stdout)
	}
	if err != nil {
		fmt.Fprintf(stderr, "impair: %v\n", err)
		return 1
	}
	return 0
}
