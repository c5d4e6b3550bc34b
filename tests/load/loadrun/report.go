package main

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"

	"rigwire/tests/load/loadkit"
)

// bar is one line of the final table: a figure, its aim and the verdict.
type bar struct {
	Figure   string `json:"figure"`
	Value    num    `json:"value"`
	Measured string `json:"measured"`
	Aim      string `json:"aim"`
	Met      string `json:"met"` // yes, NO, n/a
}

// num is a figure that is written as null in JSON when it is NaN.
type num float64

func (v num) MarshalJSON() ([]byte, error) {
	f := float64(v)
	if math.IsNaN(f) || math.IsInf(f, 0) {
		return []byte("null"), nil
	}
	return strconv.AppendFloat(nil, f, 'g', -1, 64), nil
}

// ratios is a[i]/b[i] for each repetition where both are positive numbers.
func ratios(a, b []float64) []float64 {
	var out []float64
	for i := range min(len(a), len(b)) {
		if a[i] > 0 && b[i] > 0 && !math.IsNaN(a[i]) && !math.IsNaN(b[i]) {
			out = append(out, a[i]/b[i])
		}
	}
	return out
}

// addedRatios is ratios of added latencies, where a forwarder that added
// none measurable (a[i] ≤ 0: within the noise of direct's p50) counts as
// 0× rather than being left out; b[i] ≤ 0 still leaves the repetition out.
func addedRatios(a, b []float64) []float64 {
	var out []float64
	for i := range min(len(a), len(b)) {
		if !math.IsNaN(a[i]) && !math.IsNaN(b[i]) && b[i] > 0 {
			out = append(out, max(a[i], 0)/b[i])
		}
	}
	return out
}

// diffs is a[i]−b[i] for each repetition where both are numbers.
func diffs(a, b []float64) []float64 {
	out := make([]float64, 0, len(a))
	for i := range min(len(a), len(b)) {
		out = append(out, a[i]-b[i])
	}
	return out
}

func verdict(v float64, ok func(float64) bool) string {
	switch {
	case math.IsNaN(v):
		return "n/a"
	case ok(v):
		return "yes"
	}
	return "NO"
}

func kRate(v float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	if v == 0 {
		return "below min"
	}
	return fmt.Sprintf("%.1fk", v/1000)
}

func us(v float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	if math.Abs(v) >= 1e-3 {
		return fmt.Sprintf("%.2f ms", v*1e3)
	}
	return fmt.Sprintf("%.1f µs", v*1e6)
}

func pct(v float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return fmt.Sprintf("%.1f %%", 100*v)
}

func times(v float64) string {
	if math.IsNaN(v) {
		return "—"
	}
	return fmt.Sprintf("%.2f×", v)
}

// bars computes the aims of the relay's issue from the results.
func bars(cfg config, res *results) []bar {
	var out []bar
	relayOn := contains(res.Targets, tRelay)
	nan := math.NaN()
	pick := func(v float64) float64 {
		if !relayOn {
			return nan
		}
		return v
	}
	for _, size := range cfg.sizes {
		m := res.MaxRate[size]
		if m == nil {
			continue
		}
		r := pick(loadkit.Median(ratios(m[tRelay], m[tBatch])))
		measured := fmt.Sprintf("%s (%s vs %s /s)", times(r), kRate(pick(loadkit.Median(m[tRelay]))), kRate(loadkit.Median(m[tBatch])))
		if d := loadkit.Median(m[tDirect]); d > 0 && pick(loadkit.Median(m[tRelay])) >= 0.97*d {
			// No forwarder can be measured above what the generator and
			// the sink reach alone: the ratio is a lower bound.
			measured += ", at direct's ceiling"
		}
		out = append(out, bar{
			Figure: fmt.Sprintf("max rate %d B, relay ÷ batched forwarder", size), Value: num(r),
			Measured: measured,
			Aim:      "≥ 0.90×", Met: verdict(r, func(v float64) bool { return v >= 0.9 }),
		})
		if size == 64 {
			v := pick(loadkit.Median(m[tRelay]))
			out = append(out, bar{
				Figure: "max rate 64 B, relay", Value: num(v), Measured: kRate(v) + " /s",
				Aim: "≥ 40k /s", Met: verdict(v, func(v float64) bool { return v >= 40e3 }),
			})
		}
	}
	if len(res.LatP50) > 0 {
		addR := diffs(res.LatP50[tRelay], res.LatP50[tDirect])
		addB := diffs(res.LatP50[tBatch], res.LatP50[tDirect])
		r := pick(loadkit.Median(addedRatios(addR, addB)))
		out = append(out, bar{
			Figure: fmt.Sprintf("added latency p50 at %.0fk/s, relay ÷ batched", cfg.latRate/1000), Value: num(r),
			Measured: fmt.Sprintf("%s (%s vs %s)", times(r), us(pick(loadkit.Median(addR))), us(loadkit.Median(addB))),
			Aim:      "≤ 1.10×", Met: verdict(r, func(v float64) bool { return v <= 1.1 }),
		})
	}
	for _, rate := range cfg.lateRates {
		m := res.Late[int(rate)]
		if m == nil {
			continue
		}
		p50, p99, cpu := loadkit.Median(m[kP50]), loadkit.Median(m[kP99]), loadkit.Median(m[kCPU])
		if rate == 1000 {
			out = append(out,
				bar{Figure: "release lateness p50 at 1k/s", Value: num(p50), Measured: us(p50), Aim: "≤ 50 µs",
					Met: verdict(p50, func(v float64) bool { return v <= 50e-6 })},
				bar{Figure: "release lateness p99 at 1k/s", Value: num(p99), Measured: us(p99), Aim: "≤ 100 µs",
					Met: verdict(p99, func(v float64) bool { return v <= 100e-6 })},
				bar{Figure: "relay CPU at 1k/s (1–5 ms delays)", Value: num(cpu), Measured: pct(cpu) + " of a core", Aim: "< 20 %",
					Met: verdict(cpu, func(v float64) bool { return v < 0.2 })},
			)
		}
		if rate == 20000 {
			out = append(out, bar{Figure: "release lateness p99 at 20k/s", Value: num(p99), Measured: us(p99), Aim: "≤ 2 ms",
				Met: verdict(p99, func(v float64) bool { return v <= 2e-3 })})
		}
	}
	return out
}

func contains(xs []string, x string) bool {
	for _, y := range xs {
		if y == x {
			return true
		}
	}
	return false
}

// writeReport prints the tables: raw figures per target, then the bars.
func writeReport(w io.Writer, cfg config, res *results) {
	cols := append([]string{tDirect}, res.Targets...)
	fmt.Fprintf(w, "\nrigwire load bars: %d repetition(s), order rotated; figures are medians over repetitions,\n", res.Reps)
	fmt.Fprintf(w, "ratios are medians of same-run ratios. Loopback only; shared machine, so figures drift.\n")
	var foreign []float64
	repeated := 0
	for _, t := range res.Trials {
		foreign = append(foreign, t.Foreign)
		if t.Attempt > 1 {
			repeated++
		}
	}
	if len(foreign) > 0 {
		q := loadkit.Quantiles(foreign, 0.5, 0.9)
		fmt.Fprintf(w, "Other processes used %.2f cores at the median trial, %.2f at the 90th percentile; %d of %d trials were repeats of busy ones.\n",
			q[0], q[1], repeated, len(res.Trials))
	}

	if len(res.MaxRate) > 0 {
		fmt.Fprintf(w, "\nHighest rate below %.1f %% unexplained loss, datagrams/s (zero-delay profile; search %.0fk–%.0fk, trials of %v)\n",
			100*cfg.maxLoss, cfg.rateMin/1000, cfg.rateMax/1000, cfg.rateTrial)
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "size\t%s\t\n", strings.Join(cols, "\t"))
		for _, size := range cfg.sizes {
			m := res.MaxRate[size]
			row := []string{fmt.Sprintf("%d B", size)}
			for _, c := range cols {
				v := loadkit.Median(m[c])
				s := kRate(v)
				if v >= cfg.rateMax*0.95 {
					s = "≥" + s
				}
				row = append(row, s)
			}
			fmt.Fprintf(tw, "%s\t\n", strings.Join(row, "\t"))
			if contains(res.Targets, tRelay) {
				row = []string{"relay ÷"}
				for _, c := range cols {
					row = append(row, times(loadkit.Median(ratios(m[tRelay], m[c]))))
				}
				fmt.Fprintf(tw, "%s\t\n", strings.Join(row, "\t"))
			}
		}
		tw.Flush()
	}

	if len(res.LatP50) > 0 {
		fmt.Fprintf(w, "\nOne-way latency at %.0fk/s, 64 B (sink stamp − generator stamp, CLOCK_MONOTONIC)\n", cfg.latRate/1000)
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "figure\t%s\t\n", strings.Join(cols, "\t"))
		row := []string{"p50"}
		for _, c := range cols {
			row = append(row, us(loadkit.Median(res.LatP50[c])))
		}
		fmt.Fprintf(tw, "%s\t\n", strings.Join(row, "\t"))
		row = []string{"added p50 over direct"}
		for _, c := range cols {
			if c == tDirect {
				row = append(row, "")
				continue
			}
			row = append(row, us(loadkit.Median(diffs(res.LatP50[c], res.LatP50[tDirect]))))
		}
		fmt.Fprintf(tw, "%s\t\n", strings.Join(row, "\t"))
		if contains(res.Targets, tRelay) {
			row = []string{"relay added ÷"}
			addR := diffs(res.LatP50[tRelay], res.LatP50[tDirect])
			for _, c := range cols {
				if c == tDirect {
					row = append(row, "")
					continue
				}
				row = append(row, times(loadkit.Median(ratios(addR, diffs(res.LatP50[c], res.LatP50[tDirect])))))
			}
			fmt.Fprintf(tw, "%s\t\n", strings.Join(row, "\t"))
		}
		row = []string{"forwarder CPU"}
		for _, c := range cols {
			if c == tDirect {
				row = append(row, "")
				continue
			}
			row = append(row, pct(loadkit.Median(res.LatCPU[c])))
		}
		fmt.Fprintf(tw, "%s\t\n", strings.Join(row, "\t"))
		tw.Flush()
	}

	if len(res.Late) > 0 {
		fmt.Fprintf(w, "\nRelease lateness, release_s − due_s from the relay's --record file (uniform 1–5 ms delay, 64 B, trials of %v)\n", cfg.lateTrial)
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "rate\tforwarded\tp50\tp99\tmax\trelay CPU\t\n")
		for _, rate := range cfg.lateRates {
			m := res.Late[int(rate)]
			if m == nil {
				continue
			}
			fmt.Fprintf(tw, "%.0f/s\t%.0f\t%s\t%s\t%s\t%s\t\n", rate, loadkit.Median(m[kN]),
				us(loadkit.Median(m[kP50])), us(loadkit.Median(m[kP99])), us(loadkit.Median(m[kMax])), pct(loadkit.Median(m[kCPU])))
		}
		tw.Flush()
	}

	bs := bars(cfg, res)
	if len(bs) > 0 {
		fmt.Fprintf(w, "\nBars\n")
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
		fmt.Fprintf(tw, "figure\tmeasured\taim\tmet\n")
		for _, b := range bs {
			fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", b.Figure, b.Measured, b.Aim, b.Met)
		}
		tw.Flush()
	}
	if !contains(res.Targets, tRelay) {
		fmt.Fprintf(w, "\nThe relay was not measured (no impair binary): its rows read n/a.\n")
	}
}
