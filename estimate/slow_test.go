package estimate

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// Slow, obviously correct references beside the fast paths (the pattern
// of net/netip's slow_test.go): the steady moments by running the
// recursion of estimate/model.md §4 for many periods instead of solving the
// fixed-point systems, and the spectral radius from the full Kronecker
// matrix Σ_i P_ij E_i[F ⊗ F] on all nz×nz matrices instead of the
// symmetric-vector operator (and by bisection on the Lyapunov test).

func smoothLoops() map[string]*profiles.Loop {
	ms := 1e-3
	lg := must(laws.NewLognormal(2*ms, 0.6, 0.5*ms))
	un := must(laws.NewUniform(1*ms, 6*ms))
	ga := must(laws.NewGamma(2, 1*ms, 0.5*ms))
	zero := servo(profile(iidChannel(0.1, lg), iidChannel(0.05, un)), 0.5*ms)
	zero.Actuator.OnLoss = profiles.ZeroUnlessFresh
	return map[string]*profiles.Loop{
		"iid": servo(profile(iidChannel(0.08, lg), iidChannel(0.05, un)), 0.5*ms),
		"burst": servo(profile(iidChannel(0.02, ga),
			twoState(0.5, 0.01, laws.Constant{Value: 1 * ms}, 0.1, 0.6, un)), 0.5*ms),
		"both bursty": servo(profile(twoState(2, 0.01, lg, 0.2, 0.3, ga),
			twoState(0.5, 0.01, laws.Constant{Value: 1 * ms}, 0.1, 0.6, un)), 0.5*ms),
		"zero policy": zero,
	}
}

func TestSteadyAgainstIteration(t *testing.T) {
	const (
		iterTol = 1e-9 // relative; the iteration has converged far below it
		steps   = 6000 // ρ ≈ 0.992: ρ^6000 ≈ 1e-21
	)
	for name, l := range smoothLoops() {
		t.Run(name, func(t *testing.T) {
			md, err := Build(l, Options{})
			if err != nil {
				t.Fatal(err)
			}
			mo, err := md.Steady()
			if err != nil {
				t.Fatal(err)
			}
			fast := md.Error(mo)
			tr := md.Transient(steps)
			slow := tr[len(tr)-1].Error
			if d := math.Abs(fast.SecondMoment - slow.SecondMoment); d > iterTol*slow.SecondMoment {
				t.Errorf("E[eᵀe]: solve %.15g, iteration %.15g", fast.SecondMoment, slow.SecondMoment)
			}
			for j := range fast.Mean {
				if d := math.Abs(fast.Mean[j] - slow.Mean[j]); d > iterTol*math.Max(1, math.Abs(slow.Mean[j])) {
					t.Errorf("E[e_%d]: solve %.15g, iteration %.15g", j, fast.Mean[j], slow.Mean[j])
				}
			}
		})
	}
}

// kroneckerRadius is ρ of the operator on vec(Q_j) ∈ ℝ^{nz²}, built from
// F ⊗ F for every mode of every state, with gonum's Kronecker product.
func kroneckerRadius(md *Model) float64 {
	N, nz := len(md.States), md.lm.nz
	d := nz * nz
	big := mat.NewDense(N*d, N*d, nil)
	for i := 0; i < N; i++ {
		ki := mat.NewDense(d, d, nil)
		for _, wm := range md.modes(i) {
			var kr mat.Dense
			kr.Kronecker(wm.F, wm.F)
			kr.Scale(wm.w, &kr)
			ki.Add(ki, &kr)
		}
		for j := 0; j < N; j++ {
			blk := big.Slice(j*d, (j+1)*d, i*d, (i+1)*d).(*mat.Dense)
			blk.Scale(md.P.At(i, j), ki)
		}
	}
	return eigenModuli(big)[0]
}

func TestSpectralRadiusAgainstKronecker(t *testing.T) {
	const rhoTol = 1e-9
	for name, l := range smoothLoops() {
		t.Run(name, func(t *testing.T) {
			md, err := Build(l, Options{})
			if err != nil {
				t.Fatal(err)
			}
			rad := md.Radius()
			slow := kroneckerRadius(md)
			if math.Abs(rad.Value-slow) > rhoTol {
				t.Errorf("ρ: inverse iteration %.15g, Kronecker eigen %.15g", rad.Value, slow)
			}
			// The certified bracket must hold the eigensolver's value.
			if slow < rad.Low-rhoTol || slow > rad.High+rhoTol {
				t.Errorf("ρ = %.15g (Kronecker eigen) outside the certified bracket [%.15g, %.15g]", slow, rad.Low, rad.High)
			}
		})
	}
}

// TestMarginAgainstScan checks the loss margin's bisection against a
// plain fine scan of the spectral radius (eigenvalues, not the Lyapunov
// test) around it.
func TestMarginAgainstScan(t *testing.T) {
	for _, name := range []string{"iid", "burst"} {
		t.Run(name, func(t *testing.T) {
			md, err := Build(smoothLoops()[name], Options{})
			if err != nil {
				t.Fatal(err)
			}
			q := md.LossMargin()
			for _, probe := range []struct {
				q      float64
				stable bool
			}{{q - marginTol, true}, {q + marginTol/10, false}} {
				md.setLoss(probe.q)
				if rho := md.SpectralRadius(); (rho < 1) != probe.stable {
					t.Errorf("margin %.6f: at q = %.6f ρ = %.9f, want stable %v", q, probe.q, rho, probe.stable)
				}
			}
		})
	}
}
