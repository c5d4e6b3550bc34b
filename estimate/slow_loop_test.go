package estimate_test

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"rigwire/estimate"
	"rigwire/profiles"
)

// The slow process loop with a narrow delay law: a 1 s period, both
// directions normal with mean 120 µs and std 15 µs, so that the whole
// law of τ sits in a few hundred microseconds at the start of a period a
// second long. A quadrature spread evenly over [c, h] steps over such a
// peak and calls every command late. The reference is
// estimate/testdata/reference/slow_loop.m (GNU Octave with its control package; the
// command is in its header): the second-moment operator on vec(Q) built
// from the model's three modes with c2d for Γ0(τ), the density of
// τsc + τca in closed form, integrated adaptively on pieces one standard
// deviation wide around its mean.
const (
	// slowRhoTol is the bar: ρ within 1e-6 of the independent
	// value.
	slowRhoTol = 1e-6
	// slowMomentTol is the bar of the existing independent comparisons
	// (jump_moments.m): 1e-6 relative on smooth cases.
	slowMomentTol = 1e-6
)

// slowLoopYAML is the loop of slow_loop.m: an invented heated tank (water
// and heater element temperatures), a PI controller, setpoint 1.
func slowLoopYAML() string {
	return fmt.Sprintf(`# Heated tank on a process network (invented values, for tests).
period: 1s
plant:
  a: [[%s, %s], [0, -0.125]]
  b: [[0], [0.25]]
  c: [[1, 0]]
  process_noise: [[1e-4, 0], [0, 1e-3]]
  sensor_noise: [[1e-4]]
controller: {a: [[1]], b: [[1]], c: [[0.05]], d: [[2]]}
setpoint: [1]
compute_delay: 20ms
profile:
  name: process-network
  sensor_to_controller: {loss: 0.01, delay: {kind: normal, mean: 120us, std: 15us}}
  controller_to_actuator: {loss: 0.02, delay: {kind: normal, mean: 120us, std: 15us}}
`, fmtFloat(-1.0/30), fmtFloat(1.0/30))
}

// readReference reads "name rows cols values…" lines into scalars (the
// first value of each).
func readReference(t *testing.T, path string) map[string]float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	out := map[string]float64{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		fs := strings.Fields(sc.Text())
		if len(fs) < 4 || strings.HasPrefix(fs[0], "#") {
			continue
		}
		v, err := strconv.ParseFloat(fs[3], 64)
		if err != nil {
			t.Fatalf("%s: %s: %v", path, fs[0], err)
		}
		out[fs[0]] = v
	}
	return out
}

func TestSlowLoopNarrowDelayAgainstOctave(t *testing.T) {
	ref := readReference(t, "testdata/reference/slow_loop.out")
	want := func(k string) float64 {
		v, ok := ref["slow_loop."+k]
		if !ok {
			t.Fatalf("slow_loop.%s not in slow_loop.out", k)
		}
		return v
	}
	loop, err := profiles.ParseLoop([]byte(slowLoopYAML()), "slow-loop.yaml", "")
	if err != nil {
		t.Fatal(err)
	}
	pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	if err != nil {
		t.Fatal(err)
	}
	if len(pr.States) != 1 {
		t.Fatalf("%d joint states, want 1", len(pr.States))
	}
	st := pr.States[0]
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"P0", st.P0, want("p0")},
		{"P1", st.P1, want("p1")},
		{"P2", st.P2, want("p2")},
	} {
		if d := math.Abs(c.got - c.want); !(d <= tauGridProbTol*c.want) {
			t.Errorf("%s = %.15g, Octave %.15g (%.3g relative)", c.name, c.got, c.want, d/c.want)
		}
	}
	if w := want("mean_delay_m2"); !(math.Abs(st.MeanDelay-w) <= tauGridDelayTol*w) {
		t.Errorf("E[τ | m2] = %.15g s, Octave %.15g s", st.MeanDelay, w)
	}
	rho := want("rho")
	if !(math.Abs(pr.SpectralRadius-rho) <= slowRhoTol) {
		t.Errorf("ρ = %.15g, Octave %.15g: off by %.3g, bar %g", pr.SpectralRadius, rho, math.Abs(pr.SpectralRadius-rho), slowRhoTol)
	} else {
		t.Logf("ρ = %.15g, Octave %.15g (RadiusError %.3g)", pr.SpectralRadius, rho, pr.RadiusError)
	}
	if pr.Stability != estimate.StabilityStable || !pr.MeanSquareStable {
		t.Fatalf("Stability %q (MeanSquareStable %v), want stable: ρ = %.6g by Octave", pr.Stability, pr.MeanSquareStable, rho)
	}
	if pr.Error == nil {
		t.Fatal("stable but no error moments")
	}
	if w := want("error_second_moment"); !(math.Abs(pr.Error.SecondMoment-w) <= slowMomentTol*w) {
		t.Errorf("E[eᵀe] = %.15g, Octave %.15g (%.3g relative, bar %g)", pr.Error.SecondMoment, w,
			math.Abs(pr.Error.SecondMoment-w)/w, slowMomentTol)
	}
}
