package main

import (
	"rigwire/cmd/internal/cli"
	"rigwire/emulate/trip"
)

// cautionsFlag registers --cautions-read on fs and returns what to print:
// the command's cautions in full, or their one-line reminder once the
// operator says they were read.
func cautionsFlag(fs *cli.Flags) func(full string) string {
	read := fs.Bool("cautions-read", false, "print the safety cautions as one line (you have read them)")
	return func(full string) string {
		if *read {
			return trip.Reminder
		}
		return full
	}
}
