package main

import (
	"errors"
	"fmt"
	"io"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/estimate"
	"rigwire/estimate/report"
	"rigwire/profiles"
)

// predictFrequency prints the loop's periodic steady state under a
// sinusoidal reference at each frequency (estimate/model.md §15).
func predictFrequency(loop *profiles.Loop, spec, amp string, asJSON bool, plotFile string, stdout, stderr io.Writer) error {
	freqs, err := parseFrequencies(spec, loop)
	if err != nil {
		return err
	}
	_, _, p, _ := loop.Dims()
	ref := loop.Reference
	if !ref.Sinusoidal() {
		ref = profiles.Reference{Kind: profiles.ReferenceSine, Amplitude: make([]float64, p), Phase: make([]float64, p)}
		for i := range ref.Amplitude {
			ref.Amplitude[i] = 1
		}
	}
	if amp != "" {
		a, err := parseFloats(amp)
		if err != nil || len(a) != p {
			return cli.Usagef("--amplitude: want %d comma-separated numbers ≥ 0 (one per output), got %q", p, amp)
		}
		for _, v := range a {
			if !(v >= 0 && v <= 1e50) {
				return cli.Usagef("--amplitude: want amplitudes in [0, 1e50], got %g", v)
			}
		}
		ref.Amplitude = a
	}
	md, err := estimate.Build(loop, estimate.Options{})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	start := time.Now()
	last := start
	hs, err := md.FrequencyResponseProgress(ref, freqs, func(done, total int) {
		now := time.Now()
		if now.Sub(start) < progressAfter || now.Sub(last) < progressEvery || done == total {
			return
		}
		last = now
		fmt.Fprintf(stderr, "monitor predict: frequency response: %d of %d frequencies, %s so far\n", done, total, now.Sub(start).Round(time.Second))
	})
	if errors.Is(err, estimate.ErrNotStable) {
		rad := md.Radius()
		return cli.Exit{Code: exitcode.NotStable, Msg: fmt.Sprintf("%s: %s (spectral radius %.6g ± %.2g): the error's second moment has no periodic steady state under any reference, so there is no response to give",
			loop.File, rad.Stability, rad.Value, rad.Error)}
	}
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	if asJSON {
		if err := report.WriteFrequencyJSON(stdout, loop.Period, hs); err != nil {
			return err
		}
	} else {
		report.WriteFrequencyCSV(stdout, hs)
	}
	if plotFile != "" {
		return report.WriteFrequencyPlot(hs, nil, plotFile)
	}
	return nil
}
