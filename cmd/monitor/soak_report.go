package main

import (
	"fmt"
	"math"
	"sort"
	"time"

	"rigwire/cmd/internal/exitcode"
	"rigwire/cmd/monitor/engine"
	"rigwire/cmd/monitor/report"
	"rigwire/profiles"
)

// writeSoakReport turns the soak's summary, the monitor's history and the
// relay's histograms into the report's data and writes it into dir.
func writeSoakReport(dir string, b *bench, sc *profiles.Scenario, loop *profiles.Loop, s *engine.Summary,
	started time.Time, code int) ([]string, error) {
	verdict := "pass"
	switch {
	case s.Trip != nil:
		verdict = "tripped"
	case code == exitcode.PhaseFailed:
		verdict = "fail"
	case code != exitcode.OK:
		verdict = "inconclusive"
	}
	d := &report.Data{
		Title:    "Soak: " + sc.Name,
		Loop:     loop.File,
		Scenario: sc.File,
		Started:  started,
		Duration: time.Since(started).Round(time.Millisecond),
		Verdict:  verdict,
		ExitCode: code,
		Notes: []string{
			fmt.Sprintf("relay seed %d", b.relay.Seed()),
			fmt.Sprintf("%d samples estimated over the run, %d datagrams received, %d sample gaps", s.Samples, s.Datagrams, s.Gaps),
			"predictions per phase are steady-state values; during a ramp the phase's prediction is the mean of the predictions in force at each judged sample",
			"interval: " + engine.CIMethod,
			"verdict rule: " + engine.VerdictRule,
		},
		Delays:   b.relayHistogram("rigwire_relay_delay_seconds"),
		LossRuns: b.relayHistogram("rigwire_relay_loss_run_length"),
	}
	if s.AfterTripSamples > 0 {
		d.Notes = append(d.Notes, fmt.Sprintf("%d samples arrived after the safety trip; they are in no estimate", s.AfterTripSamples))
	}
	d.Phases = reportPhases(s.Phases)
	for _, pt := range b.mon.History() {
		d.History = append(d.History, report.Point{Elapsed: pt.Elapsed, Measured: pt.Measured, CILow: pt.CILow,
			CIHigh: pt.CIHigh, Predicted: pt.Predicted, Phase: pt.Phase})
	}
	if t := s.Trip; t != nil {
		d.Trip = &report.Trip{Reason: t.Reason, Value: t.Value, Bound: t.Bound, Elapsed: t.Elapsed, Phase: t.Phase, Action: t.Action}
	}
	return report.Write(dir, d)
}

// reportPhases converts the summary's phases for the report; a phase not
// run has no start or end (NaN).
func reportPhases(ps []engine.PhaseResult) []report.Phase {
	var out []report.Phase
	for _, p := range ps {
		rp := report.Phase{Index: p.Index, Name: p.Name, Start: math.NaN(), End: math.NaN(), Samples: p.Samples,
			Measured: p.ErrorSecondMoment, CILow: p.CILow, CIHigh: p.CIHigh, Predicted: p.PredictedSecondMoment,
			Verdict: p.Verdict, Reason: p.Reason}
		if p.StartSeconds != nil {
			rp.Start = *p.StartSeconds
		}
		if p.EndSeconds != nil {
			rp.End = *p.EndSeconds
		}
		if n := phaseNote(p); n != "-" {
			rp.Note = n
		}
		out = append(out, rp)
	}
	return out
}

// relayHistogram reads a relay histogram by direction from the registry,
// as non-cumulative bucket counts.
func (b *bench) relayHistogram(name string) map[string]report.Histogram {
	out := map[string]report.Histogram{}
	fams, err := b.reg.Gather()
	if err != nil {
		return out
	}
	for _, f := range fams {
		if f.GetName() != name {
			continue
		}
		for _, m := range f.GetMetric() {
			dir := ""
			for _, l := range m.GetLabel() {
				if l.GetName() == "direction" {
					dir = l.GetValue()
				}
			}
			h := m.GetHistogram()
			if h == nil {
				continue
			}
			var rh report.Histogram
			prev := 0.0
			bs := h.GetBucket()
			sort.Slice(bs, func(i, j int) bool { return bs[i].GetUpperBound() < bs[j].GetUpperBound() })
			for _, bk := range bs {
				c := float64(bk.GetCumulativeCount())
				rh.Upper = append(rh.Upper, bk.GetUpperBound())
				rh.Counts = append(rh.Counts, c-prev)
				prev = c
			}
			rh.Upper = append(rh.Upper, math.Inf(1))
			rh.Counts = append(rh.Counts, float64(h.GetSampleCount())-prev)
			out[dir] = rh
		}
	}
	return out
}
