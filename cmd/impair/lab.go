package main

import (
	"io"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/deploy/lab"
)

const labUsage = `usage: impair lab build|remove [--config FILE]

Builds or removes the lab topology: network namespaces joined
by veth pairs with private addresses and routes, so that a dry run with
the simulated rig crosses real interfaces. Without --config, three
namespaces in a chain: rw-rig (10.213.1.1) – (10.213.1.2) rw-relay
(10.213.2.1) – (10.213.2.2) rw-ctl. Both are idempotent and need root.
Run a program inside one with: ip netns exec rw-relay impair run ...
`

var labExits = exitcode.Help(cli.PlainStatuses, map[int]string{
	exitcode.OK:       "the topology is built (or removed)",
	exitcode.Failure:  "error while running (an ip command failed; not root?)",
	exitcode.BadInput: "bad usage, or a topology file that does not load or validate (the message names file, line and key)",
})

// cmdLab runs `impair lab build|remove`.
func cmdLab(args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 || (args[0] != "build" && args[0] != "remove") {
		if len(args) > 0 && (args[0] == "-h" || args[0] == "-help" || args[0] == "--help" || args[0] == "help") {
			return cli.Help{Text: labUsage + "\n" + labExits}
		}
		return cli.Usagef("want build or remove")
	}
	verb := args[0]
	fs := cli.NewFlags("impair lab "+verb, labUsage, labExits)
	config := fs.String("config", "", "topology `FILE` (YAML; default: the three-namespace chain)")
	if err := fs.Parse(args[1:]); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return cli.Usagef("unexpected argument %q", fs.Arg(0))
	}
	cfg := lab.Default()
	if *config != "" {
		var err error
		if cfg, err = lab.Load(*config); err != nil {
			return cli.BadInput(err)
		}
	}
	if verb == "build" {
		return lab.Build(cfg, stdout)
	}
	return lab.Remove(cfg, stdout)
}
