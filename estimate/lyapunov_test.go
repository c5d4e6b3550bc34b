package estimate

import (
	"math"
	"path/filepath"
	"testing"

	"rigwire/estimate/online"
	"rigwire/profiles"
)

// TestLyapunovRandomFibonacci: the random product of [[1, 1], [1, 0]] and
// [[1, −1], [1, 0]], each with probability ½, grows as 1.13198824879…ᵏ
// (D. Viswanath, "Random Fibonacci sequences and the number
// 1.13198824…", Math. Comp. 69 (2000), 1131–1155): the estimator's λ must
// be log of that within 4 of its standard errors.
func TestLyapunovRandomFibonacci(t *testing.T) {
	js := &jumpSampler{nz: 2, pi: []float64{1}, states: [][]jumpChoice{{
		{cum: 0.5, f: []float64{1, 1, 1, 0}, to: 0},
		{cum: 1, f: []float64{1, -1, 1, 0}, to: 0},
	}}}
	want := math.Log(1.13198824879)
	a := js.exponent(2_000_000, 40, 3)
	se := (a.High - a.Exponent) / 2.0227 // t_{39, 0.975}
	t.Logf("λ = %.6f [%.6f, %.6f], published %.6f", a.Exponent, a.Low, a.High, want)
	if math.Abs(a.Exponent-want) > 4*se || a.Stability != StabilityUnstable {
		t.Errorf("λ = %.6f ± %.2g, want %.6f (unstable)", a.Exponent, se, want)
	}
}

// scalarLoop is a scalar plant whose sampled pole is a (A = ln(a)/h, B =
// 1, C = 1) under the static gain that puts the loss-free closed-loop
// pole at b, with the zero-unless-fresh actuator: a period without a
// fresh command multiplies x by a, one with it by b.
func scalarLoop(a, b, h float64, prof *profiles.Profile) *profiles.Loop {
	ac := math.Log(a) / h
	gamma := (a - 1) / ac
	return &profiles.Loop{
		Period: h,
		Plant: profiles.Plant{A: dense([]float64{ac}), B: dense([]float64{1}), C: dense([]float64{1}),
			W: dense([]float64{0}), V: dense([]float64{0})},
		Controller: profiles.Controller{D: dense([]float64{(a - b) / gamma})},
		Setpoint:   []float64{0},
		Profile:    prof,
		Actuator:   profiles.Actuator{OnLoss: profiles.ZeroUnlessFresh},
	}
}

// TestLyapunovScalarIID: for a scalar loop whose periods multiply x by b
// with probability p = (1 − ps)(1 − pa) (sample and command both
// delivered, at once) and by a otherwise, independently, the exponent is
// λ = p log|b| + (1 − p) log|a| (the strong law of large numbers on
// log|x_K| = Σ log|factor|). Three cases: stable, unstable, and one
// almost surely stable but not mean-square stable (p a² > 1 − p b²
// fails: E[x²] grows while log|x| falls).
func TestLyapunovScalarIID(t *testing.T) {
	cases := []struct {
		name           string
		a, b, ps, pa   float64
		as, meanSquare bool
	}{
		{"stable both ways", 1.1, 0.3, 0.1, 0.1, true, true},
		{"unstable", 1.6, 0.5, 0.4, 0.4, false, false},
		{"almost surely, not in mean square", 2.2, 0.2, 0.2, 0.2, true, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			loop := scalarLoop(c.a, c.b, 0.01, profile(iidChannel(c.ps, nil), iidChannel(c.pa, nil)))
			md, err := Build(loop, Options{})
			if err != nil {
				t.Fatal(err)
			}
			p := (1 - c.ps) * (1 - c.pa)
			want := p*math.Log(c.b) + (1-p)*math.Log(c.a)
			got, err := md.AlmostSure(false)
			if err != nil {
				t.Fatal(err)
			}
			se := (got.High - got.Exponent) / 2.0227
			t.Logf("λ = %.5f [%.5f, %.5f], closed form %.5f; mean-square stable %v", got.Exponent, got.Low, got.High, want, md.MeanSquareStable())
			if math.Abs(got.Exponent-want) > 4*se {
				t.Errorf("λ = %.5f ± %.2g, closed form %.5f", got.Exponent, se, want)
			}
			if (got.Stability == StabilityStable) != c.as || md.MeanSquareStable() != c.meanSquare {
				t.Errorf("almost surely %s, mean-square stable %v; want %v, %v", got.Stability, md.MeanSquareStable(), c.as, c.meanSquare)
			}
		})
	}
	// A deadbeat loop settles exactly on the first delivered command:
	// the product reaches zero and λ = −∞, said as stable, never NaN.
	md, err := Build(scalarLoop(1.5, 0, 0.01, profile(iidChannel(0.2, nil), nil)), Options{})
	if err != nil {
		t.Fatal(err)
	}
	if got, err := md.AlmostSure(false); err != nil || !math.IsInf(got.Exponent, -1) || got.Stability != StabilityStable {
		t.Errorf("deadbeat: %+v %v", got, err)
	}
}

// TestLyapunovBelowMeanSquareBound: on every example loop with an exact
// model, λ ≤ ½ log ρ(ℒ) (Jensen: E log‖z‖ ≤ ½ log E‖z‖²), to the
// estimate's statistical error, and every mean-square stable example is
// almost surely stable.
func TestLyapunovBelowMeanSquareBound(t *testing.T) {
	var files []string
	for _, dir := range []string{"loops", "checks", "demo"} {
		fs, _ := filepath.Glob(filepath.Join("..", "profiles", "examples", dir, "*.yaml"))
		files = append(files, fs...)
	}
	n := 0
	for _, f := range files {
		loop, err := profiles.LoadLoop(f)
		if err != nil {
			continue // profiles, scenarios
		}
		md, err := Build(loop, Options{})
		if err != nil {
			continue // no exact model (Monte Carlo)
		}
		rho := md.Radius().Value
		a, err := md.AlmostSure(false)
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		n++
		bound := 0.5 * math.Log(rho)
		t.Logf("%s: λ %.8g [%.8g, %.8g], ½ log ρ %.8g", filepath.Base(f), a.Exponent, a.Low, a.High, bound)
		// Near equality (modes that barely differ) the check is
		// statistical: λ may exceed the bound by its error only, taken
		// as three half-widths of its 95 % interval (batch means are
		// only nearly independent).
		if a.Exponent-3*(a.High-a.Exponent) > bound {
			t.Errorf("%s: λ ∈ [%.5f, %.5f] above ½ log ρ = %.5f", f, a.Low, a.High, bound)
		}
		if md.MeanSquareStable() && a.Stability != StabilityStable {
			t.Errorf("%s: mean-square stable but almost surely %s (λ %.5f [%.5f, %.5f])", f, a.Stability, a.Exponent, a.Low, a.High)
		}
	}
	if n < 5 {
		t.Fatalf("only %d example loops checked", n)
	}
}

// TestLyapunovLossMargin: for the scalar loop of TestLyapunovScalarIID,
// extra loss q on every packet makes p = ((1 − ps)(1 − q))² (both
// directions lose 0.2 here), and λ = p ln b + (1 − p) ln a crosses 0 at
// p* = ln a / (ln a − ln b): the margin must be q* = 1 − √p*/0.8 to the
// scan's step plus the estimate's error near the crossing (0.02).
func TestLyapunovLossMargin(t *testing.T) {
	const a, b = 2.2, 0.2
	md, err := Build(scalarLoop(a, b, 0.01, profile(iidChannel(0.2, nil), iidChannel(0.2, nil))), Options{})
	if err != nil {
		t.Fatal(err)
	}
	got, err := md.AlmostSure(true)
	if err != nil {
		t.Fatal(err)
	}
	pStar := math.Log(a) / (math.Log(a) - math.Log(b))
	want := 1 - math.Sqrt(pStar)/0.8
	t.Logf("almost-sure loss margin %.3f, closed form %.4f", got.LossMargin, want)
	if math.Abs(got.LossMargin-want) > 0.02 {
		t.Errorf("almost-sure loss margin %.3f, closed form %.4f", got.LossMargin, want)
	}
	if md.opts.ExtraLoss != 0 {
		t.Errorf("the scan left extra loss %g behind", md.opts.ExtraLoss)
	}
}

// TestSecondMomentNotConverging: samples of the loop that is almost
// surely but not mean-square stable (the scalar loop above, with process
// and sensor noise), fitted by the monitor's estimator, show a second
// moment that does not converge (one sample holds more than
// online.MaxSampleShare of the sum: x has a tail of index about
// ln(1/0.36)/ln(4.84) ≈ 0.65, no mean); the servo's samples, mean-square
// stable, converge.
func TestSecondMomentNotConverging(t *testing.T) {
	heavy := scalarLoop(2.2, 0.2, 0.01, profile(iidChannel(0.2, nil), iidChannel(0.2, nil)))
	heavy.Plant.W, heavy.Plant.V = dense([]float64{1e-4}), dense([]float64{1e-6})
	light := servo(profile(iidChannel(0.1, nil), iidChannel(0.1, nil)), 0)
	for _, c := range []struct {
		name       string
		loop       *profiles.Loop
		converging bool
	}{{"almost surely, not in mean square", heavy, false}, {"mean-square stable servo", light, true}} {
		on, err := online.New(online.Options{Setpoint: c.loop.Setpoint})
		if err != nil {
			t.Fatal(err)
		}
		e := make([]float64, 1)
		if _, err := Simulate(c.loop, SimOptions{Periods: 50000, Warmup: 100, Runs: 1, Seed: 5,
			OnSample: func(_, _ int, r, y []float64) {
				e[0] = r[0] - y[0]
				on.AddError(e)
			}}); err != nil {
			t.Fatal(err)
		}
		st := on.Run(nil)
		t.Logf("%s: largest sample %.3g of the sum; E[eᵀe] estimate %.3g", c.name, st.MaxShare, st.SecondMoment)
		if st.Converging() != c.converging {
			t.Errorf("%s: converging %v (max share %.3g), want %v", c.name, st.Converging(), st.MaxShare, c.converging)
		}
	}
}

// TestCertificateReuse: the certificate the stability test solves for at
// one extra loss proves stability at a nearby stable loss, and never at
// an unstable one (the scalar deadbeat loop with the holding actuator,
// whose threshold 1/(a(2a+1)) is closedform_test.go's); the loss margin
// that reuses certificates is that threshold's margin to 1e-4.
func TestCertificateReuse(t *testing.T) {
	const a = 1.5
	loop := scalarDeadbeat(a, 0.01, profile(iidChannel(0, nil), nil), profiles.HoldLast)
	md, err := Build(loop, Options{})
	if err != nil {
		t.Fatal(err)
	}
	// The extra loss q falls on samples and commands alike: with a static
	// controller the delivery probability is (1 − q)², so the critical
	// sample loss ℓ* = 1/(a(2a+1)) is reached at q* = 1 − √(1 − ℓ*).
	thr := 1 - math.Sqrt(1-1/(a*(2*a+1)))
	md.setLoss(0.5 * thr)
	ok, cert := md.meanSquareStableFrom(nil)
	if !ok || cert == nil {
		t.Fatalf("stable at half the threshold: %v, certificate %v", ok, cert != nil)
	}
	md.setLoss(0.505 * thr)
	ly := newLyapunov(md.SecondMomentOperator(), md.lm.nz, md.nStates())
	if !ly.certifies(cert) {
		t.Error("the certificate of 0.5× the threshold does not hold at 0.505×")
	}
	for _, f := range []float64{1.001, 1.1, 2} {
		md.setLoss(f * thr)
		ly := newLyapunov(md.SecondMomentOperator(), md.lm.nz, md.nStates())
		if ly.certifies(cert) {
			t.Errorf("a certificate proved stability at %g× the threshold", f)
		}
	}
	md.setLoss(0)
	if m := md.LossMargin(); math.Abs(m-thr) > 1e-4 {
		t.Errorf("loss margin %.6f, threshold %.6f", m, thr)
	}
}
