package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"strings"

	"rigwire/cmd/internal/exitcode"
)

// Every impair command returns an error, and exitStatus turns it into the
// exit status of the one table in cmd/internal/exitcode: a bad flag or
// argument (usageError) or an input file that does not load or validate
// (inputError) is 2, exitError carries its own status, anything else is
// an error while running (1).

// exitStatus prints what err says and returns the exit status; a help
// request prints the help to stdout and returns 0.
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

// usageError is a bad flag or argument (exit status 2).
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error { return usageError{fmt.Sprintf(format, args...)} }

// inputError is an input file (profile, scenario, links file, trace, lab
// topology) that does not load or validate; the message names file, line
// and key (exit status 2).
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

// exitError ends a command with the given status; msg, when set, is
// printed (a status 1 whose reasons were logged already has none).
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

// plainStatuses are those of a command without a verdict.
var plainStatuses = []int{exitcode.OK, exitcode.Failure, exitcode.BadInput}
