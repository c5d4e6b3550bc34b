package estimate

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// Reference values from GNU Octave 7.3 with its control package (Debian
// octave-control), made by estimate/testdata/reference/constant_delay.m:
//
//	cd estimate/testdata/reference && octave --no-gui --quiet constant_delay.m > constant_delay.out
//
// c2d gives Φ, Γ; the fractional delay is the augmented form of
// Åström–Wittenmark §2.3 built from two more c2d calls; W_d is adaptive
// quadrature (not Van Loan); the steady covariance of the constant-delay,
// loss-free loop is dlyap. CI has no Octave: the test reads the committed
// output.
const octaveTol = 1e-9 // relative to the largest entry of each matrix

func readOctave(t *testing.T) map[string]*mat.Dense {
	t.Helper()
	f, err := os.Open("testdata/reference/constant_delay.out")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	out := map[string]*mat.Dense{}
	sc := bufio.NewScanner(f)
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	for sc.Scan() {
		fs := strings.Fields(sc.Text())
		if len(fs) < 3 {
			continue
		}
		r, _ := strconv.Atoi(fs[1])
		c, _ := strconv.Atoi(fs[2])
		if len(fs) != 3+r*c {
			t.Fatalf("%s: %d values for %d×%d", fs[0], len(fs)-3, r, c)
		}
		m := mat.NewDense(r, c, nil)
		for i := 0; i < r*c; i++ {
			v, err := strconv.ParseFloat(fs[3+i], 64)
			if err != nil {
				t.Fatal(err)
			}
			m.Set(i/c, i%c, v)
		}
		out[fs[0]] = m
	}
	return out
}

func closeRel(t *testing.T, name string, got, want mat.Matrix, tol float64) {
	t.Helper()
	r, c := want.Dims()
	gr, gc := got.Dims()
	if r != gr || c != gc {
		t.Errorf("%s: got %d×%d, want %d×%d", name, gr, gc, r, c)
		return
	}
	scale := 0.0
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			scale = math.Max(scale, math.Abs(want.At(i, j)))
		}
	}
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if d := math.Abs(got.At(i, j) - want.At(i, j)); d > tol*scale {
				t.Errorf("%s[%d][%d] = %.17g, want %.17g (Octave), |Δ| = %.3g > %.1g·%.3g",
					name, i, j, got.At(i, j), want.At(i, j), d, tol, scale)
			}
		}
	}
}

// octaveLoops are the loops of constant_delay.m, delays split between the
// directions and the compute delay as there.
func octaveLoops() map[string]struct {
	loop *profiles.Loop
	tau  float64
} {
	mimo := &profiles.Loop{
		Period: 0.05,
		Plant: profiles.Plant{
			A: dense([]float64{-1, 2, 0}, []float64{-2, -1, 0}, []float64{0, 0, -3}),
			B: dense([]float64{1, 0}, []float64{0, 1}, []float64{1, 1}),
			C: dense([]float64{1, 0, 0}, []float64{0, 0, 1}),
			W: dense([]float64{0.1, 0, 0}, []float64{0, 0.1, 0}, []float64{0, 0, 0.2}),
			V: dense([]float64{1e-4, 0}, []float64{0, 2e-4}),
		},
		Controller: profiles.Controller{D: dense([]float64{0.5, 0}, []float64{0, 0.8})},
		Setpoint:   []float64{1, -0.5},
		Compute:    laws.Constant{Value: 0.005},
		Profile: profile(iidChannel(0, laws.Constant{Value: 0.01}),
			iidChannel(0, laws.Constant{Value: 0.005})),
	}
	return map[string]struct {
		loop *profiles.Loop
		tau  float64
	}{
		"servo": {servo(profile(iidChannel(0, laws.Constant{Value: 0.001}),
			iidChannel(0, laws.Constant{Value: 0.0015})), 0.0005), 0.003},
		"mimo": {mimo, 0.02},
	}
}

func TestAgainstOctave(t *testing.T) {
	ref := readOctave(t)
	for name, c := range octaveLoops() {
		t.Run(name, func(t *testing.T) {
			l := c.loop
			s := Discretize(l.Plant.A, l.Plant.B, l.Plant.W, l.Period)
			closeRel(t, "Φ", s.Phi, ref[name+".Phi"], octaveTol)
			closeRel(t, "Γ", s.Gamma, ref[name+".Gamma"], octaveTol)
			g0, g1 := s.Split(c.tau)
			closeRel(t, "Γ0", g0, ref[name+".Gamma0"], octaveTol)
			closeRel(t, "Γ1", g1, ref[name+".Gamma1"], octaveTol)
			closeRel(t, "W_d", s.Wd, ref[name+".Wd"], octaveTol)

			pr, err := Predict(l, PredictOptions{SkipMargin: true})
			if err != nil {
				t.Fatal(err)
			}
			// One mode every period: ρ(F ⊗ F) = ρ(F)².
			closeRel(t, "ρ", mat.NewDense(1, 1, []float64{pr.SpectralRadius}), ref[name+".rho"], octaveTol)
			if !pr.MeanSquareStable {
				t.Fatal("not stable")
			}
			mz := ref[name+".mean_z"]
			closeRel(t, "E[z]", mat.NewDense(1, len(pr.Moments.Mean), pr.Moments.Mean), mz, octaveTol)
			cov := mat.NewDense(len(pr.Moments.Mean), len(pr.Moments.Mean), nil)
			for i := range pr.Moments.Mean {
				for j := range pr.Moments.Mean {
					cov.Set(i, j, pr.Moments.Second.At(i, j)-pr.Moments.Mean[i]*pr.Moments.Mean[j])
				}
			}
			closeRel(t, "Cov z (dlyap)", cov, ref[name+".cov_z"], octaveTol)
			closeRel(t, "E[eᵀe]", mat.NewDense(1, 1, []float64{pr.Error.SecondMoment}), ref[name+".error_second_moment"], octaveTol)
			em := ref[name+".error_mean"]
			closeRel(t, "E[e]", mat.NewDense(1, len(pr.Error.Mean), pr.Error.Mean), em,
				octaveTol*math.Max(1, 1/mat.Norm(em, math.Inf(1))))
		})
	}
}
