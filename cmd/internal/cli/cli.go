package cli

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"strings"
	"time"

	"rigwire/cmd/internal/exitcode"
	"rigwire/emulate/endpoint"
)

// Status prints what err says, prefixed with the command's name cmd, and
// returns the exit status; a help request prints the help to stdout and
// returns 0.
func Status(err error, cmd string, stdout, stderr io.Writer) int {
	var (
		he Help
		ee Exit
		ue UsageError
		ie InputError
	)
	switch {
	case err == nil:
		return exitcode.OK
	case errors.As(err, &he):
		fmt.Fprint(stdout, he.Text)
		return exitcode.OK
	case errors.Is(err, flag.ErrHelp):
		return exitcode.OK
	case errors.As(err, &ee):
		if ee.Msg != "" {
			fmt.Fprintf(stderr, "%s: %s\n", cmd, ee.Msg)
		}
		return ee.Code
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

// UsageError is a bad flag or argument (exit status 2).
type UsageError struct{ Msg string }

func (e UsageError) Error() string { return e.Msg }

// Usagef is a UsageError with a formatted message.
func Usagef(format string, args ...any) error { return UsageError{fmt.Sprintf(format, args...)} }

// InputError is an input file (loop, profile, scenario, links file,
// trace, lab topology) that does not load or validate — the message names
// file, line and key — or a loop the prediction cannot use (too large,
// overflowing, a law that cannot be integrated): exit status 2.
type InputError struct{ Err error }

func (e InputError) Error() string { return e.Err.Error() }
func (e InputError) Unwrap() error { return e.Err }

// BadInput marks err, when not nil, as an error of the input.
func BadInput(err error) error {
	if err == nil {
		return nil
	}
	return InputError{err}
}

// Exit ends a command with status Code (a verdict, say); Msg, when set,
// is printed (a status whose reasons were logged already has none).
type Exit struct {
	Code int
	Msg  string
}

func (e Exit) Error() string {
	if e.Msg != "" {
		return e.Msg
	}
	return fmt.Sprintf("exit status %d", e.Code)
}

// Help is a help request (-h): its text goes to stdout, exit 0.
type Help struct{ Text string }

func (e Help) Error() string        { return "help requested" }
func (e Help) Is(target error) bool { return target == flag.ErrHelp }

// Flags is a command's flag set with its help. Parse turns -h into a Help
// carrying the help (the head, the flags, the exit statuses) and a bad
// flag into a UsageError that says what the flag takes; the flag package
// itself prints nothing.
type Flags struct {
	*flag.FlagSet
	head  string // synopsis and description, ending in a newline
	exits string // the exit-status paragraph (exitcode.Help)
}

// NewFlags is the flag set of command name with its help head and
// exit-status paragraph.
func NewFlags(name, head, exits string) *Flags {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	return &Flags{FlagSet: fs, head: head, exits: exits}
}

// Parse parses args; see Flags.
func (f *Flags) Parse(args []string) error {
	err := f.FlagSet.Parse(args)
	switch {
	case err == nil:
		return nil
	case errors.Is(err, flag.ErrHelp):
		return Help{f.HelpText()}
	}
	return UsageError{f.explain(err.Error())}
}

// explain says what a flag of the flag package's own kinds (a number, a
// duration, a boolean) takes when the package refused its value with
// "parse error" alone: `invalid value "soon" for flag -wait: want a
// duration such as "500ms", "2s" or "1m30s"`. Other messages pass as
// they are.
func (f *Flags) explain(msg string) string {
	head, ok := strings.CutSuffix(msg, ": parse error")
	if !ok {
		return msg
	}
	i := strings.LastIndex(head, " -") // the flag's name ends the head
	if i < 0 {
		return msg
	}
	fl := f.Lookup(head[i+2:])
	if fl == nil {
		return msg
	}
	g, ok := fl.Value.(flag.Getter)
	if !ok {
		return msg
	}
	var want string
	switch g.Get().(type) {
	case time.Duration:
		want = `a duration such as "500ms", "2s" or "1m30s"`
	case int, int64:
		want = "a whole number"
	case uint, uint64:
		want = "a whole number ≥ 0"
	case float64:
		want = "a number"
	case bool:
		want = "true or false"
	default:
		return msg
	}
	return head + ": want " + want
}

// HelpText is the command's help text.
func (f *Flags) HelpText() string {
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

// LogLevel registers --log-level (debug, info, warn or error; default
// info) and returns what makes the command's text logger on w at that
// level, or refuses the level as bad usage naming the flag.
func (f *Flags) LogLevel() func(w io.Writer) (*slog.Logger, error) {
	s := f.String("log-level", "info", "debug, info, warn or error")
	return func(w io.Writer) (*slog.Logger, error) {
		var level slog.Level
		if err := level.UnmarshalText([]byte(*s)); err != nil {
			return nil, Usagef("--log-level: want debug, info, warn or error, got %q", *s)
		}
		return slog.New(slog.NewTextHandler(w, &slog.HandlerOptions{Level: level})), nil
	}
}

// CheckMetricsAddr checks a --metrics value as endpoint.CheckMetrics
// does ("off", or HOST:PORT with a host and a port number); a refused one
// is bad usage whose message names the flag.
func CheckMetricsAddr(s string) error {
	if err := endpoint.CheckMetrics(s); err != nil {
		return Usagef("--metrics: %v", err)
	}
	return nil
}

// PlainStatuses are those of a command without a verdict.
var PlainStatuses = []int{exitcode.OK, exitcode.Failure, exitcode.BadInput}
