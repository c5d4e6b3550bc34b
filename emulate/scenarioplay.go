package emulate

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"path/filepath"
	"strings"
	"time"

	"rigwire/profiles"
)

// ScenarioProgressEvery is how often a playing scenario logs where it is.
const ScenarioProgressEvery = 10 * time.Second

// ScenarioPlan is a scenario file ready to play on a relay: scaled, with
// its steps built (each step's profile).
type ScenarioPlan struct {
	Name     string // the scenario's name, else its file's base name
	File     string
	Scale    float64 // every duration multiplied by it
	Scenario *profiles.Scenario
	Steps    []profiles.ScenarioStep
	Phases   []string // phase names, in order
	Total    time.Duration
}

// LoadScenarioPlan reads the scenario file at path, scales its durations
// by scale and builds its steps. Errors name the file, line and key.
func LoadScenarioPlan(path string, scale float64) (*ScenarioPlan, error) {
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
	p := &ScenarioPlan{Name: sc.Name, File: path, Scale: scale, Scenario: sc, Steps: steps, Total: sc.Total()}
	if p.Name == "" {
		p.Name = strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	}
	for _, ph := range sc.Phases {
		p.Phases = append(p.Phases, ph.Name)
	}
	return p, nil
}

// Print writes the scenario's phases, one a line, each line after prefix.
func (p *ScenarioPlan) Print(w io.Writer, prefix string) {
	scale := ""
	if p.Scale != 1 {
		scale = fmt.Sprintf(", time scale %g", p.Scale)
	}
	fmt.Fprintf(w, "%sscenario %s (%s): %d phases, %s%s\n", prefix, p.Name, p.File, len(p.Scenario.Phases), p.Total, scale)
	for i, ph := range p.Scenario.Phases {
		fmt.Fprintf(w, "%s  phase %d/%d %s: %s", prefix, i+1, len(p.Scenario.Phases), ph.Name, ph.Duration)
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
func (p *ScenarioPlan) phaseAt(elapsed time.Duration) int {
	var end time.Duration
	for i, ph := range p.Scenario.Phases {
		end += ph.Duration
		if elapsed < end {
			return i
		}
	}
	return len(p.Scenario.Phases) - 1
}

// Progress is the progress line at elapsed:
// "scenario conveyor-qualification: phase 2/4 degrading, 1m10s of 10m0s".
func (p *ScenarioPlan) Progress(elapsed time.Duration) string {
	if elapsed > p.Total {
		elapsed = p.Total
	}
	i := p.phaseAt(elapsed)
	unit := time.Second // tenths for a short (scaled) scenario
	if p.Total < time.Minute {
		unit = 100 * time.Millisecond
	}
	if elapsed != p.Total {
		elapsed = elapsed.Round(unit)
	}
	return fmt.Sprintf("scenario %s: phase %d/%d %s, %s of %s",
		p.Name, i+1, len(p.Phases), p.Phases[i], elapsed, p.Total)
}

// PlayOn plays the plan on r (Relay.Play: each phase change logged, the
// phase metric kept) and logs a progress line every
// ScenarioProgressEvery. It returns nil at the scenario's end, ctx.Err()
// if ctx ends first.
func (p *ScenarioPlan) PlayOn(ctx context.Context, r *Relay, log *slog.Logger) error {
	start := time.Now()
	done := make(chan struct{})
	go func() {
		t := time.NewTicker(ScenarioProgressEvery)
		defer t.Stop()
		for {
			select {
			case <-done:
				return
			case <-t.C:
				log.Info(p.Progress(time.Since(start)))
			}
		}
	}()
	err := r.Play(ctx, p.Phases, p.Steps, p.Total, nil)
	close(done)
	if err == nil {
		log.Info(p.Progress(p.Total) + " (ended)")
	}
	return err
}
