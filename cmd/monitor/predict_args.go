package main

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"rigwire/cmd/internal/cli"
	"rigwire/estimate"
	"rigwire/profiles"
)

func parseFloats(s string) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("want a number, got %q", f)
		}
		out = append(out, v)
	}
	return out, nil
}

// maxSweepPoints bounds a --vary grid.
const maxSweepPoints = 10000

// parseVary reads NAME=START:STOP:STEP.
func parseVary(s string) (string, []float64, error) {
	bad := func(why string) error {
		return cli.Usagef("--vary: want loss=START:STOP:STEP or delay_scale=START:STOP:STEP, got %q (%s)", s, why)
	}
	name, spec, ok := strings.Cut(s, "=")
	if !ok {
		return "", nil, bad("no =")
	}
	if name != estimate.SweepLoss && name != estimate.SweepDelayScale {
		return "", nil, bad("unknown parameter " + strconv.Quote(name))
	}
	parts := strings.Split(spec, ":")
	if len(parts) != 3 {
		return "", nil, bad("want three numbers")
	}
	v, err := parseFloats(strings.Join(parts, ","))
	if err != nil {
		return "", nil, bad(err.Error())
	}
	start, stop, step := v[0], v[1], v[2]
	switch {
	case !(step > 0):
		return "", nil, bad("step must be > 0")
	case stop < start:
		return "", nil, bad("stop below start")
	case name == estimate.SweepLoss && (start < 0 || stop > 1):
		return "", nil, bad("loss must lie in [0, 1]")
	case name == estimate.SweepDelayScale && !(start > 0):
		return "", nil, bad("delay_scale must be > 0")
	case stop > start && step > stop-start:
		// 0:0.01:0.3 read as START:STEP:STOP would give one point.
		return "", nil, bad(fmt.Sprintf("step %g is larger than the range %g to %g; the order is START:STOP:STEP", step, start, stop))
	}
	n := int(math.Floor((stop-start)/step+1e-9)) + 1
	if n > maxSweepPoints {
		return "", nil, bad(fmt.Sprintf("%d points, at most %d", n, maxSweepPoints))
	}
	values := make([]float64, n)
	for i := range values {
		values[i] = start + float64(i)*step
	}
	return name, values, nil
}

func btoi(b bool) int {
	if b {
		return 1
	}
	return 0
}

// maxFrequencies bounds a --frequency list.
const maxFrequencies = 1000

// parseFrequencies reads --frequency: a list F1,F2,… or FROM:TO:N
// (log-spaced), each in (0, 1/(2h)), or "reference" for the loop's own.
func parseFrequencies(s string, loop *profiles.Loop) ([]float64, error) {
	nyq := 1 / (2 * loop.Period)
	bad := func(why string) error {
		return cli.Usagef("--frequency: want F1,F2,… Hz, FROM:TO:N or reference, each frequency above 0 and below the Nyquist frequency %g Hz; got %q (%s)", nyq, s, why)
	}
	if s == "reference" {
		if !loop.Reference.Sinusoidal() {
			return nil, cli.Usagef("--frequency reference: the loop file %s has no sinusoidal reference (key reference)", loop.File)
		}
		return loop.Reference.Frequencies, nil
	}
	var out []float64
	if parts := strings.Split(s, ":"); len(parts) == 3 {
		v, err := parseFloats(parts[0] + "," + parts[1])
		if err != nil {
			return nil, bad(err.Error())
		}
		n, err := strconv.Atoi(parts[2])
		if err != nil || n < 2 || n > maxFrequencies {
			return nil, bad(fmt.Sprintf("N must be a whole number in [2, %d]", maxFrequencies))
		}
		if !(v[1] > v[0]) {
			return nil, bad("TO must be above FROM")
		}
		out = profiles.LogSpaced(v[0], v[1], n)
	} else {
		v, err := parseFloats(s)
		if err != nil {
			return nil, bad(err.Error())
		}
		if len(v) > maxFrequencies {
			return nil, bad(fmt.Sprintf("%d frequencies, at most %d", len(v), maxFrequencies))
		}
		out = v
	}
	for _, f := range out {
		if !(f > 0 && f < nyq) {
			return nil, bad(fmt.Sprintf("%g Hz is outside (0, %g)", f, nyq))
		}
	}
	return out, nil
}
