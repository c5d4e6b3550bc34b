package main

import (
	"fmt"
	"io"
	"os"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/estimate"
	"rigwire/estimate/engine"
	"rigwire/estimate/online"
	"rigwire/estimate/report"
	"rigwire/profiles"
)

const simulateHead = `usage: monitor simulate LOOP.yaml --periods N --runs R [--seed S] [--warmup N]
                        [--paths FILE] [--path-runs K] [--json]

Runs the loop's jump system by Monte Carlo: R independent runs of N
periods, each drawing the network's fates from the profile, and prints the
measured E[eᵀe] with its standard error across runs beside the prediction.
`

func cmdSimulate(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("monitor simulate", simulateHead, exitcode.Help(cli.PlainStatuses, map[int]string{
		exitcode.OK:       "the runs were made and printed (whatever the loop's stability)",
		exitcode.Failure:  "error while running (the paths file could not be written)",
		exitcode.BadInput: "bad usage, or a loop or profile file that does not load or validate (the message names file, line and key)",
	}))
	periods := fs.Int("periods", 10000, "periods per run")
	runs := fs.Int("runs", 20, "independent runs (the standard error is taken across them)")
	var warmupFlag optionalCount
	fs.Var(&warmupFlag, "warmup", "periods discarded at the start of each run (default: a tenth of --periods)")
	warmup := &warmupFlag.n
	seed := fs.Uint64("seed", 1, "seed of the runs' random sources (run r uses PCG(seed, r))")
	paths := fs.String("paths", "", "write sample paths as CSV to `FILE` (- for stdout)")
	pathRuns := fs.Int("path-runs", 1, "number of runs whose paths --paths writes")
	asJSON := fs.Bool("json", false, "print the result as JSON")
	path, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	if !warmupFlag.set {
		*warmup = *periods / 10
	}
	switch {
	case *periods < 1 || *periods > 100_000_000:
		return cli.Usagef("--periods: want a number in [1, 100000000], got %d", *periods)
	case *runs < 1 || *runs > 1_000_000:
		return cli.Usagef("--runs: want a number in [1, 1000000], got %d", *runs)
	case *warmup >= *periods:
		return cli.Usagef("--warmup: want fewer than --periods (%d), got %d", *periods, *warmup)
	case *pathRuns < 0 || *pathRuns > *runs:
		return cli.Usagef("--path-runs: want a number in [0, --runs], got %d", *pathRuns)
	}
	loop, err := profiles.LoadLoop(path)
	if err != nil {
		return cli.BadInput(err)
	}
	keep := 0
	if *paths != "" {
		keep = *pathRuns
	}
	start := time.Now()
	last := start
	// With a sinusoidal reference, each frequency's samples are fitted as
	// the monitor fits a rig's.
	var fits []*online.HarmonicFit
	var onSample func(run, k int, r, y []float64)
	if loop.Reference.Sinusoidal() {
		for seg := range loop.Reference.Frequencies {
			fits = append(fits, engine.NewFrequencyFit(loop, seg))
		}
		onSample = func(_, k int, _, y []float64) {
			seg, theta, _ := loop.Reference.Segment(uint64(k), loop.Period)
			fits[seg].Add(y, theta)
		}
	}
	res, err := estimate.Simulate(loop, estimate.SimOptions{
		Periods: *periods, Runs: *runs, Warmup: *warmup, Seed: *seed, Paths: keep, OnSample: onSample,
		Progress: func(done, total int) {
			// Long runs show progress on stderr, at most once a second.
			if now := time.Now(); now.Sub(last) >= time.Second && done < total {
				last = now
				fmt.Fprintf(stderr, "simulate: %d/%d runs, %s\n", done, total, now.Sub(start).Round(time.Second))
			}
		},
	})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", path, err))
	}
	pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: prediction: %w", path, err))
	}
	if *paths != "" {
		if err := writePaths(*paths, loop, res, stdout); err != nil {
			return err
		}
	}
	sim := report.Simulation{Result: res, Prediction: pr, Runs: *runs, Periods: *periods, Warmup: *warmup, Seed: *seed}
	var sum, n float64
	for seg, fit := range fits {
		fr := engine.FrequencyResultOf(loop, seg, fit.Result(), pr, engine.DefaultTolerance)
		sim.Frequencies = append(sim.Frequencies, fr)
		if seg < len(pr.Harmonics) {
			sum += float64(fr.Samples) * pr.Harmonics[seg].SecondMoment
			n += float64(fr.Samples)
		}
	}
	if n > 0 && pr.Error != nil {
		// Runs that do not play every frequency equally long are compared
		// with the frequencies they played, as the monitor does.
		e := *pr.Error
		e.SecondMoment = sum / n
		pr.Error = &e
	}
	if *asJSON {
		return sim.WriteJSON(stdout)
	}
	if *paths == "-" {
		stdout = stderr // keep the CSV on stdout clean
	}
	sim.WriteText(stdout)
	return nil
}

func writePaths(name string, loop *profiles.Loop, res *estimate.SimResult, stdout io.Writer) (err error) {
	w := stdout
	if name != "-" {
		f, err := os.Create(name)
		if err != nil {
			return fmt.Errorf("writing paths: %w", err)
		}
		defer func() {
			if cerr := f.Close(); err == nil && cerr != nil {
				err = fmt.Errorf("writing paths: %w", cerr)
			}
		}()
		w = f
	}
	return report.WritePathsCSV(w, loop, res)
}
