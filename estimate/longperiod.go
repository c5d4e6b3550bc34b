package estimate

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// One period of the long-delay model (estimate/model.md §13): the commands
// that may arrive in it, each with the CDF of its arrival offset within
// the period, and the moments of the random input matrices M_e that the
// arrivals make.

// heldSlot is the slot of the command in force at the period's start: it
// is older than every command that may still arrive.
const heldSlot = -1

// slotLaw is one command that may arrive in the period: the command of
// the sample taken d periods before the period began (d = 0: this
// period's own sample), with G(s) = P(arrived by offset s) inside the
// period and gh = G(h−), the chance it arrives in the period at all.
type slotLaw struct {
	d     int
	kappa float64 // P(it is on its way and will not be lost | not arrived yet) × (normalisation)
	f0    float64 // F_τ(d·h−): the CDF where the period begins
	den   float64
	gh    float64
	vals  []float64 // G at the grid's nodes
}

// periodGrid is the quadrature over one period [0, h]: sub-intervals split
// at every feature of every slot's CDF and where the kernel needs it,
// intPoints Chebyshev points each, with cumulative integration.
type periodGrid struct {
	h      float64
	lo, hi []float64   // sub-intervals
	s      []float64   // nodes, sub-interval by sub-interval
	w      []float64   // weights of ∫₀ʰ
	kern   [][]float64 // g(s) = e^{A(h−s)} B at each node, as vec (row-major n×m)
	cum    [][]float64 // chebCumulative matrix
	cw     []float64
	cumM   *mat.Dense // cum as a matrix, for cumulate's products
	// windows caches, per slot d, the total law where slot d's window
	// begins and ends and at every node: they do not depend on the losses,
	// so a rebuild at another extra loss reuses them (slot).
	windows map[int]*slotWindow
}

// slotWindow is the total law seen from slot d's window [d h, (d+1) h).
type slotWindow struct {
	f0, end float64   // F(d h−), F(((d+1) h ∧ top)−)
	at      []float64 // F at d h + s for every node s; −1 beyond top
}

const intPoints = 32

// newPeriodGrid builds the grid on [0, h] from the total law's pieces in
// the windows of slots 0 … na−1 and the plant (kernel resolution:
// ‖A‖·length ≤ 1/2 on every sub-interval).
func newPeriodGrid(tl *totalLaw, na int, a, b *mat.Dense, h float64) *periodGrid {
	set := map[float64]bool{0: true, h: true}
	for _, p := range tl.pieces {
		for d := 0; d < na; d++ {
			base := float64(d) * h
			for _, x := range [2]float64{p.lo - base, p.hi - base} {
				if x > 0 && x < h {
					set[x] = true
				}
			}
		}
	}
	var pts []float64
	for x := range set {
		pts = append(pts, x)
	}
	sort.Float64s(pts)
	norm := mat.Norm(a, math.Inf(1))
	pg := &periodGrid{h: h}
	pg.cum, pg.cw = chebCumulative(intPoints)
	pg.cumM = mat.NewDense(intPoints, intPoints, nil)
	for r, row := range pg.cum {
		pg.cumM.SetRow(r, row)
	}
	t := chebNodes(intPoints)
	n, m := b.Dims()
	for i := 0; i+1 < len(pts); i++ {
		lo, hi := pts[i], pts[i+1]
		if !(hi-lo > 1e-15*h) {
			continue
		}
		parts := 1
		if norm*(hi-lo) > 0.5 {
			parts = int(math.Ceil(norm * (hi - lo) / 0.5))
		}
		for k := 0; k < parts; k++ {
			l := lo + (hi-lo)*float64(k)/float64(parts)
			r := lo + (hi-lo)*float64(k+1)/float64(parts)
			pg.lo = append(pg.lo, l)
			pg.hi = append(pg.hi, r)
			for j, tj := range t {
				s := l + (tj+1)*(r-l)/2
				pg.s = append(pg.s, s)
				pg.w = append(pg.w, pg.cw[j]*(r-l)/2)
				var e, gm mat.Dense
				var as mat.Dense
				as.Scale(h-s, a)
				e.Exp(&as)
				gm.Mul(&e, b)
				v := make([]float64, n*m)
				for r0 := 0; r0 < n; r0++ {
					for c0 := 0; c0 < m; c0++ {
						v[r0*m+c0] = gm.At(r0, c0)
					}
				}
				pg.kern = append(pg.kern, v)
			}
		}
	}
	return pg
}

// slot evaluates the law of the command of slot d on the grid: kappa is
// the probability that a command not arrived by the period's start is on
// its way and will not be lost, before conditioning (see longChain).
func (pg *periodGrid) slot(tl *totalLaw, d int, kappa float64) slotLaw {
	win := pg.window(tl, d)
	sl := slotLaw{d: d, kappa: kappa, f0: win.f0}
	sl.den = 1 - kappa*sl.f0
	sl.vals = make([]float64, len(pg.s))
	if !(sl.den > 0) || kappa == 0 {
		return sl
	}
	sl.gh = clamp01(kappa * (win.end - sl.f0) / sl.den)
	for k, f := range win.at {
		if f < 0 {
			sl.vals[k] = sl.gh
			continue
		}
		sl.vals[k] = clamp01(math.Min(sl.gh, kappa*(f-sl.f0)/sl.den))
	}
	return sl
}

// window returns (and caches) the total law over slot d's window.
func (pg *periodGrid) window(tl *totalLaw, d int) *slotWindow {
	if w, ok := pg.windows[d]; ok {
		return w
	}
	h := pg.h
	w := &slotWindow{at: make([]float64, len(pg.s))}
	if d > 0 {
		w.f0 = tl.cdf(float64(d)*h, true)
	}
	w.end = tl.cdf(math.Min(float64(d+1)*h, tl.top), true)
	base := float64(d) * h
	for k, s := range pg.s {
		if x := base + s; x < tl.top {
			w.at[k] = tl.at(x)
		} else {
			w.at[k] = -1
		}
	}
	if pg.windows == nil {
		pg.windows = map[int]*slotWindow{}
	}
	pg.windows[d] = w
	return w
}

func clamp01(x float64) float64 { return math.Max(0, math.Min(1, x)) }

// outcome is one way a period can end: the newest command that arrived
// in it (heldSlot: none), with its probability and the first and second
// moments of the stacked input matrices on that event,
//
//	m1 = E[μ 1{ω}],  m2 = E[μ μᵀ 1{ω}],  μ = (vec M_e)_e over the slots,
//
// where M_e = ∫₀ʰ e^{A(h−s)} B 1{D(s) = e} ds and D(s) is the newest
// command arrived by offset s (estimate/model.md §13).
type outcome struct {
	newest int // slot index into the slot list; 0 is the held slot
	p      float64
	m1     []float64
	m2     *mat.SymDense
}

// periodOutcomes computes every outcome of a period in which the given
// slots (commands, newest first after the held one: slots[0] is the held
// command, slots[1:] in increasing d) may arrive. nm is n·m.
func (pg *periodGrid) periodOutcomes(slots []slotLaw, nm int, gamma []float64) ([]outcome, error) {
	L := len(slots)
	K := L * nm
	N := len(pg.s)
	// age order: the held slot is the oldest; among the others a smaller
	// d is newer. newer(e, x) reports whether slot e is newer than x.
	age := func(i int) int {
		if i == 0 {
			return math.MaxInt
		}
		return slots[i].d
	}
	newer := func(e, x int) bool { return age(e) < age(x) }
	G := func(e, k int) float64 {
		if e == 0 {
			return 1
		}
		return slots[e].vals[k]
	}
	gh := func(e int) float64 {
		if e == 0 {
			return 1
		}
		return slots[e].gh
	}
	As := make([]float64, N)
	Bt := make([]float64, N)
	c1 := make([][]float64, N) // cumulative ∫₀^t g As
	c2 := make([][]float64, N) // cumulative ∫₀^t g As G_m
	for k := range c1 {
		c1[k] = make([]float64, nm)
		c2[k] = make([]float64, nm)
	}
	// condition sets As, Bt and the constant factor to the probability
	// that D(s) = a, D(t) = b and D(h) = d*, for s < t, as a product over
	// the slots of one factor each (the interval in which each must
	// arrive): As the factors in s, Bt those in t, the slot b ≠ a —
	// arrived in (s, t] — left out for the caller, who expands G_b(t) −
	// G_b(s) (with b = a, slot a is judged at s alone). With b < 0 there
	// is no condition at t: every factor goes into As.
	condition := func(a, b, dstar int) float64 {
		for k := range As {
			As[k], Bt[k] = 1, 1
		}
		bt := Bt
		if b < 0 {
			bt = As
		}
		mul := func(dst []float64, f func(k int) float64) {
			for k := range dst {
				dst[k] *= f(k)
			}
		}
		cst := 1.0
		for e := 1; e < L; e++ {
			switch {
			case e == a:
				mul(As, func(k int) float64 { return G(e, k) })
			case e == b:
				// arrived in (s, t]: G(t) − G(s), expanded by the caller
			case e == dstar:
				mul(bt, func(k int) float64 { return gh(e) - G(e, k) })
			case newer(e, dstar):
				cst *= 1 - gh(e)
			case b >= 0 && newer(e, b):
				mul(bt, func(k int) float64 { return 1 - G(e, k) })
			case newer(e, a):
				mul(As, func(k int) float64 { return 1 - G(e, k) })
			}
		}
		return cst
	}
	var outs []outcome
	total := 0.0
	for dstar := 0; dstar < L; dstar++ {
		p := gh(dstar)
		for e := 1; e < L; e++ {
			if newer(e, dstar) {
				p *= 1 - gh(e)
			}
		}
		total += p
		if p == 0 {
			continue
		}
		oc := outcome{newest: dstar, p: p, m1: make([]float64, K), m2: mat.NewSymDense(K, nil)}
		// First moments: conditions (s: D = a), (h: D = d*).
		for a := 0; a < L; a++ {
			if newer(a, dstar) {
				continue
			}
			cst := condition(a, -1, dstar)
			for k := 0; k < N; k++ {
				wk := pg.w[k] * As[k] * cst
				for i, g := range pg.kern[k] {
					oc.m1[a*nm+i] += wk * g
				}
			}
		}
		// Second moments over the triangle s < t: conditions (s: D = a),
		// (t: D = b), (h: D = d*), a no newer than b, b no newer than d*.
		for a := 0; a < L; a++ {
			if newer(a, dstar) {
				continue
			}
			for b := 0; b < L; b++ {
				if newer(b, dstar) || newer(a, b) {
					continue
				}
				mixed := -1
				if a != b {
					mixed = b
				}
				cst := condition(a, b, dstar)
				if cst == 0 {
					continue
				}
				pg.cumulate(As, nil, c1, nm)
				if mixed >= 0 {
					gm := slots[mixed].vals
					pg.cumulate(As, gm, c2, nm)
				}
				for k := 0; k < N; k++ {
					wk := pg.w[k] * Bt[k] * cst
					if wk == 0 {
						continue
					}
					gt := pg.kern[k]
					for i := 0; i < nm; i++ {
						in := c1[k][i]
						if mixed >= 0 {
							in = G(mixed, k)*c1[k][i] - c2[k][i]
						}
						if in == 0 {
							continue
						}
						for j := 0; j < nm; j++ {
							v := wk * in * gt[j]
							r, c := a*nm+i, b*nm+j
							if r == c {
								v *= 2 // both triangles of the diagonal entry
							}
							oc.m2.SetSym(r, c, oc.m2.At(r, c)+v)
						}
					}
				}
			}
		}
		// For a ≠ b the newer command b can only be in force after a, so
		// E[M_a,i M_b,j 1{ω}] is the s < t integral alone, stored
		// symmetrically. For a = b the s > t triangle of entry (i, j) is
		// the s < t triangle of (j, i): the symmetric storage adds the two,
		// and a diagonal entry counts its one triangle twice.
		if err := checkOutcome(&oc, L, nm, gamma); err != nil {
			return nil, err
		}
		outs = append(outs, oc)
	}
	if math.Abs(total-1) > 1e-9 {
		return nil, fmt.Errorf("the period's outcomes carry probability %.12g, want 1", total)
	}
	return outs, nil
}

// cumulate sets out[k] = ∫₀^{s_k} g(s) f(s) (m(s)) ds at every node, m nil
// meaning 1: within each sub-interval the cumulative integration matrix
// applied to the integrand's values (one matrix product for all
// sub-intervals and entries), plus the integrals of the sub-intervals
// before it.
func (pg *periodGrid) cumulate(f, m []float64, out [][]float64, nm int) {
	nsub := len(pg.lo)
	vals := mat.NewDense(intPoints, nsub*nm, nil)
	raw := vals.RawMatrix()
	for iv := 0; iv < nsub; iv++ {
		off := iv * intPoints
		for j := 0; j < intPoints; j++ {
			w := f[off+j]
			if m != nil {
				w *= m[off+j]
			}
			row := raw.Data[j*raw.Stride+iv*nm:]
			for i, g := range pg.kern[off+j] {
				row[i] = w * g
			}
		}
	}
	var local mat.Dense
	local.Mul(pg.cumM, vals)
	lr := local.RawMatrix()
	base := make([]float64, nm)
	for iv := 0; iv < nsub; iv++ {
		half := (pg.hi[iv] - pg.lo[iv]) / 2
		off := iv * intPoints
		for r := 0; r < intPoints; r++ {
			row := lr.Data[r*lr.Stride+iv*nm:]
			for i := 0; i < nm; i++ {
				out[off+r][i] = base[i] + half*row[i]
			}
		}
		for i := 0; i < nm; i++ {
			s := 0.0
			for j := 0; j < intPoints; j++ {
				s += pg.cw[j] * raw.Data[j*raw.Stride+iv*nm+i]
			}
			base[i] += half * s
		}
	}
}

// checkOutcome verifies what every outcome must satisfy whatever the laws
// (estimate/model.md §13): the M_e of one period add up to Γ, so Σ_e m1_e
// = Γ P(ω) and Σ_{e,f} m2_{ef} = Γ Γᵀ P(ω) entry by entry. A quadrature
// that misses either is refused rather than answered wrongly.
func checkOutcome(oc *outcome, L, nm int, gamma []float64) error {
	scale := 0.0
	for _, g := range gamma {
		scale = math.Max(scale, math.Abs(g))
	}
	tol := 1e-8 * math.Max(scale, 1e-300)
	for i := 0; i < nm; i++ {
		s := 0.0
		for e := 0; e < L; e++ {
			s += oc.m1[e*nm+i]
		}
		if math.Abs(s-gamma[i]*oc.p) > tol*math.Max(oc.p, 1e-6) {
			return fmt.Errorf("the period's input integrals miss Γ by %.3g (entry %d): the delay laws are not resolved", s-gamma[i]*oc.p, i)
		}
		for j := 0; j < nm; j++ {
			s := 0.0
			for e := 0; e < L; e++ {
				for f := 0; f < L; f++ {
					s += oc.m2.At(e*nm+i, f*nm+j)
				}
			}
			if math.Abs(s-gamma[i]*gamma[j]*oc.p) > tol*scale*math.Max(oc.p, 1e-6) {
				return fmt.Errorf("the period's second input moments miss ΓΓᵀ by %.3g (entries %d, %d): the delay laws are not resolved", s-gamma[i]*gamma[j]*oc.p, i, j)
			}
		}
	}
	return nil
}
