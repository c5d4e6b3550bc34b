package estimate

import (
	"math"
	"sort"
)

// Tanh–sinh quadrature (H. Takahasi, M. Mori, "Double exponential
// formulas for numerical integration", Publ. RIMS Kyoto Univ. 9(3),
// 1974): with x = c + r·tanh(π/2·sinh t) the integral over [c − r, c + r]
// becomes one over t ∈ ℝ whose integrand decays double exponentially, and
// the trapezoidal rule in t converges exponentially in the number of
// nodes, even when f has algebraic or logarithmic singularities at the
// ends of the interval. That is what the τ-expectations meet in the
// probability scale: quantile functions of normal-like laws behave like
// √(ln 1/u) at u → 0 and 1, and inner integrals vanish like a power of
// the distance at the end of their range. Interior kinks and jumps must
// sit at the ends of the pieces the caller splits the range into.
//
// Levels halve the step h from 1; each level adds the nodes at odd
// multiples of h, so earlier values are reused. The convergence is
// exponential in 1/h: once it has set in, each halving roughly squares
// the error, so the difference d between two successive levels bounds
// the error of the coarser one and d²/|I| estimates that of the finer
// (implementations commonly estimate the error from the square of the
// last difference — common practice, from memory). The integral is
// accepted when d ≤ max(absTol, √relTol·|I|∞/tsSafety) in the max norm
// over components: the finer level then has an estimated error of
// relTol/tsSafety² relative, with margin should the squaring not yet hold.
const (
	tsTMax     = 3.5 // |t| beyond which the weights fall below about 1e-21·r
	tsMaxLevel = 12  // h = 2⁻¹², 28 673 nodes: the cap on the work per piece
	tsSafety   = 1e3 // margin on the squared-difference error estimate
)

// vecFunc fills out (length dim) with the integrand's values at x.
type vecFunc func(x float64, out []float64)

// epsilon is the unit roundoff of float64, 2⁻⁵².
const epsilon = 0x1p-52

// tanhSinh integrates vector-valued functions of dimension dim.
type tanhSinh struct {
	dim            int
	absTol, relTol float64
	val            []float64 // scratch
	sum, prev      []float64
}

func newTanhSinh(dim int, absTol, relTol float64) *tanhSinh {
	return &tanhSinh{dim: dim, absTol: absTol, relTol: relTol,
		val: make([]float64, dim), sum: make([]float64, dim), prev: make([]float64, dim)}
}

// integrate adds ∫ f over [a, b] to out, splitting first at the breaks
// that fall inside (a, b).
func (q *tanhSinh) integrate(f vecFunc, a, b float64, breaks []float64, out []float64) {
	if !(b > a) {
		return
	}
	pts := []float64{a}
	sorted := append([]float64(nil), breaks...)
	sort.Float64s(sorted)
	for _, x := range sorted {
		if x > pts[len(pts)-1] && x < b {
			pts = append(pts, x)
		}
	}
	pts = append(pts, b)
	for i := 0; i+1 < len(pts); i++ {
		q.piece(f, pts[i], pts[i+1], out)
	}
}

// piece adds ∫ f over [a, b] (no interior break) to out.
func (q *tanhSinh) piece(f vecFunc, a, b float64, out []float64) {
	r := (b - a) / 2
	if !(r > 0) {
		return
	}
	sum, prev := q.sum, q.prev
	clear(sum)
	// add accumulates the trapezoidal terms at ±t (t = 0 once).
	add := func(t float64) {
		s := math.Pi / 2 * math.Sinh(t)
		ch := math.Cosh(s)
		w := r * math.Pi / 2 * math.Cosh(t) / (ch * ch)
		// Distance from the ends, without the cancellation of c ± r·tanh s.
		d := r * 2 / (1 + math.Exp(2*s))
		if t == 0 {
			d = r
		}
		for _, x := range [2]float64{a + d, b - d} {
			// A node closer to an end than the floats can show lands on
			// it: take the nearest float inside instead, so that no weight
			// is lost on a range narrow against its position.
			if x <= a {
				x = math.Nextafter(a, b)
			} else if x >= b {
				x = math.Nextafter(b, a)
			}
			if x > a && x < b && w > 0 {
				f(x, q.val)
				for j, v := range q.val {
					sum[j] += w * v
				}
			}
			if t == 0 {
				break
			}
		}
	}
	h := 1.0
	for t := 0.0; t <= tsTMax; t++ {
		add(t)
	}
	for level := 1; level <= tsMaxLevel; level++ {
		copy(prev, sum)
		h /= 2
		for t := h; t <= tsTMax; t += 2 * h {
			add(t)
		}
		// sum holds Σ w f over all nodes of step h; prev those of step 2h.
		diff, scale := 0.0, 0.0
		for j := range sum {
			diff = math.Max(diff, math.Abs(h*sum[j]-2*h*prev[j]))
			scale = math.Max(scale, math.Abs(h*sum[j]))
		}
		if level >= 3 && diff <= math.Max(q.absTol, math.Sqrt(q.relTol)*scale/tsSafety) {
			break
		}
	}
	for j := range out {
		out[j] += h * sum[j]
	}
}
