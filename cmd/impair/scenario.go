package main

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"path/filepath"
	"strings"
	"time"

	"rigwire/emulate"
	"rigwire/profiles"
)

// progressEvery is how often a playing scenario logs where it is.
const progressEvery = 10 * time.Second

// playingScenario is a scenario ready to play on a relay: scaled, with its
// steps built.
type playingScenario struct {
	name  string
	file  string
	scale float64
	sc    *profiles.Scenario
	steps []profiles.ScenarioStep
	names []string
	total time.Duration
}

func loadPlayingScenario(path string, scale float64) (*playingScenario, error) {
	sc, err := profiles.LoadScenario(path)
	if err != nil {
		return nil, err
	}
	if scale != 1 {
		sc = sc.Scale(scale)
	}
	steps, err := sc.Steps()
	if err != nil {
		return nil, err
	}
	if len(steps) == 0 || steps[0].Profile == nil {
		return nil, fmt.Errorf("%s: scenario has no steps", path)
	}
	p := &playingScenario{name: sc.Name, file: path, scale: scale, sc: sc, steps: steps, total: sc.Total()}
	if p.name == "" {
		p.name = strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	}
	for _, ph := range sc.Phases {
		p.names = append(p.names, ph.Name)
	}
	return p, nil
}

// print writes the scenario's phases, one a line, each line after prefix.
func (p *playingScenario) print(w io.Writer, prefix string) {
	scale := ""
	if p.scale != 1 {
		scale = fmt.Sprintf(", time scale %g", p.scale)
	}
	fmt.Fprintf(w, "%sscenario %s (%s): %d phases, %s%s\n", prefix, p.name, p.file, len(p.sc.Phases), p.total, scale)
	for i, ph := range p.sc.Phases {
		fmt.Fprintf(w, "%s  phase %d/%d %s: %s", prefix, i+1, len(p.sc.Phases), ph.Name, ph.Duration)
		for j, r := range ph.Ramps {
			sep := ", ramps "
			if j > 0 {
				sep = "; "
			}
			fmt.Fprintf(w, "%s%s %g → %g", sep, r.Key, r.From, r.To)
		}
		fmt.Fprintln(w)
	}
}

// phaseAt is the 0-based phase being played at elapsed (the last one after
// the end).
func (p *playingScenario) phaseAt(elapsed time.Duration) int {
	var end time.Duration
	for i, ph := range p.sc.Phases {
		end += ph.Duration
		if elapsed < end {
			return i
		}
	}
	return len(p.sc.Phases) - 1
}

// progress is the progress line at elapsed:
// "scenario conveyor-qualification: phase 2/4 degrading, 1m10s of 10m0s".
func (p *playingScenario) progress(elapsed time.Duration) string {
	if elapsed > p.total {
		elapsed = p.total
	}
	i := p.phaseAt(elapsed)
	unit := time.Second // tenths for a short (scaled) scenario
	if p.total < time.Minute {
		unit = 100 * time.Millisecond
	}
	if elapsed != p.total {
		elapsed = elapsed.Round(unit)
	}
	return fmt.Sprintf("scenario %s: phase %d/%d %s, %s of %s",
		p.name, i+1, len(p.names), p.names[i], elapsed, p.total)
}

// play plays the scenario on relay (emulate logs each phase change and
// keeps the phase metric) and logs a progress line every progressEvery.
// It returns nil at the scenario's end, ctx.Err() if ctx ends first.
func (p *playingScenario) play(ctx context.Context, relay *emulate.Relay, log *slog.Logger) error {
	start := time.Now()
	done := make(chan struct{})
	go func() {
		t := time.NewTicker(progressEvery)
		defer t.Stop()
		for {
			select {
			case <-done:
				return
			case <-t.C:
				log.Info(p.progress(time.Since(start)))
			}
		}
	}()
	err := relay.Play(ctx, p.names, p.steps, p.total, nil)
	close(done)
	if err == nil {
		log.Info(p.progress(p.total) + " (ended)")
	}
	return err
}
