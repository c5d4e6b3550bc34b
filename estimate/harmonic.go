package estimate

import (
	"errors"
	"fmt"
	"math"
	"math/cmplx"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
)

// The periodic steady state of the loop under a sinusoidal reference
// (estimate/model.md §15). With r_k = r₀ + Re(R e^{jνk}), ν = 2π f h, the
// first moments obey the LTI recursion q' = 𝒜 q + b(r_k), b linear in r,
// so in steady state q_k = q⁰ + Re(Q e^{jνk}) with
//
//	(I − 𝒜) q⁰ = b(r₀),    (e^{jν} I − 𝒜) Q = b(R).
//
// The second moments obey X' = ℒ X + c(q_k, r_k) with c of degree two in
// (q, r) and a constant (the noise), so they are driven at 0, ν and 2ν:
// X_k = X⁰ + Re(X¹ e^{jνk}) + Re(X² e^{2jνk}), each harmonic the solution
// of (e^{jmν} I − ℒ) Xᵐ = Cᵐ with Cᵐ the harmonic of c (written out in
// harmonicForcing). Mean-square stability puts the spectrum of ℒ (and of
// 𝒜) inside the unit disc, so every system has one solution.

// Harmonic is the loop's periodic steady state at one frequency of the
// reference r_k = setpoint + Re(R e^{jθ_k}), θ_k the reference's phase at
// sample k (profiles.Reference.Segment). Complex amplitudes are in the
// same convention: E[y_k] = OutputOffset + Re(Output e^{jθ_k}).
type Harmonic struct {
	Frequency float64 // Hz
	// Reference, Output and Error are the complex amplitudes R, Y = C·E[x]
	// and R − Y, one per output.
	Reference, Output, Error []complex128
	// OutputOffset is the constant part of E[y]; ErrorOffset that of E[e].
	OutputOffset, ErrorOffset []float64
	// Variance is Var(e_i) averaged over the phase θ, per output;
	// VarianceFirst and VarianceSecond its harmonics at θ and 2θ:
	// Var(e_i)(θ) = Variance_i + Re(VarianceFirst_i e^{jθ}) +
	// Re(VarianceSecond_i e^{2jθ}).
	Variance                      []float64
	VarianceFirst, VarianceSecond []complex128
	// Spread is Σ_i Variance_i, the phase-averaged E[|e − E e|²];
	// SpreadPeak its largest value over the phase, at PeakPhase
	// (radians).
	Spread, SpreadPeak, PeakPhase float64
	// SecondMoment is E[eᵀe] averaged over the phase:
	// |ErrorOffset|² + Σ|Error_i|²/2 + Spread.
	SecondMoment float64
	// Nominal is the same loop without loss or delay (every sample and
	// command delivered at once): the classical closed-loop response.
	Nominal NominalResponse
}

// NominalResponse is the loss-free, delay-free loop's response: the
// discrete closed loop of the sampled plant and the controller.
type NominalResponse struct {
	// Stable is false when that loop is unstable; the other fields are
	// then zero.
	Stable bool
	// Output is Y = T(e^{jν}) R, T the closed-loop transfer matrix from r
	// to y; Error R − Y.
	Output, Error []complex128
	// Variance is Var(e_i) per output, from the noise alone (the loop is
	// linear: the reference does not change it); Spread their sum.
	Variance []float64
	Spread   float64
}

// Gain is |out_i / ref_i| and Phase its argument in degrees, NaN where
// the reference's amplitude is zero.
func Gain(out, ref complex128) (gain, phaseDeg float64) {
	if ref == 0 {
		return math.NaN(), math.NaN()
	}
	q := out / ref
	return cmplx.Abs(q), cmplx.Phase(q) * 180 / math.Pi
}

// flow is one term of the moment recursions: chain state from passes to
// state to with probability p, through the weighted modes.
type flow struct {
	from, to int
	p        float64
	modes    []weighted
}

// flows lists the terms of the recursions of the one-period model (every
// pair of joint states) or of the long chain (each group, each next
// network state).
func (md *Model) flows() []flow {
	var out []flow
	if lc := md.long; lc != nil {
		for i, gs := range lc.groups {
			th := i % lc.nTheta
			for gi := range gs {
				for th2 := 0; th2 < lc.nTheta; th2++ {
					if pij := lc.theta.At(th, th2); pij != 0 {
						out = append(out, flow{i, gs[gi].to*lc.nTheta + th2, pij, gs[gi].modes})
					}
				}
			}
		}
		return out
	}
	for i := range md.States {
		ms := md.modes(i)
		for j := range md.States {
			if pij := md.P.At(i, j); pij != 0 {
				out = append(out, flow{i, j, pij, ms})
			}
		}
	}
	return out
}

// ErrNoReferenceAmplitude: a frequency response needs a reference that
// moves.
var ErrNoReferenceAmplitude = errors.New("reference: want at least one amplitude > 0")

// FrequencyResponse returns the periodic steady state at each frequency
// (Hz, in [0, 1/(2h))) for the sinusoid of ref (its amplitudes and
// phases; its kind and frequencies are not used) about the loop's
// setpoint. It returns ErrNotStable when the loop is not mean-square
// stable. At frequency 0 the reference is the constant setpoint +
// Re(R): the moments are Steady's for that setpoint.
func (md *Model) FrequencyResponse(ref profiles.Reference, freqs []float64) ([]Harmonic, error) {
	return md.FrequencyResponseProgress(ref, freqs, nil)
}

// FrequencyResponseProgress is FrequencyResponse calling progress (when
// set) after each frequency: a large loop's second-moment systems are
// solved twice per frequency, seconds each.
func (md *Model) FrequencyResponseProgress(ref profiles.Reference, freqs []float64, progress func(done, total int)) ([]Harmonic, error) {
	_, _, p, _ := md.Loop.Dims()
	if len(ref.Amplitude) != p || len(ref.Phase) != p {
		return nil, fmt.Errorf("reference: want %d amplitudes and phases, got %d and %d", p, len(ref.Amplitude), len(ref.Phase))
	}
	R := make([]complex128, p)
	rr, ri := make([]float64, p), make([]float64, p)
	moving := false
	for i := range R {
		R[i] = ref.Phasor(i)
		rr[i], ri[i] = real(R[i]), imag(R[i])
		moving = moving || R[i] != 0
	}
	if !moving {
		return nil, ErrNoReferenceAmplitude
	}
	nyq := 1 / (2 * md.Loop.Period)
	for _, f := range freqs {
		if !(f >= 0 && f < nyq) {
			return nil, fmt.Errorf("frequency %g Hz: want a frequency in [0, %g) Hz (below the Nyquist frequency 1/(2h))", f, nyq)
		}
	}
	if !md.MeanSquareStable() {
		return nil, ErrNotStable
	}
	hs, err := md.newHarmonicSolver(rr, ri)
	if err != nil {
		return nil, err
	}
	out := make([]Harmonic, 0, len(freqs))
	for _, f := range freqs {
		h, err := hs.at(f, R)
		if err != nil {
			return nil, fmt.Errorf("frequency %g Hz: %w", f, err)
		}
		out = append(out, h)
		if progress != nil {
			progress(len(out), len(freqs))
		}
	}
	return out, nil
}

// harmonicSolver holds what every frequency shares.
type harmonicSolver struct {
	md             *Model
	flows          [3][]flow // for r = setpoint, Re R, Im R
	a1, l2         *mat.Dense
	lu1, lu2       mat.LU
	b1             [3][]float64
	q0             []float64 // stacked q⁰
	pi             []float64
	nStates, nz, d int
}

func (md *Model) newHarmonicSolver(rr, ri []float64) (*harmonicSolver, error) {
	hs := &harmonicSolver{md: md, nStates: md.nStates(), nz: md.lm.nz, d: md.symDim(), pi: md.Pi}
	hs.flows[0] = md.flows()
	for k, r := range [][]float64{rr, ri} {
		l := *md.Loop
		l.Setpoint = r
		aux, err := Build(&l, md.opts)
		if err != nil {
			return nil, fmt.Errorf("the reference's model: %w", err)
		}
		hs.flows[k+1] = aux.flows()
		if len(hs.flows[k+1]) != len(hs.flows[0]) {
			return nil, fmt.Errorf("the reference's model has %d terms, the loop's %d", len(hs.flows[k+1]), len(hs.flows[0]))
		}
		for i, fl := range hs.flows[k+1] {
			if f0 := hs.flows[0][i]; fl.from != f0.from || fl.to != f0.to || len(fl.modes) != len(f0.modes) {
				return nil, fmt.Errorf("the reference's model differs from the loop's at term %d", i)
			}
		}
	}
	hs.a1 = md.FirstMomentOperator()
	hs.l2 = md.SecondMomentOperator()
	hs.lu1.Factorize(identityMinus(hs.a1))
	hs.lu2.Factorize(identityMinus(hs.l2))
	for k := range hs.b1 {
		hs.b1[k] = hs.firstInput(hs.flows[k])
	}
	var q mat.VecDense
	if err := hs.lu1.SolveVecTo(&q, false, mat.NewVecDense(len(hs.b1[0]), hs.b1[0])); err != nil {
		return nil, fmt.Errorf("first moments: %w", err)
	}
	hs.q0 = q.RawVector().Data
	return hs, nil
}

// firstInput is b(r) = Σ_flows p π_from Σ_modes w g, stacked by state.
func (hs *harmonicSolver) firstInput(fl []flow) []float64 {
	nz := hs.nz
	b := make([]float64, hs.nStates*nz)
	for _, f := range fl {
		for _, wm := range f.modes {
			c := f.p * hs.pi[f.from] * wm.w
			if c == 0 {
				continue
			}
			for a := 0; a < nz; a++ {
				b[f.to*nz+a] += c * wm.G.AtVec(a)
			}
		}
	}
	return b
}

// solveShifted solves (e^{jν} I − A) (xr + j xi) = br + j bi as the real
// system [[cI − A, −sI], [sI, cI − A]] [xr; xi] = [br; bi].
func solveShifted(A *mat.Dense, nu float64, br, bi []float64) (xr, xi []float64, err error) {
	n, _ := A.Dims()
	c, s := math.Cos(nu), math.Sin(nu)
	M := mat.NewDense(2*n, 2*n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			v := -A.At(i, j)
			M.Set(i, j, v)
			M.Set(n+i, n+j, v)
		}
		M.Set(i, i, M.At(i, i)+c)
		M.Set(n+i, n+i, M.At(n+i, n+i)+c)
		M.Set(i, n+i, -s)
		M.Set(n+i, i, s)
	}
	rhs := mat.NewVecDense(2*n, append(append([]float64(nil), br...), bi...))
	var x mat.VecDense
	if err := x.SolveVec(M, rhs); err != nil {
		return nil, nil, err
	}
	d := x.RawVector().Data
	return d[:n], d[n:], nil
}

// at computes the steady state at frequency f for the phasor R.
func (hs *harmonicSolver) at(f float64, R []complex128) (Harmonic, error) {
	md := hs.md
	N, nz, d := hs.nStates, hs.nz, hs.d
	nu := 2 * math.Pi * f * md.Loop.Period
	Qr, Qi, err := solveShifted(hs.a1, nu, hs.b1[1], hs.b1[2])
	if err != nil {
		return Harmonic{}, fmt.Errorf("first moments: %w", err)
	}
	var c [5][]float64 // C⁰, Re C¹, Im C¹, Re C², Im C², stacked svec
	for k := range c {
		c[k] = make([]float64, N*d)
	}
	hs.harmonicForcing(Qr, Qi, c)
	var x0 mat.VecDense
	if err := hs.lu2.SolveVecTo(&x0, false, mat.NewVecDense(N*d, c[0])); err != nil {
		return Harmonic{}, fmt.Errorf("second moments: %w", err)
	}
	x1r, x1i, err := solveShifted(hs.l2, nu, c[1], c[2])
	if err != nil {
		return Harmonic{}, fmt.Errorf("second moments at ν: %w", err)
	}
	x2r, x2i, err := solveShifted(hs.l2, 2*nu, c[3], c[4])
	if err != nil {
		return Harmonic{}, fmt.Errorf("second moments at 2ν: %w", err)
	}
	// Sum over the chain's states: the plant state's moments.
	n := md.lm.n
	m0 := make([]float64, n)
	M := make([]complex128, n)
	for j := 0; j < N; j++ {
		for a := 0; a < n; a++ {
			m0[a] += hs.q0[j*nz+a]
			M[a] += complex(Qr[j*nz+a], Qi[j*nz+a])
		}
	}
	S0 := sumStates(x0.RawVector().Data, N, d, nz, n)
	S1 := complexStates(x1r, x1i, N, d, nz, n)
	S2 := complexStates(x2r, x2i, N, d, nz, n)
	return md.harmonicStats(f, R, m0, M, S0, S1, S2, nu), nil
}

// harmonicForcing accumulates the harmonics of c(q_k, r_k) = Σ_flows p
// Σ_modes w [F q gᵀ + g qᵀ Fᵀ + π (g gᵀ + H Ξ Hᵀ)] into c (C⁰, C¹, C²
// as real and imaginary parts). With q = q⁰ + Re(Q e^{jθ}), g = g⁰ +
// Re(g_R e^{jθ}), T(q, g) = F q gᵀ + g qᵀ Fᵀ and sym(u, v) = u vᵀ + v uᵀ:
//
//	C⁰ = T(q⁰, g⁰) + Re T(Q, ḡ_R)/2 + π (g⁰g⁰ᵀ + HΞHᵀ + Re(g_R g_Rᴴ)/2)
//	C¹ = T(q⁰, g_R) + T(Q, g⁰) + π sym(g⁰, g_R)
//	C² = T(Q, g_R)/2 + π g_R g_Rᵀ/2
func (hs *harmonicSolver) harmonicForcing(Qr, Qi []float64, c [5][]float64) {
	nz, d := hs.nz, hs.d
	acc := make([]*mat.Dense, 5)
	for k := range acc {
		acc[k] = mat.NewDense(nz, nz, nil)
	}
	tmp := make([]float64, d)
	fq0, fqr, fqi := mat.NewVecDense(nz, nil), mat.NewVecDense(nz, nil), mat.NewVecDense(nz, nil)
	// The flows of one source state share its modes: accumulate per flow.
	for t, fl := range hs.flows[0] {
		for k := range acc {
			acc[k].Zero()
		}
		i := fl.from
		pi := hs.pi[i]
		q0 := mat.NewVecDense(nz, hs.q0[i*nz:(i+1)*nz])
		qr := mat.NewVecDense(nz, Qr[i*nz:(i+1)*nz])
		qi := mat.NewVecDense(nz, Qi[i*nz:(i+1)*nz])
		for mi, wm := range fl.modes {
			w := wm.w
			if w == 0 {
				continue
			}
			g0, a, b := wm.G, hs.flows[1][t].modes[mi].G, hs.flows[2][t].modes[mi].G
			fq0.MulVec(wm.F, q0)
			fqr.MulVec(wm.F, qr)
			fqi.MulVec(wm.F, qi)
			for x := 0; x < nz; x++ {
				for y := x; y < nz; y++ {
					sym := func(u, v *mat.VecDense) float64 { return u.AtVec(x)*v.AtVec(y) + v.AtVec(x)*u.AtVec(y) }
					prod := func(u, v *mat.VecDense) float64 { return u.AtVec(x) * v.AtVec(y) }
					c0 := sym(fq0, g0) + (sym(fqr, a)+sym(fqi, b))/2 +
						pi*(prod(g0, g0)+wm.HXH.At(x, y)+(prod(a, a)+prod(b, b))/2)
					c1r := sym(fq0, a) + sym(fqr, g0) + pi*sym(g0, a)
					c1i := sym(fq0, b) + sym(fqi, g0) + pi*sym(g0, b)
					c2r := (sym(fqr, a)-sym(fqi, b))/2 + pi*(prod(a, a)-prod(b, b))/2
					c2i := (sym(fqr, b)+sym(fqi, a))/2 + pi*sym(a, b)/2
					for k, v := range [5]float64{c0, c1r, c1i, c2r, c2i} {
						acc[k].Set(x, y, acc[k].At(x, y)+w*v)
						acc[k].Set(y, x, acc[k].At(x, y))
					}
				}
			}
		}
		for k := range acc {
			svec(acc[k], tmp)
			for a := 0; a < d; a++ {
				c[k][fl.to*d+a] += fl.p * tmp[a]
			}
		}
	}
}

// sumStates sums the plant-state block (n×n) of the stacked svec second
// moments over the chain's N states.
func sumStates(x []float64, N, d, nz, n int) *mat.Dense {
	out := mat.NewDense(n, n, nil)
	for j := 0; j < N; j++ {
		q := unsvec(x[j*d:(j+1)*d], nz)
		for a := 0; a < n; a++ {
			for b := 0; b < n; b++ {
				out.Set(a, b, out.At(a, b)+q.At(a, b))
			}
		}
	}
	return out
}

func complexStates(xr, xi []float64, N, d, nz, n int) [][]complex128 {
	re, im := sumStates(xr, N, d, nz, n), sumStates(xi, N, d, nz, n)
	out := make([][]complex128, n)
	for a := range out {
		out[a] = make([]complex128, n)
		for b := range out[a] {
			out[a][b] = complex(re.At(a, b), im.At(a, b))
		}
	}
	return out
}

// harmonicStats turns the plant state's harmonics into the error's:
// Cov(x) = S − E[x]E[x]ᵀ has harmonics
//
//	cov⁰ = S⁰ − m⁰m⁰ᵀ − Re(M Mᴴ)/2,  cov¹ = S¹ − (m⁰Mᵀ + M m⁰ᵀ),  cov² = S² − M Mᵀ/2
//
// and Var(e_i) = (C cov Cᵀ)_ii (+ V_ii at 0): e = r − C x − v with v_k
// independent of x_k.
func (md *Model) harmonicStats(f float64, R []complex128, m0 []float64, M []complex128, S0 *mat.Dense, S1, S2 [][]complex128, nu float64) Harmonic {
	n, p := md.lm.n, md.lm.p
	C := md.lm.c
	h := Harmonic{Frequency: f, Reference: R,
		Output: make([]complex128, p), Error: make([]complex128, p),
		OutputOffset: make([]float64, p), ErrorOffset: make([]float64, p),
		Variance: make([]float64, p), VarianceFirst: make([]complex128, p), VarianceSecond: make([]complex128, p)}
	cov0 := func(a, b int) float64 {
		return S0.At(a, b) - m0[a]*m0[b] - real(M[a]*cmplx.Conj(M[b]))/2
	}
	cov1 := func(a, b int) complex128 { return S1[a][b] - complex(m0[a], 0)*M[b] - M[a]*complex(m0[b], 0) }
	cov2 := func(a, b int) complex128 { return S2[a][b] - M[a]*M[b]/2 }
	sq := 0.0
	for i := 0; i < p; i++ {
		var y complex128
		y0 := 0.0
		for a := 0; a < n; a++ {
			y += complex(C.At(i, a), 0) * M[a]
			y0 += C.At(i, a) * m0[a]
		}
		h.Output[i], h.Error[i] = y, R[i]-y
		h.OutputOffset[i], h.ErrorOffset[i] = y0, md.lm.r.AtVec(i)-y0
		v0 := md.lm.xi.At(n+i, n+i)
		var v1, v2 complex128
		for a := 0; a < n; a++ {
			for b := 0; b < n; b++ {
				cc := C.At(i, a) * C.At(i, b)
				if cc == 0 {
					continue
				}
				v0 += cc * cov0(a, b)
				v1 += complex(cc, 0) * cov1(a, b)
				v2 += complex(cc, 0) * cov2(a, b)
			}
		}
		h.Variance[i] = math.Max(0, v0)
		h.VarianceFirst[i], h.VarianceSecond[i] = v1, v2
		h.Spread += h.Variance[i]
		sq += h.ErrorOffset[i]*h.ErrorOffset[i] + real(h.Error[i]*cmplx.Conj(h.Error[i]))/2
	}
	h.SecondMoment = sq + h.Spread
	h.SpreadPeak, h.PeakPhase = peakOverPhase(h)
	h.Nominal = md.nominal(nu, R)
	return h
}

// peakOverPhase maximises Σ_i Var(e_i)(θ) over θ: a grid of 720 points
// and golden-section refinement around the best.
func peakOverPhase(h Harmonic) (float64, float64) {
	var v0 float64
	var v1, v2 complex128
	for i := range h.Variance {
		v0 += h.Variance[i]
		v1 += h.VarianceFirst[i]
		v2 += h.VarianceSecond[i]
	}
	at := func(th float64) float64 {
		return v0 + real(v1*cmplx.Rect(1, th)) + real(v2*cmplx.Rect(1, 2*th))
	}
	const grid = 720
	best, bt := math.Inf(-1), 0.0
	for k := 0; k < grid; k++ {
		th := 2 * math.Pi * float64(k) / grid
		if v := at(th); v > best {
			best, bt = v, th
		}
	}
	lo, hi := bt-2*math.Pi/grid, bt+2*math.Pi/grid
	g := (math.Sqrt(5) - 1) / 2
	for range 60 {
		a, b := hi-g*(hi-lo), lo+g*(hi-lo)
		if at(a) > at(b) {
			hi = b
		} else {
			lo = a
		}
	}
	th := (lo + hi) / 2
	if v := at(th); v > best {
		best, bt = v, th
	}
	return best, math.Mod(bt+2*math.Pi, 2*math.Pi)
}

// nominal is the loss-free, delay-free closed loop: with z = [x; xc],
//
//	z' = A z + B r + noise,  A = [[Φ − Γ Dc C, Γ Cc], [−Bc C, Ac]],  B = [Γ Dc; Bc]
//
// Y = C (e^{jν} I − A)⁻¹ B R, and the noise covariance P = A P Aᵀ + Q with
// Q = blkdiag(W_d, 0) + [Γ Dc; Bc] V [Γ Dc; Bc]ᵀ by Smith's doubling.
func (md *Model) nominal(nu float64, R []complex128) NominalResponse {
	lm := &md.lm
	n, p := lm.n, lm.p
	A, B := lm.nominalLoop()
	k, _ := A.Dims()
	if !md.nominalStable() {
		return NominalResponse{}
	}
	out := NominalResponse{Stable: true, Output: make([]complex128, p), Error: make([]complex128, p), Variance: make([]float64, p)}
	br, bi := make([]float64, k), make([]float64, k)
	for a := 0; a < k; a++ {
		for i := 0; i < p; i++ {
			br[a] += B.At(a, i) * real(R[i])
			bi[a] += B.At(a, i) * imag(R[i])
		}
	}
	zr, zi, err := solveShifted(A, nu, br, bi)
	if err != nil {
		return NominalResponse{}
	}
	for i := 0; i < p; i++ {
		var y complex128
		for a := 0; a < n; a++ {
			y += complex(lm.c.At(i, a), 0) * complex(zr[a], zi[a])
		}
		out.Output[i], out.Error[i] = y, R[i]-y
	}
	// Noise: Q = blkdiag(W_d, 0) + B V Bᵀ (v enters as −B v).
	Q := mat.NewDense(k, k, nil)
	setBlock(Q, 0, 0, lm.samp.Wd, 1)
	V := mat.NewDense(p, p, nil)
	for i := 0; i < p; i++ {
		for j := 0; j < p; j++ {
			V.Set(i, j, lm.xi.At(n+i, n+j))
		}
	}
	var bv, bvb mat.Dense
	bv.Mul(B, V)
	bvb.Mul(&bv, B.T())
	Q.Add(Q, &bvb)
	P := smith(A, Q)
	for i := 0; i < p; i++ {
		v := V.At(i, i)
		for a := 0; a < n; a++ {
			for b := 0; b < n; b++ {
				v += lm.c.At(i, a) * P.At(a, b) * lm.c.At(i, b)
			}
		}
		out.Variance[i] = v
		out.Spread += v
	}
	return out
}

// smith solves P = A P Aᵀ + Q for a stable A by doubling: P ← P + Aₖ P
// Aₖᵀ, Aₖ₊₁ = Aₖ², until Aₖ vanishes against 1e-18 (a Schur-stable A
// converges quadratically).
func smith(A, Q *mat.Dense) *mat.Dense {
	var P, Ak mat.Dense
	P.CloneFrom(Q)
	Ak.CloneFrom(A)
	for range 100 {
		var t, u mat.Dense
		t.Mul(&Ak, &P)
		u.Mul(&t, Ak.T())
		P.Add(&P, &u)
		var a2 mat.Dense
		a2.Mul(&Ak, &Ak)
		Ak.CloneFrom(&a2)
		if mat.Norm(&Ak, math.Inf(1)) < 1e-18 {
			break
		}
	}
	return &P
}
