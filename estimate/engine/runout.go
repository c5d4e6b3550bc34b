package engine

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net"
	"os"
	"path/filepath"
	"strings"
	"time"
)

// What a run of the monitor writes besides its metrics: the status line
// while it runs, the verdict line and the JSON summary at its end.

// ServeFor serves conn (Serve) until ctx ends or, when d > 0, for d,
// writing the status line (Progress) to w every interval (0: never). It
// returns once Serve has returned and the status lines have stopped,
// with Serve's error.
func (m *Monitor) ServeFor(ctx context.Context, conn *net.UDPConn, d, every time.Duration, w io.Writer) error {
	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	if d > 0 {
		var c2 context.CancelFunc
		ctx, c2 = context.WithTimeout(ctx, d)
		defer c2()
	}
	progDone := make(chan struct{})
	go func() {
		defer close(progDone)
		m.ShowProgress(ctx, every, w)
	}()
	err := m.Serve(ctx, conn)
	cancel()
	<-progDone
	return err
}

// ShowProgress writes the status line (Progress) to w every interval
// until ctx ends; with every 0 it only waits.
func (m *Monitor) ShowProgress(ctx context.Context, every time.Duration, w io.Writer) {
	if every == 0 {
		<-ctx.Done()
		return
	}
	t := time.NewTicker(every)
	defer t.Stop()
	for {
		select {
		case <-ctx.Done():
			return
		case <-t.C:
			fmt.Fprintln(w, m.Progress().String())
		}
	}
}

// VerdictLine is the run's verdict with the numbers behind it and why.
func (s *Summary) VerdictLine() string {
	f := func(p *float64) string {
		if p == nil {
			return "-"
		}
		return fmt.Sprintf("%.6g", *p)
	}
	return fmt.Sprintf("verdict %s: measured E[eᵀe] %s, %g %% CI [%s, %s] from %d samples; predicted %s; tolerance %g — %s",
		s.Verdict, f(s.ErrorSecondMoment), 100*s.Level, f(s.CILow), f(s.CIHigh), s.Samples, f(s.PredictedSecondMoment), s.Tolerance,
		s.VerdictReason)
}

// FrequencyLines says, one line per frequency of a sinusoidal
// reference, the measured gain, phase and spread beside the prediction
// and the verdict (none with a constant reference).
func (s *Summary) FrequencyLines() []string { return FrequencyLines(s.FrequencyResponse) }

// FrequencyLines says each frequency's result in one line (see
// Summary.FrequencyLines).
func FrequencyLines(frs []FrequencyResult) []string {
	f := func(p *float64, format string) string {
		if p == nil {
			return "-"
		}
		return fmt.Sprintf(format, *p)
	}
	var out []string
	for _, fr := range frs {
		var parts []string
		for i, o := range fr.Outputs {
			if o.Gain == nil && o.PredictedGain == nil {
				continue
			}
			out := ""
			if len(fr.Outputs) > 1 {
				out = fmt.Sprintf(" y%d", i)
			}
			parts = append(parts, fmt.Sprintf("gain%s %s [%s, %s] (predicted %s), phase %s° [%s, %s] (predicted %s°)", out,
				f(o.Gain, "%.4g"), f(o.GainCILow, "%.4g"), f(o.GainCIHigh, "%.4g"), f(o.PredictedGain, "%.4g"),
				f(o.PhaseDeg, "%.1f"), f(o.PhaseCILow, "%.1f"), f(o.PhaseCIHigh, "%.1f"), f(o.PredictedPhaseDeg, "%.1f")))
		}
		parts = append(parts, fmt.Sprintf("spread %s [%s, %s] (predicted %s)", f(fr.Spread, "%.4g"), f(fr.SpreadCILow, "%.4g"),
			f(fr.SpreadCIHigh, "%.4g"), f(fr.PredictedSpread, "%.4g")))
		out = append(out, fmt.Sprintf("at %s Hz (%d samples): %s — %s: %s", frequencyLabel(fr.FrequencyHz), fr.Samples,
			strings.Join(parts, ", "), fr.Verdict, fr.Reason))
	}
	return out
}

// WriteSummary writes v (a Summary, or one with more beside it) as
// indented JSON to w when path is "" or "-", else to the file path,
// atomically: through a temporary file in the same directory, renamed
// into place once written.
func WriteSummary(w io.Writer, path string, v any) error {
	data, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	data = append(data, '\n')
	if path == "" || path == "-" {
		_, err := w.Write(data)
		return err
	}
	return writeAtomic(path, data)
}

// writeAtomic writes data to path through a temporary file (mode 0644)
// renamed into place.
func writeAtomic(path string, data []byte) error {
	tmp, err := os.CreateTemp(filepath.Dir(path), ".summary-*")
	if err != nil {
		return err
	}
	if err := tmp.Chmod(0o644); err != nil {
		tmp.Close()
		os.Remove(tmp.Name())
		return err
	}
	if _, err := tmp.Write(data); err != nil {
		tmp.Close()
		os.Remove(tmp.Name())
		return err
	}
	if err := tmp.Close(); err != nil {
		os.Remove(tmp.Name())
		return err
	}
	if err := os.Rename(tmp.Name(), path); err != nil {
		os.Remove(tmp.Name())
		return err
	}
	return nil
}
