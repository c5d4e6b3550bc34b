package estimate

import "math"

// Loss-margin search parameters (estimate/model.md §8, §10).
const (
	marginScanStep  = 0.01 // grid step of the scan over q
	marginTolerance = 1e-4 // bisection stops when the bracket is this narrow
)

// LossMargin returns the smallest extra loss q ∈ [0, 1] at which the loop
// is no longer mean-square stable (estimate/model.md §8), 1 when it stays stable
// for every q < 1, 0 when it is not stable as it is. ρ(q) need not be
// monotone (estimate/model.md §10), so q is scanned on a grid of step 0.01 from 0
// and the first grid interval where stability is lost is bisected to
// 1e-4; the value returned is the bracket's upper end (unstable side).
// "Stable" is the certified verdict of MeanSquareStable: a q at which
// the loop is marginal counts as lost.
// The extra loss only rescales the mode probabilities, so the modes are
// reused. The model's own extra loss is restored on return.
func (md *Model) LossMargin() float64 { return md.LossMarginProgress(nil) }

// LossMarginProgress is LossMargin calling progress (when not nil) with
// the extra loss reached by the scan, in [0, 1], before each grid point:
// the scan costs one factorisation of the second-moment operator per
// point, seconds for large loops.
func (md *Model) LossMarginProgress(progress func(q float64)) float64 {
	saved := md.opts.ExtraLoss
	defer md.setLoss(saved)
	base := saved
	// The certificate of the last stable point is tried first at the
	// next: inside the stable region it usually still holds, and checking
	// it costs one product with ℒ instead of a factorisation.
	var cert []float64
	stableAt := func(q float64) bool {
		// Compose the model's extra loss with q: 1 − (1−q0)(1−q).
		md.setLoss(1 - (1-base)*(1-q))
		ok, c := md.meanSquareStableFrom(cert)
		if ok && c != nil {
			cert = c
		}
		return ok
	}
	if !stableAt(0) {
		return 0
	}
	prev := 0.0
	steps := int(math.Round(1 / marginScanStep))
	for k := 1; k <= steps; k++ {
		q := float64(k) * marginScanStep
		if progress != nil {
			progress(q)
		}
		if k == steps {
			q = 1 - marginTolerance/2 // q = 1 itself never converges (estimate/model.md §10)
		}
		if stableAt(q) {
			prev = q
			continue
		}
		lo, hi := prev, q
		for hi-lo > marginTolerance/2 {
			mid := (lo + hi) / 2
			if stableAt(mid) {
				lo = mid
			} else {
				hi = mid
			}
		}
		return hi
	}
	return 1
}
