package profiles

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// Models as engineers have them (profiles/formats.md, plant and
// controller): transfer functions, PID gains and a plant sampled at the
// loop's period, each turned into the state space the prediction uses.
// Polynomials are coefficient lists, highest power first.

// trimPoly drops leading zero coefficients.
func trimPoly(p []float64) []float64 {
	for len(p) > 1 && p[0] == 0 {
		p = p[1:]
	}
	return p
}

func polyMul(a, b []float64) []float64 {
	out := make([]float64, len(a)+len(b)-1)
	for i, x := range a {
		for j, y := range b {
			out[i+j] += x * y
		}
	}
	return out
}

// polyAdd adds polynomials aligned at their constant terms.
func polyAdd(a, b []float64) []float64 {
	if len(a) < len(b) {
		a, b = b, a
	}
	out := append([]float64(nil), a...)
	off := len(a) - len(b)
	for i, y := range b {
		out[off+i] += y
	}
	return out
}

func polyScale(a []float64, s float64) []float64 {
	out := make([]float64, len(a))
	for i, x := range a {
		out[i] = s * x
	}
	return out
}

// tfToSS realises num/den (proper: deg num ≤ deg den) in controllable
// canonical form: with den monic of degree n, num = d·den + r,
//
//	A = [[−a₁ … −aₙ], [1 0 …], …, [… 1 0]],  B = e₁,  C = r's coefficients,  D = d.
//
// A degree-0 den gives a static gain (A, B, C empty: nil).
func tfToSS(num, den []float64) (A, B, C *mat.Dense, D float64, err error) {
	num, den = trimPoly(num), trimPoly(den)
	if len(den) == 0 || den[0] == 0 {
		return nil, nil, nil, 0, fmt.Errorf("want a denominator that is not zero")
	}
	if len(num) > len(den) {
		return nil, nil, nil, 0, fmt.Errorf("improper: the numerator's degree %d is above the denominator's %d", len(num)-1, len(den)-1)
	}
	n := len(den) - 1
	lead := den[0]
	a := polyScale(den, 1/lead)
	b := make([]float64, n+1) // num padded to degree n
	copy(b[n+1-len(num):], polyScale(num, 1/lead))
	D = b[0]
	if n == 0 {
		return nil, nil, nil, D, nil
	}
	A = mat.NewDense(n, n, nil)
	B = mat.NewDense(n, 1, nil)
	C = mat.NewDense(1, n, nil)
	for j := 0; j < n; j++ {
		A.Set(0, j, -a[j+1])
		C.Set(0, j, b[j+1]-D*a[j+1])
	}
	for i := 1; i < n; i++ {
		A.Set(i, i-1, 1)
	}
	B.Set(0, 0, 1)
	return A, B, C, D, nil
}

// PID is a PID controller given as gains (key controller.pid): C(s) = kp
// + ki/s + kd s/(filter·s + 1), discretised by Method.
type PID struct {
	Kp, Ki, Kd, Filter float64
	Method             string // tustin, backward_euler, forward_euler, zoh
}

// PIDMethods are the discretisations a PID may name.
var PIDMethods = []string{"tustin", "backward_euler", "forward_euler", "zoh"}

// continuous is C(s) as num/den in s, with no common factor: the
// integrator only when ki ≠ 0, the filter only when kd ≠ 0.
func (p PID) continuous() (num, den []float64) {
	switch {
	case p.Kd == 0 && p.Ki == 0:
		return []float64{p.Kp}, []float64{1}
	case p.Kd == 0:
		return []float64{p.Kp, p.Ki}, []float64{1, 0}
	case p.Ki == 0:
		// kp + kd s/(T s + 1) = ((kp T + kd) s + kp)/(T s + 1)
		return []float64{p.Kp*p.Filter + p.Kd, p.Kp}, []float64{p.Filter, 1}
	}
	// ((kp T + kd) s² + (kp + ki T) s + ki) / (T s² + s)
	return []float64{p.Kp*p.Filter + p.Kd, p.Kp + p.Ki*p.Filter, p.Ki}, []float64{p.Filter, 1, 0}
}

// Discrete returns the discrete controller at period h: xc' = A xc +
// B e, u = C xc + D e (A, B, C nil for a static gain).
//
//	tustin:          s = (2/h)(z − 1)/(z + 1)
//	backward_euler:  s = (z − 1)/(h z)
//	forward_euler:   s = (z − 1)/h
//	zoh:             C(s) realised, then sampled with its input held over a period
func (p PID) Discrete(h float64) (A, B, C, D *mat.Dense, err error) {
	num, den := p.continuous()
	if p.Method == "zoh" {
		ac, bc, cc, dc, err := tfToSS(num, den)
		if err != nil {
			return nil, nil, nil, nil, fmt.Errorf("zoh needs a proper C(s): give a derivative filter > 0 (%v)", err)
		}
		if ac == nil {
			return nil, nil, nil, mat.NewDense(1, 1, []float64{dc}), nil
		}
		phi, gam := SampleHeld(ac, bc, h)
		return phi, gam, cc, mat.NewDense(1, 1, []float64{dc}), nil
	}
	var N, Dz []float64 // s = N(z)/Dz(z)
	switch p.Method {
	case "tustin":
		N, Dz = []float64{2 / h, -2 / h}, []float64{1, 1}
	case "backward_euler":
		N, Dz = []float64{1, -1}, []float64{h, 0}
	case "forward_euler":
		N, Dz = []float64{1, -1}, []float64{h}
	default:
		return nil, nil, nil, nil, fmt.Errorf("unknown method %q", p.Method)
	}
	zn, zd := substitute(num, den, N, Dz)
	ac, bc, cc, dc, err := tfToSS(zn, zd)
	if err != nil {
		return nil, nil, nil, nil, fmt.Errorf("%s gives a controller that is not causal (%v): give a derivative filter > 0 or another method", p.Method, err)
	}
	return ac, bc, cc, mat.NewDense(1, 1, []float64{dc}), nil
}

// substitute puts s = N(z)/D(z) into num(s)/den(s): with d the larger
// degree, both are multiplied by D(z)^d.
func substitute(num, den, N, D []float64) (zn, zd []float64) {
	d := max(len(num), len(den)) - 1
	at := func(p []float64) []float64 {
		out := []float64{0}
		deg := len(p) - 1
		for k, c := range p { // c multiplies s^(deg−k)
			pw := deg - k
			term := []float64{c}
			for range pw {
				term = polyMul(term, N)
			}
			for range d - pw {
				term = polyMul(term, D)
			}
			out = polyAdd(out, term)
		}
		return out
	}
	return trimSmall(at(num)), trimSmall(at(den))
}

// trimSmall drops leading coefficients that are zero to rounding against
// the polynomial's largest.
func trimSmall(p []float64) []float64 {
	big := 0.0
	for _, c := range p {
		big = math.Max(big, math.Abs(c))
	}
	for len(p) > 1 && math.Abs(p[0]) <= 1e-14*big {
		p = p[1:]
	}
	return p
}

// SampleHeld samples dx = (A x + B u) dt with u held over t: (e^{At},
// ∫₀ᵗ e^{As} ds B), one exponential of the block matrix [[A, B], [0, 0]] t
// (Van Loan 1978, §2; t = 0 gives (I, 0)). The prediction samples the
// plant with it (estimate.Discretize); the loader, a PID by zoh.
func SampleHeld(a, b *mat.Dense, t float64) (phi, gam *mat.Dense) {
	n, m := b.Dims()
	if t == 0 {
		phi = mat.NewDense(n, n, nil)
		for i := 0; i < n; i++ {
			phi.Set(i, i, 1)
		}
		return phi, mat.NewDense(n, m, nil)
	}
	h := t
	big := mat.NewDense(n+m, n+m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			big.Set(i, j, a.At(i, j)*h)
		}
		for j := 0; j < m; j++ {
			big.Set(i, n+j, b.At(i, j)*h)
		}
	}
	var e mat.Dense
	e.Exp(big)
	return mat.DenseCopyOf(e.Slice(0, n, 0, n)), mat.DenseCopyOf(e.Slice(0, n, n, n+m))
}

// logm is the principal matrix logarithm by inverse scaling and squaring
// (N. J. Higham, Functions of Matrices, SIAM 2008, §11.5, from memory):
// square roots by the Denman–Beavers iteration until ‖X − I‖ < 0.05,
// then log X = 2 atanh((X − I)(X + I)⁻¹) by its series, times 2^k. It
// fails when a square root does not converge or a matrix is singular:
// an eigenvalue on the closed negative real axis has no real principal
// logarithm.
func logm(a *mat.Dense) (*mat.Dense, error) {
	n, _ := a.Dims()
	x := mat.DenseCopyOf(a)
	eye := mat.NewDiagDense(n, nil)
	for i := 0; i < n; i++ {
		eye.SetDiag(i, 1)
	}
	k := 0
	for ; k < 60; k++ {
		var d mat.Dense
		d.Sub(x, eye)
		if mat.Norm(&d, 1) < 0.05 {
			break
		}
		y, z := mat.DenseCopyOf(x), mat.DenseCopyOf(eye)
		ok := false
		for it := 0; it < 100; it++ {
			var yi, zi mat.Dense
			if err := yi.Inverse(y); err != nil {
				return nil, err
			}
			if err := zi.Inverse(z); err != nil {
				return nil, err
			}
			var ny, nz mat.Dense
			ny.Add(y, &zi)
			ny.Scale(0.5, &ny)
			nz.Add(z, &yi)
			nz.Scale(0.5, &nz)
			var diff mat.Dense
			diff.Sub(&ny, y)
			y, z = &ny, &nz
			if mat.Norm(&diff, 1) <= 1e-15*mat.Norm(y, 1) {
				ok = true
				break
			}
		}
		if !ok {
			return nil, fmt.Errorf("square root did not converge")
		}
		x = y
	}
	var num, den, t mat.Dense
	num.Sub(x, eye)
	den.Add(x, eye)
	var deni mat.Dense
	if err := deni.Inverse(&den); err != nil {
		return nil, err
	}
	t.Mul(&num, &deni)
	var t2 mat.Dense
	t2.Mul(&t, &t)
	sum := mat.DenseCopyOf(&t)
	pow := mat.DenseCopyOf(&t)
	for j := 3; j < 61; j += 2 {
		var np mat.Dense
		np.Mul(pow, &t2)
		pow = &np
		var term mat.Dense
		term.Scale(1/float64(j), pow)
		sum.Add(sum, &term)
		if mat.Norm(&term, 1) < 1e-18 {
			break
		}
	}
	sum.Scale(2*math.Pow(2, float64(k)), sum)
	return sum, nil
}

// continuousFromDiscrete returns A, B with e^{Ah} = Φ and ∫₀ʰ e^{As} ds B
// = Γ: the principal logarithm of [[Φ, Γ], [0, I]] over h.
func continuousFromDiscrete(phi, gam *mat.Dense, h float64) (a, b *mat.Dense, err error) {
	n, m := gam.Dims()
	big := mat.NewDense(n+m, n+m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			big.Set(i, j, phi.At(i, j))
		}
		for j := 0; j < m; j++ {
			big.Set(i, n+j, gam.At(i, j))
		}
	}
	for i := 0; i < m; i++ {
		big.Set(n+i, n+i, 1)
	}
	var eig mat.Eigen
	if eig.Factorize(phi, mat.EigenNone) {
		for _, v := range eig.Values(nil) {
			if imag(v) == 0 && real(v) <= 0 {
				return nil, nil, fmt.Errorf("Φ has the eigenvalue %g on the closed negative real axis: no continuous plant samples to it (a sampled plant's Φ = e^{Ah} has none)", real(v))
			}
		}
	}
	l, err := logm(big)
	if err != nil {
		return nil, nil, err
	}
	a = mat.NewDense(n, n, nil)
	b = mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			a.Set(i, j, l.At(i, j)/h)
		}
		for j := 0; j < m; j++ {
			b.Set(i, j, l.At(i, n+j)/h)
		}
	}
	return a, b, nil
}

// noiseFromDiscrete returns the intensity W whose sampling over h is
// W_d = ∫₀ʰ e^{As} W e^{Aᵀs} ds: the map is linear in W, so its matrix
// on the symmetric basis is built column by column (Van Loan's integral
// for each basis matrix) and solved.
func noiseFromDiscrete(a, wd *mat.Dense, h float64) (*mat.Dense, error) {
	n, _ := a.Dims()
	idx := [][2]int{}
	for i := 0; i < n; i++ {
		for j := i; j < n; j++ {
			idx = append(idx, [2]int{i, j})
		}
	}
	k := len(idx)
	M := mat.NewDense(k, k, nil)
	for c, ij := range idx {
		e := mat.NewDense(n, n, nil)
		e.Set(ij[0], ij[1], 1)
		e.Set(ij[1], ij[0], 1)
		col := SampledNoise(a, e, h)
		for r, rs := range idx {
			M.Set(r, c, col.At(rs[0], rs[1]))
		}
	}
	rhs := mat.NewVecDense(k, nil)
	for r, rs := range idx {
		rhs.SetVec(r, wd.At(rs[0], rs[1]))
	}
	var x mat.VecDense
	if err := x.SolveVec(M, rhs); err != nil {
		return nil, err
	}
	w := mat.NewDense(n, n, nil)
	for c, ij := range idx {
		w.Set(ij[0], ij[1], x.AtVec(c))
		w.Set(ij[1], ij[0], x.AtVec(c))
	}
	return w, nil
}

// SampledNoise is ∫₀ʰ e^{As} W e^{Aᵀs} ds, the covariance a period adds
// to the state of dx = A x dt + dw with E[dw dwᵀ] = W dt (C. F. Van Loan,
// "Computing integrals involving the matrix exponential", IEEE TAC
// 23(3), 1978, Theorem 1): exp([[−A, W], [0, Aᵀ]] h) = [[·, G], [0, Φᵀ]],
// the integral Φ G. The loader needs it for a plant given at the period;
// the prediction's sampling (estimate.Discretize) uses it too.
func SampledNoise(a, w *mat.Dense, h float64) *mat.Dense {
	n, _ := a.Dims()
	big := mat.NewDense(2*n, 2*n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			big.Set(i, j, -a.At(i, j)*h)
			big.Set(i, n+j, w.At(i, j)*h)
			big.Set(n+i, n+j, a.At(j, i)*h)
		}
	}
	var e, out mat.Dense
	e.Exp(big)
	phiT := e.Slice(n, 2*n, n, 2*n)
	out.Mul(phiT.T(), e.Slice(0, n, n, 2*n))
	return &out
}
