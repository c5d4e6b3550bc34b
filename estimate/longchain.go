package estimate

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles/laws"
)

// The long-delay model as a Markov jump linear system (estimate/model.md
// §13). Its chain is the joint network state θ together with the age of
// the command in force at the period's start (1 … Na, and Na+1 for "held
// past the horizon"), and, for a controller with memory, which of the
// commands newer than it are on their way (one bit per period of the
// horizon). Its state vector is
//
//	z = [x; u_held; p_1; …; p_{Na−1}; xc],
//
// p_d the command computed from the sample taken d periods before.

// longPart is the non-network part of a chain state.
type longPart struct {
	age  int    // k − J at t_k: 1 … Na+1 (Na+1: older than the horizon)
	bits uint32 // bit d−1: the command of slot d was sent (controller with memory only)
}

// longGroup is every mode of one chain state that leads to the same part,
// with what the moment recursions need of them.
type longGroup struct {
	to    int // destination part
	mass  float64
	modes []weighted
	op    *mat.Dense // Σ w F ⊗ F on svec coordinates
	meanF *mat.Dense // Σ w F
	sumG  []float64  // Σ w g
}

// longChain is the chain and its modes.
type longChain struct {
	na, nTheta int
	lumped     bool // static controller: the bits are not needed
	parts      []longPart
	index      map[longPart]int
	groups     [][]longGroup // by state i = part·nTheta + θ
	theta      *mat.Dense    // the network chain's transition matrix
}

// layout of z.
type longLayout struct {
	n, m, p, nc, na, nz int
}

func (ly longLayout) uh() int          { return ly.n }
func (ly longLayout) pd(d int) int     { return ly.n + ly.m*d }
func (ly longLayout) xc() int          { return ly.n + ly.m*ly.na }
func (ly longLayout) cols() int        { return ly.nz + 1 + ly.n + ly.p } // Y = [z; 1; w; v]
func (ly longLayout) one() int         { return ly.nz }
func (ly longLayout) w() int           { return ly.nz + 1 }
func (ly longLayout) v() int           { return ly.nz + 1 + ly.n }
func (ly longLayout) states(n int) int { return n * ly.nz * (ly.nz + 1) / 2 }

// enumerateParts lists the chain's parts.
func enumerateParts(na int, lumped bool) []longPart {
	var out []longPart
	for age := 1; age <= na+1; age++ {
		slots := min(age-1, na-1)
		if lumped {
			out = append(out, longPart{age: age})
			continue
		}
		for b := uint32(0); b < 1<<slots; b++ {
			out = append(out, longPart{age: age, bits: b})
		}
	}
	return out
}

// slotRows returns S_e, the rows that give the value of slot e's command
// from Y = [z; 1; w; v]: the held input, a stored command p_d, or the new
// command u_k = Cc xc + Dc (r − C x − v).
func (md *Model) slotRows(ly longLayout, d int) *mat.Dense {
	lm := &md.lm
	s := mat.NewDense(ly.m, ly.cols(), nil)
	switch {
	case d == heldSlot:
		for i := 0; i < ly.m; i++ {
			s.Set(i, ly.uh()+i, 1)
		}
	case d > 0:
		for i := 0; i < ly.m; i++ {
			s.Set(i, ly.pd(d)+i, 1)
		}
	default:
		var dcC mat.Dense
		dcC.Mul(lm.dc, lm.c)
		setBlock(s, 0, 0, &dcC, -1)
		if ly.nc > 0 {
			setBlock(s, 0, ly.xc(), lm.cc, 1)
		}
		var dcr mat.VecDense
		dcr.MulVec(lm.dc, lm.r)
		for i := 0; i < ly.m; i++ {
			s.Set(i, ly.one(), dcr.AtVec(i))
		}
		setBlock(s, 0, ly.v(), lm.dc, -1)
	}
	return s
}

// baseRows is R0 of one outcome: everything of z' = R Y except the input
// integrals Σ_e M_e S_e of the x rows.
func (md *Model) baseRows(ly longLayout, newest int, used bool, rows map[int]*mat.Dense) *mat.Dense {
	lm := &md.lm
	r := mat.NewDense(ly.nz, ly.cols(), nil)
	setBlock(r, 0, 0, lm.samp.Phi, 1)
	for i := 0; i < ly.n; i++ {
		r.Set(i, ly.w()+i, 1)
	}
	setBlock(r, ly.uh(), 0, rows[newest], 1)
	if ly.na > 1 && used {
		setBlock(r, ly.pd(1), 0, rows[0], 1)
	}
	for d := 1; d+1 < ly.na; d++ {
		for i := 0; i < ly.m; i++ {
			r.Set(ly.pd(d+1)+i, ly.pd(d)+i, 1)
		}
	}
	if ly.nc > 0 {
		if used {
			// xc' = Ac xc + Bc (r − C x − v)
			var bcC mat.Dense
			bcC.Mul(lm.bc, lm.c)
			setBlock(r, ly.xc(), 0, &bcC, -1)
			setBlock(r, ly.xc(), ly.xc(), lm.ac, 1)
			var bcr mat.VecDense
			bcr.MulVec(lm.bc, lm.r)
			for i := 0; i < ly.nc; i++ {
				r.Set(ly.xc()+i, ly.one(), bcr.AtVec(i))
			}
			setBlock(r, ly.xc(), ly.v(), lm.bc, -1)
		} else {
			for i := 0; i < ly.nc; i++ {
				r.Set(ly.xc()+i, ly.xc()+i, 1)
			}
		}
	}
	return r
}

// sigmaModes turns an outcome's moments into weighted affine maps with
// exactly those first and second moments of the input matrices: the maps
// at μ̄ ± √(r λ_j) e_j, each of weight P/(2r), for the r eigenpairs
// (λ_j, e_j) of the covariance of μ on the outcome. Every quantity the
// moment recursions take (E[F ⊗ F], E[F], E[g], E[F q gᵀ], E[H Ξ Hᵀ]) is
// at most quadratic in μ, so the finite set reproduces them exactly (the
// unscented transform's moment matching; common practice).
func (md *Model) sigmaModes(ly longLayout, oc outcome, slotD []int, r0 *mat.Dense, rows map[int]*mat.Dense) ([]weighted, error) {
	K := len(oc.m1)
	nm := ly.n * ly.m
	mean := make([]float64, K)
	for i := range mean {
		mean[i] = oc.m1[i] / oc.p
	}
	cov := mat.NewSymDense(K, nil)
	scale := 0.0
	for i := 0; i < K; i++ {
		for j := i; j < K; j++ {
			v := oc.m2.At(i, j)/oc.p - mean[i]*mean[j]
			cov.SetSym(i, j, v)
			scale = math.Max(scale, math.Abs(oc.m2.At(i, j)/oc.p))
		}
	}
	var eig mat.EigenSym
	if !eig.Factorize(cov, true) {
		return nil, fmt.Errorf("the covariance of the period's input integrals has no eigendecomposition")
	}
	vals := eig.Values(nil)
	var vecs mat.Dense
	eig.VectorsTo(&vecs)
	var keep []int
	for j, l := range vals {
		if l < -1e-9*math.Max(scale, 1e-300) {
			return nil, fmt.Errorf("the period's input integrals have a covariance with eigenvalue %.3g < 0: the delay laws are not resolved", l)
		}
		if l > 1e-13*scale {
			keep = append(keep, j)
		}
	}
	build := func(mu []float64) (mode, error) {
		r := mat.DenseCopyOf(r0)
		for e, d := range slotD {
			me := mat.NewDense(ly.n, ly.m, append([]float64(nil), mu[e*nm:(e+1)*nm]...))
			var ms mat.Dense
			ms.Mul(me, rows[d])
			setBlock(r, 0, 0, &ms, 1)
		}
		return md.modeFromRows(ly, r)
	}
	if len(keep) == 0 {
		mo, err := build(mean)
		if err != nil {
			return nil, err
		}
		return []weighted{{oc.p, mo}}, nil
	}
	out := make([]weighted, 0, 2*len(keep))
	rk := float64(len(keep))
	mu := make([]float64, K)
	for _, j := range keep {
		step := math.Sqrt(rk * vals[j])
		for _, sign := range [2]float64{1, -1} {
			for i := range mu {
				mu[i] = mean[i] + sign*step*vecs.At(i, j)
			}
			mo, err := build(mu)
			if err != nil {
				return nil, err
			}
			out = append(out, weighted{oc.p / (2 * rk), mo})
		}
	}
	return out, nil
}

// modeFromRows splits R = [F g H] and forms H Ξ Hᵀ.
func (md *Model) modeFromRows(ly longLayout, r *mat.Dense) (mode, error) {
	F := mat.DenseCopyOf(r.Slice(0, ly.nz, 0, ly.nz))
	G := mat.NewVecDense(ly.nz, nil)
	for i := 0; i < ly.nz; i++ {
		G.SetVec(i, r.At(i, ly.one()))
	}
	H := r.Slice(0, ly.nz, ly.w(), ly.cols())
	var hx, full mat.Dense
	hx.Mul(H, md.lm.xi)
	full.Mul(&hx, H.T())
	hxh := mat.NewSymDense(ly.nz, nil)
	for i := 0; i < ly.nz; i++ {
		for j := i; j < ly.nz; j++ {
			hxh.SetSym(i, j, (full.At(i, j)+full.At(j, i))/2)
		}
	}
	mo := mode{F: F, G: G, HXH: hxh}
	return mo, mo.checkFinite()
}

// thetaLaws is what one joint network state gives the long model.
type thetaLaws struct {
	js   JointState
	tl   *totalLaw
	grid *periodGrid
	used float64 // P(the sample is used) = (1 − ps) P(τsc < h)
	pa   float64
}

// buildLongChain builds the chain, its modes and the per-state reports.
func (md *Model) buildLongChain(ly longLayout, per []thetaLaws) (*longChain, error) {
	lc := &longChain{na: ly.na, nTheta: len(per), lumped: ly.nc == 0, theta: md.P}
	lc.parts = enumerateParts(ly.na, lc.lumped)
	lc.index = map[longPart]int{}
	for i, p := range lc.parts {
		lc.index[p] = i
	}
	N := len(lc.parts) * lc.nTheta
	if side := ly.states(N); side > MaxOperatorSide {
		return nil, fmt.Errorf("%w: the second-moment operator of a %d-period command horizon has side %d (%d chain states × %d loop states), beyond %d",
			errChainTooLarge, ly.na, side, N, ly.nz, MaxOperatorSide)
	}
	rows := map[int]*mat.Dense{heldSlot: md.slotRows(ly, heldSlot)}
	for d := 0; d < ly.na; d++ {
		rows[d] = md.slotRows(ly, d)
	}
	gamma := make([]float64, 0, ly.n*ly.m) // Γ row by row, as vec M_e
	for r := 0; r < ly.n; r++ {
		gamma = append(gamma, mat.Row(nil, r, md.lm.samp.Gamma)...)
	}
	nm := ly.n * ly.m
	lc.groups = make([][]longGroup, N)
	for pi, part := range lc.parts {
		for th, tlw := range per {
			byPart := map[int]*longGroup{}
			var order []int
			// A controller with memory splits the period on whether its
			// sample is used; a static one need not (its command is a
			// function of the sample alone).
			type branch struct {
				used bool
				p    float64
			}
			branches := []branch{{true, 1}}
			if !lc.lumped {
				branches = []branch{{true, tlw.used}, {false, 1 - tlw.used}}
			}
			for _, br := range branches {
				if br.p == 0 {
					continue
				}
				slots := []slotLaw{{d: heldSlot}}
				slotD := []int{heldSlot}
				kNew := (1 - tlw.pa)
				if lc.lumped {
					kNew *= tlw.used
				}
				if br.used {
					slots = append(slots, tlw.grid.slot(tlw.tl, 0, kNew))
					slotD = append(slotD, 0)
				}
				for d := 1; d <= min(part.age-1, ly.na-1); d++ {
					if !lc.lumped && part.bits&(1<<(d-1)) == 0 {
						continue
					}
					slots = append(slots, tlw.grid.slot(tlw.tl, d, kNew))
					slotD = append(slotD, d)
				}
				ocs, err := tlw.grid.periodOutcomes(slots, nm, gamma)
				if err != nil {
					return nil, fmt.Errorf("network state %s, command age %d: %w", tlw.js.Name, part.age, err)
				}
				for _, oc := range ocs {
					oc.p *= br.p
					oc.m1 = scaleVec(oc.m1, br.p)
					oc.m2.ScaleSym(br.p, oc.m2)
					newest := slotD[oc.newest]
					next := longPart{}
					if newest == heldSlot {
						next.age = min(part.age+1, ly.na+1)
					} else {
						next.age = newest + 1
					}
					if !lc.lumped {
						for d := 1; d <= min(next.age-1, ly.na-1); d++ {
							sent := false
							if d == 1 {
								sent = br.used
							} else {
								sent = part.bits&(1<<(d-2)) != 0
							}
							if sent {
								next.bits |= 1 << (d - 1)
							}
						}
					}
					to := lc.index[next]
					r0 := md.baseRows(ly, newest, br.used || lc.lumped, rows)
					modes, err := md.sigmaModes(ly, oc, slotD, r0, rows)
					if err != nil {
						return nil, fmt.Errorf("network state %s, command age %d: %w", tlw.js.Name, part.age, err)
					}
					g, ok := byPart[to]
					if !ok {
						g = &longGroup{to: to}
						byPart[to] = g
						order = append(order, to)
					}
					g.mass += oc.p
					g.modes = append(g.modes, modes...)
				}
			}
			i := pi*lc.nTheta + th
			for _, to := range order {
				g := byPart[to]
				g.op = mat.NewDense(ly.states(1), ly.states(1), nil)
				g.meanF = mat.NewDense(ly.nz, ly.nz, nil)
				g.sumG = make([]float64, ly.nz)
				for _, wm := range g.modes {
					addSymOp(g.op, wm.F, wm.w)
					g.meanF.Add(g.meanF, scaledCopy(wm.F, wm.w))
					for a := 0; a < ly.nz; a++ {
						g.sumG[a] += wm.w * wm.G.AtVec(a)
					}
				}
				if !allFinite(g.op) {
					return nil, fmt.Errorf("network state %s: the second-moment operator overflows (entries beyond %.3g): the plant or the controller gains are too large for a %s period",
						tlw.js.Name, math.MaxFloat64, laws.FormatSeconds(md.lm.samp.H))
				}
				lc.groups[i] = append(lc.groups[i], *g)
			}
		}
	}
	return lc, nil
}

func scaleVec(v []float64, s float64) []float64 {
	for i := range v {
		v[i] *= s
	}
	return v
}

// transition returns the chain's transition matrix over its states.
func (lc *longChain) transition() *mat.Dense {
	N := len(lc.groups)
	T := mat.NewDense(N, N, nil)
	for i, gs := range lc.groups {
		th := i % lc.nTheta
		for _, g := range gs {
			for th2 := 0; th2 < lc.nTheta; th2++ {
				j := g.to*lc.nTheta + th2
				T.Set(i, j, T.At(i, j)+g.mass*lc.theta.At(th, th2))
			}
		}
	}
	return T
}

// stationary solves π T = π, Σ π = 1.
func stationaryOf(T *mat.Dense) ([]float64, error) {
	N, _ := T.Dims()
	A := mat.NewDense(N, N, nil)
	b := mat.NewVecDense(N, nil)
	for i := 0; i < N; i++ {
		for j := 0; j < N; j++ {
			v := T.At(j, i)
			if i == j {
				v -= 1
			}
			A.Set(i, j, v)
		}
	}
	for j := 0; j < N; j++ {
		A.Set(N-1, j, 1)
	}
	b.SetVec(N-1, 1)
	var x mat.VecDense
	if err := x.SolveVec(A, b); err != nil {
		return nil, fmt.Errorf("the chain's stationary law: %w", err)
	}
	out := make([]float64, N)
	for i := range out {
		out[i] = math.Max(0, x.AtVec(i))
	}
	return out, nil
}
