package fit

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"
)

// WriteReport writes the fit for a reader: every candidate delay law with
// its parameters and standard errors, log-likelihood, AIC and KS check,
// then the two loss models side by side and the one chosen.
func (r *TraceFit) WriteReport(w io.Writer) {
	fmt.Fprintf(w, "trace %s: %d probes, %d lost, probe interval %s\n", r.Trace.File, r.Loss.N, r.Loss.Lost, traceSeconds.Format(r.Interval))
	fmt.Fprintf(w, "\ndelays: %s (%s), %d samples; maximum likelihood, chosen by AIC = 2k − 2 ln L\n", r.What, r.Column, r.Loss.N-r.Loss.Lost)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "kind\tparameters (± standard error)\tln L\tAIC\tΔAIC\tKS D\tKS p")
	for _, d := range r.Delays {
		var ps []string
		for i, n := range d.Names {
			s := n + " " + num(d.Params[i])
			if !math.IsNaN(d.StdErr[i]) {
				s += " ± " + strconv.FormatFloat(d.StdErr[i], 'g', 2, 64)
			} else if n == "shift" {
				s += " (at its bound)"
			}
			ps = append(ps, s)
		}
		fmt.Fprintf(tw, "%s\t%s\t%.1f\t%.1f\t%.1f\t%.4f\t%.3g\n", d.Kind, strings.Join(ps, ", "), d.LogLik, d.AIC, d.AIC-r.Delays[0].AIC, d.KS, d.KSP)
	}
	tw.Flush()
	fmt.Fprintln(w, "(KS p-values are conservative: the parameters were estimated from the same sample — Lilliefors)")
	l := r.Loss
	fmt.Fprintf(w, "\nlosses: %d of %d probes in %d runs\n", l.Lost, l.N, l.Runs)
	if l.Lost == 0 {
		// A binomial standard error is 0 with no losses, which claims too
		// much: give the one-sided 95 % upper bound instead, −ln(0.05)/N ≈
		// 3/N (the "rule of three", Hanley and Lippman-Hand, JAMA 249(13),
		// 1983, from memory).
		fmt.Fprintf(w, "  i.i.d.:                 loss 0 (none in %d probes; 95 %% upper bound %.2g, the rule of three)   AIC %.1f\n", l.N, -math.Log(0.05)/float64(l.N), l.AICIID)
		fmt.Fprintf(w, "  simplified Gilbert:     p 0, r not identifiable (no losses)   AIC %.1f\n", l.AICBurst)
		fmt.Fprintln(w, "  chosen: i.i.d.; no losses in the trace (long-run loss 0)")
		return
	}
	fmt.Fprintf(w, "  i.i.d.:                 loss %s                          AIC %.1f\n", plusMinus(l.Loss, l.LossSE), l.AICIID)
	// r = P(delivered | previous lost) needs a lost probe followed by
	// another probe; without one (no losses, or only the last probe lost)
	// the trace says nothing about it.
	rs := "r " + plusMinus(l.R, l.RSE)
	if math.IsNaN(l.RSE) {
		rs = "r not identifiable (no lost probe is followed by another)"
	}
	fmt.Fprintf(w, "  simplified Gilbert:     p %s, %s   AIC %.1f\n", plusMinus(l.P, l.PSE), rs, l.AICBurst)
	fmt.Fprintf(w, "  likelihood ratio %.2f, p-value %.3g (χ², 1 degree of freedom)\n", l.LR, l.LRP)
	if l.Burst {
		fmt.Fprintf(w, "  chosen: burst channel; long-run loss %.4g, mean burst %.3g probes", l.LongRunLoss, l.MeanBurst)
		if r.DwellOK {
			fmt.Fprintf(w, "; mean dwell good %s, burst %s", traceSeconds.Format(r.Good), traceSeconds.Format(r.Bad))
		}
		fmt.Fprintln(w)
	} else {
		fmt.Fprintf(w, "  chosen: i.i.d.; long-run loss %.4g, mean burst %.3g probes\n", l.LongRunLoss, l.MeanBurst)
	}
}

// plusMinus writes an estimate with its standard error, or the estimate
// alone when the error is not defined.
func plusMinus(v, se float64) string {
	if math.IsNaN(se) || math.IsInf(se, 0) {
		return strconv.FormatFloat(v, 'g', 4, 64) + " (no standard error)"
	}
	return strconv.FormatFloat(v, 'g', 4, 64) + " ± " + strconv.FormatFloat(se, 'g', 2, 64)
}
