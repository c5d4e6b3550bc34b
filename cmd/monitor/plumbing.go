package main

// The plumbing every monitor command shares: the flags of the safety
// cautions, of durations and of counts with a computed default, the
// sliding windows, the address families of --listen and --from, the
// JSON summary's file, the simulated rig's start and the times of the
// commands' lines.

import (
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net/netip"
	"strconv"
	"strings"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/emulate/rig"
	"rigwire/emulate/trip"
	"rigwire/estimate/engine"
	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
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

// durationFlag is a duration flag in the loop files' spelling: a Go
// duration or a plain number of seconds.
type durationFlag struct{ s float64 }

// String spells the value in seconds with its unit, as the help's
// "(default 60s)" shows it once.
func (f *durationFlag) String() string { return laws.Seconds{Unit: "s", Digits: -1}.Format(f.s) }
func (f *durationFlag) Set(s string) error {
	v, err := yamlpos.ParseDuration(s)
	if err != nil || v < 0 {
		return fmt.Errorf("want a duration ≥ 0 (\"90s\", \"2m\" or seconds), got %q", s)
	}
	f.s = v
	return nil
}

// writeSummary writes a run's JSON summary v as engine.WriteSummary does:
// to stdout when path is "" or "-", else whole to the file or not at all.
// A file that cannot be written is named by its flag.
func writeSummary(stdout io.Writer, path string, v any) error {
	err := engine.WriteSummary(stdout, path, v)
	if err != nil && path != "" && path != "-" {
		return fmt.Errorf("--summary: %w", err)
	}
	return err
}

// rigStart reads --start for a loop.
func rigStart(loop *profiles.Loop, mode string, log *slog.Logger) (rig.Start, error) {
	switch mode {
	case "rest":
		return rig.RestStart(loop), nil
	case "steady":
		st, err := rig.SteadyStart(loop)
		if errors.Is(err, rig.ErrNoSteadyState) || errors.Is(err, rig.ErrNoExactSteady) {
			log.Warn("starting at rest", "reason", err.Error())
			return rig.RestStart(loop), nil
		}
		if err != nil {
			// The steady state is the prediction's: a loop it cannot use.
			return st, cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
		}
		return st, nil
	}
	return rig.Start{}, cli.Usagef("--start: want steady or rest, got %q", mode)
}

// parseWindows reads --windows.
func parseWindows(s string) ([]time.Duration, error) {
	if strings.TrimSpace(s) == "" || s == "none" {
		return []time.Duration{}, nil
	}
	var out []time.Duration
	for _, f := range strings.Split(s, ",") {
		v, err := yamlpos.ParseDuration(strings.TrimSpace(f))
		if err != nil || !(v > 0) {
			return nil, cli.Usagef("--windows: want comma-separated durations > 0 (\"1m,10m\"), got %q", f)
		}
		out = append(out, time.Duration(v*1e9))
	}
	return out, nil
}

// mixedFamilies reports whether a socket bound to listen can never
// receive from src: one is IPv4 and the other IPv6, and listen is not an
// unspecified address (which a dual-stack socket serves for both).
func mixedFamilies(listen, src netip.Addr) bool {
	if listen.IsUnspecified() {
		return false
	}
	return listen.Unmap().Is4() != src.Unmap().Is4()
}

// family is "4" or "6".
func family(a netip.Addr) string {
	if a.Unmap().Is4() {
		return "4"
	}
	return "6"
}

// optionalCount is a count flag whose default is computed from other
// flags: unset, the help shows only the usage's own "(default: …)".
type optionalCount struct {
	n   int
	set bool
}

func (c *optionalCount) String() string {
	if c == nil || !c.set {
		return ""
	}
	return strconv.Itoa(c.n)
}

func (c *optionalCount) Set(s string) error {
	v, err := strconv.Atoi(s)
	if err != nil || v < 0 {
		return fmt.Errorf("want a whole number ≥ 0, got %q", s)
	}
	c.n, c.set = v, true
	return nil
}

// fmtDuration writes a time in the commands' lines (laws.Terse): "0"
// for none, "-" for one that does not exist.
var fmtDuration = laws.Terse.Format
