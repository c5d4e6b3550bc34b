package main

import (
	"rigwire/cmd/internal/cli"
	"rigwire/emulate"
)

// The exit-status mechanism both commands share (cmd/internal/cli), under
// the short names this command's files use.
type (
	usageError = cli.UsageError
	inputError = cli.InputError
	exitError  = cli.Exit
	helpError  = cli.Help
	flags      = cli.Flags
)

var (
	usagef           = cli.Usagef
	badInput         = cli.BadInput
	newFlags         = cli.NewFlags
	plainStatuses    = cli.PlainStatuses
	checkMetricsAddr = cli.CheckMetricsAddr
)

// cautionsFlag registers --cautions-read on fs and returns what to print:
// the command's cautions in full, or their one-line reminder once the
// operator says they were read.
func cautionsFlag(fs *flags) func(full string) string {
	read := fs.Bool("cautions-read", false, "print the safety cautions as one line (you have read them)")
	return func(full string) string {
		if *read {
			return emulate.SafetyReminder
		}
		return full
	}
}
