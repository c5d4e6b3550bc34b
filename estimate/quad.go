package estimate

import (
	"container/heap"
	"math"
	"sort"
)

// Nodes and weights of the 15-point Kronrod rule and its embedded 7-point
// Gauss rule on [−1, 1], as tabulated in QUADPACK's qk15 (R. Piessens,
// E. de Doncker-Kapenga, C. Überhuber, D. Kahaner, QUADPACK, Springer
// 1983). Written from that table; quad_test.go checks that the pair
// integrates polynomials to degree 22 (Kronrod) and 13 (Gauss) exactly.
var (
	kronrodX = [8]float64{
		0.991455371120812639206854697526329,
		0.949107912342758524526189684047851,
		0.864864423359769072789712788640926,
		0.741531185599394439863864773280788,
		0.586087235467691130294144845693013,
		0.405845151377397166906606412076961,
		0.207784955007898467600689403773245,
		0,
	}
	kronrodW = [8]float64{
		0.022935322010529224963732008058970,
		0.063092092629978553290700663189204,
		0.104790010322250183839876322541518,
		0.140653259715525918745189590510238,
		0.169004726639267902826583426598550,
		0.190350578064785409913256402421014,
		0.204432940075298892414161999234649,
		0.209482141084727828012999174891714,
	}
	// gaussW[k] is the Gauss weight of node kronrodX[2k+1].
	gaussW = [4]float64{
		0.129484966168869693270611432679082,
		0.279705391489276667901467771423780,
		0.381830050505118944950369775488975,
		0.417959183673469387755102040816327,
	}
)

// vecFunc fills out (length dim) with the integrand's values at x.
type vecFunc func(x float64, out []float64)

// integrator integrates vector-valued functions adaptively by global
// bisection of the subinterval with the largest error (the strategy of
// QUADPACK's qag with the 7–15 Gauss–Kronrod pair, Piessens et al. 1983,
// §2.2), error measured in the max norm over components. It stops when
// the estimated error is below max(absTol, relTol·|I|∞) or after
// maxIntervals subintervals.
type integrator struct {
	dim          int
	absTol       float64
	relTol       float64
	maxIntervals int
	vals         []float64 // scratch: the integrand at the 15 nodes
}

func newIntegrator(dim int) *integrator {
	return &integrator{dim: dim, absTol: 1e-300, relTol: 1e-12, maxIntervals: 500}
}

type segment struct {
	a, b  float64
	value []float64
	err   float64
}

type segHeap []*segment

func (h segHeap) Len() int           { return len(h) }
func (h segHeap) Less(i, j int) bool { return h[i].err > h[j].err }
func (h segHeap) Swap(i, j int)      { h[i], h[j] = h[j], h[i] }
func (h *segHeap) Push(x any)        { *h = append(*h, x.(*segment)) }
func (h *segHeap) Pop() any {
	old := *h
	s := old[len(old)-1]
	*h = old[:len(old)-1]
	return s
}

// rule applies the 15-point Kronrod rule on [a, b] and returns the value
// and its error estimate, QUADPACK's for qk15 taken per component and
// maximised: with resasc = ∫|f − K/(b−a)| by the Kronrod rule,
// err = resasc·min(1, (200|K − G|/resasc)^1.5), and not below 50·ε·∫|f|
// (Piessens et al. 1983, §2.2.2 and routine qk15).
func (q *integrator) rule(f vecFunc, a, b float64) *segment {
	c, r := (a+b)/2, (b-a)/2
	if len(q.vals) < 15*q.dim {
		q.vals = make([]float64, 15*q.dim)
	}
	// vals[k·dim + d]: node k = 0…6 left, 7…13 right (by kronrodX index), 14 centre.
	for k := 0; k < 7; k++ {
		f(c-r*kronrodX[k], q.vals[k*q.dim:(k+1)*q.dim])
		f(c+r*kronrodX[k], q.vals[(7+k)*q.dim:(8+k)*q.dim])
	}
	f(c, q.vals[14*q.dim:15*q.dim])
	val := make([]float64, q.dim)
	e := 0.0
	for d := 0; d < q.dim; d++ {
		fc := q.vals[14*q.dim+d]
		K, G, abs := kronrodW[7]*fc, gaussW[3]*fc, kronrodW[7]*math.Abs(fc)
		for k := 0; k < 7; k++ {
			fl, fr := q.vals[k*q.dim+d], q.vals[(7+k)*q.dim+d]
			K += kronrodW[k] * (fl + fr)
			abs += kronrodW[k] * (math.Abs(fl) + math.Abs(fr))
			if k%2 == 1 {
				G += gaussW[k/2] * (fl + fr)
			}
		}
		mean := K / 2
		asc := kronrodW[7] * math.Abs(fc-mean)
		for k := 0; k < 7; k++ {
			asc += kronrodW[k] * (math.Abs(q.vals[k*q.dim+d]-mean) + math.Abs(q.vals[(7+k)*q.dim+d]-mean))
		}
		val[d] = K * r
		err := math.Abs((K - G) * r)
		asc *= math.Abs(r)
		if asc != 0 && err != 0 {
			x := math.Min(1, 200*err/asc)
			err = asc * x * math.Sqrt(x) // (·)^1.5
		}
		err = math.Max(err, 50*epsilon*abs*math.Abs(r))
		e = math.Max(e, err)
	}
	return &segment{a: a, b: b, value: val, err: e}
}

const epsilon = 0x1p-52

// integrate returns ∫ f over [a, b], splitting first at the given break
// points (those inside (a, b); order does not matter), where the
// integrand may jump or kink. It adds into out.
func (q *integrator) integrate(f vecFunc, a, b float64, breaks []float64, out []float64) {
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
	h := segHeap{}
	total := make([]float64, q.dim)
	totalErr := 0.0
	for i := 0; i+1 < len(pts); i++ {
		s := q.rule(f, pts[i], pts[i+1])
		h = append(h, s)
		totalErr += s.err
		for d := range total {
			total[d] += s.value[d]
		}
	}
	heap.Init(&h)
	for len(h) < q.maxIntervals {
		scale := 0.0
		for _, v := range total {
			scale = math.Max(scale, math.Abs(v))
		}
		if totalErr <= math.Max(q.absTol, q.relTol*scale) {
			break
		}
		s := heap.Pop(&h).(*segment)
		m := (s.a + s.b) / 2
		if !(m > s.a && m < s.b) {
			heap.Push(&h, s) // cannot split further
			break
		}
		l, r := q.rule(f, s.a, m), q.rule(f, m, s.b)
		totalErr += l.err + r.err - s.err
		for d := range total {
			total[d] += l.value[d] + r.value[d] - s.value[d]
		}
		heap.Push(&h, l)
		heap.Push(&h, r)
	}
	// Sum afresh from the segments, to shed the rounding of the running
	// updates.
	for d := range total {
		total[d] = 0
	}
	for _, s := range h {
		for d := range total {
			total[d] += s.value[d]
		}
	}
	for d := range out {
		out[d] += total[d]
	}
}
