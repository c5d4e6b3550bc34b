package bench

import (
	"fmt"
	"math"
	"slices"
	"sync"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// turnaroundKeep is how many of the latest turnarounds the bench keeps
// for its comparison with the loop's compute law.
const turnaroundKeep = 20000

// turnarounds keeps the latest controller turnarounds the relay measured
// (emulate.Pairing), in a ring filled without allocating.
type turnarounds struct {
	mu   sync.Mutex
	ring [turnaroundKeep]float64
	n    int // measured so far (the ring holds the last min(n, keep))
}

func (t *turnarounds) observe(_ uint64, turn, _ int64) {
	t.mu.Lock()
	t.ring[t.n%turnaroundKeep] = float64(turn) / 1e9
	t.n++
	t.mu.Unlock()
}

// TurnaroundReport compares the controller's turnaround the relay
// measured with the compute law the prediction assumes.
type TurnaroundReport struct {
	// N is how many turnarounds were measured; the comparison uses the
	// last Used of them.
	N, Used int
	// Mean and P99 of the turnarounds used, seconds; Assumed the mean of
	// the loop's compute law and Law its description.
	Mean, P99, Assumed float64
	Law                string
	Constant           bool // the law is a constant
	// KS is the Kolmogorov–Smirnov statistic of the turnarounds against
	// the compute law, P its p-value (laws.KSPValue); Agree is P ≥ Alpha.
	KS, P float64
	Agree bool
}

// TurnaroundAlpha is the level at which the bench calls the measured
// turnaround and the assumed compute law different.
const TurnaroundAlpha = 0.001

// Turnaround compares the turnarounds measured so far with the loop's
// compute law; nil when the loop does not let the relay pair commands
// with samples (no decode.sequence or command_decode) or none was
// measured.
func (b *Bench) Turnaround() *TurnaroundReport {
	if b.turns == nil {
		return nil
	}
	b.turns.mu.Lock()
	n := b.turns.n
	xs := slices.Clone(b.turns.ring[:min(n, turnaroundKeep)])
	b.turns.mu.Unlock()
	if len(xs) == 0 {
		return nil
	}
	return compareTurnaround(b.Loop, n, xs)
}

func compareTurnaround(loop *profiles.Loop, n int, xs []float64) *TurnaroundReport {
	slices.Sort(xs)
	r := &TurnaroundReport{N: n, Used: len(xs), Assumed: loop.ComputeMean(), Law: loop.ComputeText(), Constant: loop.ComputeConstant()}
	for _, x := range xs {
		r.Mean += x
	}
	r.Mean /= float64(len(xs))
	r.P99 = xs[min(len(xs)-1, int(0.99*float64(len(xs))))]
	comp := loop.Compute
	if comp == nil {
		comp = laws.Constant{}
	}
	r.KS = laws.KSStatistic(xs, comp.CDF)
	r.P = laws.KSPValue(r.KS, len(xs))
	r.Agree = !(r.P < TurnaroundAlpha)
	return r
}

// String is the report in one line.
func (r *TurnaroundReport) String() string {
	law := r.Law
	if r.Constant {
		law = "a constant " + law
	}
	verdict := "agrees with"
	if !r.Agree {
		verdict = "differs from"
	}
	return fmt.Sprintf("controller turnaround (relay → controller → relay): mean %s, p99 %s over the last %d of %d commands; %s the loop's compute_delay, %s (mean %s): Kolmogorov–Smirnov D = %.4f, p = %s",
		laws.FormatSeconds(r.Mean), laws.FormatSeconds(r.P99), r.Used, r.N, verdict, law, laws.FormatSeconds(r.Assumed), r.KS, pText(r.P))
}

func pText(p float64) string {
	if p < 1e-300 || math.IsNaN(p) {
		return "< 1e-300"
	}
	return fmt.Sprintf("%.3g", p)
}
