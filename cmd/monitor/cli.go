package main

import "rigwire/cmd/internal/cli"

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
