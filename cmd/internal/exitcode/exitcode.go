package exitcode

import (
	"fmt"
	"strings"
)

// The exit statuses. A command returns the first that applies, in the
// order of precedence of its help (a safety trip before a failed phase,
// a failed phase before an inconclusive one).
const (
	// OK: the command did what was asked (and, with --strict, its verdict
	// was the good one).
	OK = 0
	// Failure: an error while running (a socket, a file that could not be
	// written, a computation that failed).
	Failure = 1
	// BadInput: bad usage or bad input: an unknown or invalid flag or
	// argument, or a file (profile, loop, scenario, links, trace) that
	// does not validate. The message names the file, line and key.
	BadInput = 2
	// Above: the measured E[eᵀe] lies above the prediction (run --strict).
	Above = 3
	// Below: the measured E[eᵀe] lies below the prediction (run --strict).
	Below = 4
	// Inconclusive: the data cannot tell (too few samples or batches, an
	// interval too wide to judge), or the prediction cannot decide
	// stability (marginal, predict --strict).
	Inconclusive = 5
	// NotStable: the prediction says the loop is not mean-square stable
	// (run --strict, predict --strict).
	NotStable = 6
	// PhaseFailed: a soak phase failed its check.
	PhaseFailed = 7
	// Tripped: the safety trip fired.
	Tripped = 8
)

// All is the whole table in order, for a command's top-level usage.
var All = []int{OK, Failure, BadInput, Above, Below, Inconclusive, NotStable, PhaseFailed, Tripped}

var meaning = map[int]string{
	OK:           "success",
	Failure:      "error while running",
	BadInput:     "bad usage or input file (the message names file, line and key)",
	Above:        "measured E[eᵀe] above the prediction",
	Below:        "measured E[eᵀe] below the prediction",
	Inconclusive: "inconclusive: the data or the computation cannot tell",
	NotStable:    "prediction: not mean-square stable",
	PhaseFailed:  "a soak phase failed its check",
	Tripped:      "the safety trip fired",
}

// Meaning is the one-line meaning of status code.
func Meaning(code int) string {
	if m, ok := meaning[code]; ok {
		return m
	}
	return fmt.Sprintf("exit status %d", code)
}

// Help is the "exit status" paragraph of a command's help: one line per
// code, each with its meaning, or with the given override when a
// command's use of the code needs its own words (pass code, text pairs in
// notes).
func Help(codes []int, notes map[int]string) string {
	var b strings.Builder
	b.WriteString("exit status:\n")
	for _, c := range codes {
		m := Meaning(c)
		if n, ok := notes[c]; ok {
			m = n
		}
		fmt.Fprintf(&b, "  %d  %s\n", c, m)
	}
	return b.String()
}
