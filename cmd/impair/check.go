package main

import (
	"fmt"
	"io"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/profiles"
	"rigwire/profiles/summary"
	"rigwire/profiles/yamlpos"
)

const checkUsage = `usage: impair check [--interval D] PROFILE

Validates a network profile and prints, for each direction and state, the
loss and the delay's mean, median, p99 and p99.9, and for each direction
the share of time in each state, the long-run loss, the mean length of a
run of lost datagrams and the chance that a datagram is lost when the one
before it was, for datagrams sent every D (default 10ms).
`

var checkExits = exitcode.Help([]int{exitcode.OK, exitcode.BadInput}, map[int]string{
	exitcode.OK:       "the profile is valid (its report was printed)",
	exitcode.BadInput: "bad usage, or a profile that does not load or validate (the message names file, line and key)",
})

// maxCheckInterval bounds --interval: loss runs of datagrams sent less
// often than hourly mean nothing for a control loop.
const maxCheckInterval = 3600.0

// cmdCheck is `impair check`: validate a profile and describe it.
func cmdCheck(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("impair check", checkUsage, checkExits)
	interval := 0.01
	fs.Func("interval", "time between datagrams for loss-run figures (default 10ms)", func(s string) error {
		v, err := yamlpos.ParseDuration(s)
		if err != nil {
			return err
		}
		if v <= 0 || v > maxCheckInterval {
			return fmt.Errorf("want a duration > 0 and ≤ 1h, got %q", s)
		}
		interval = v
		return nil
	})
	// Flags may come before or after the profile.
	paths, err := fs.ParseInterspersed(args)
	if err != nil {
		return err
	}
	if len(paths) != 1 {
		return cli.Usagef("want one profile, got %d", len(paths))
	}
	p, err := profiles.Load(paths[0])
	if err != nil {
		return cli.BadInput(err)
	}
	summary.Write(stdout, p, interval)
	return nil
}
