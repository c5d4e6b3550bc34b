package estimate_test

import (
	"bufio"
	"fmt"
	"math"
	"os"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"rigwire/estimate"
	"rigwire/profiles"
)

// Verdicts at the edges of the second-moment operator: loops whose plant
// is a chain of lightly damped modes (10, 16, 24 and 40 states, stable and
// unstable; two 16-state ones stable at ρ ≈ 0.999, and two whose modes
// cluster so that most of the operator's eigenvalues sit near 1 together
// and its determinant underflows — a determinant test then calls a stable
// loop unstable), marginal loops, huge but valid entries, and loops too
// large to predict. The predictions run in a child process
// (isolate_test.go), so that a hang or a runaway allocation is caught,
// measured and reported instead of stopping the test binary.

const (
	// chainRhoTol: ρ against the SciPy value of estimate/testdata/reference/chains.py,
	// the bar of the other independent comparisons.
	chainRhoTol = 1e-6
	// chainMomentTol: the steady E[eᵀe] against SciPy, relative.
	chainMomentTol = 1e-6
	// chainZ is how many Monte-Carlo standard errors the prediction may
	// be from the simulation (as tests/predict_test.go: a two-sided normal
	// test at level 6e-5).
	chainZ = 4
	// chainGrowth is how much an unstable loop's simulated E[eᵀe] must
	// grow between the first and the last 200 periods of 2000: with
	// ρ ≥ 1.06 it grows by e^100 or more, a stable one not at all.
	chainGrowth = 1e6
	// edgeTimeout is the bound on huge but valid entries: an
	// answer or an error within seconds, never a hang.
	edgeTimeout = 10 * time.Second
	// oversizeTime is the bound on refusing an oversized loop.
	oversizeTime = time.Second
	// oversizeGrowthKB bounds the growth of the resident size while an
	// oversized loop is refused ("without growing past a few hundred MB").
	oversizeGrowthKB = 300 << 10
	// edgeMaxRSSKB is where a child is killed to protect the machine.
	edgeMaxRSSKB = 1500 << 10
	// radiusSlack is rounding allowed beyond RadiusError when the exact ρ
	// is known (1 for a marginal loop).
	radiusSlack = 1e-12
)

// chainLoop is a row of K unit masses joined by springs k (the first tied
// to a wall, the last free), each on a mount of stiffness k0, Rayleigh
// damping αI + βS, a force on mass 1 and its position measured: the plant
// of estimate/testdata/reference/chains.py, built the same way so that the matrices
// agree to the last bit. The controller is u = d e; the network loses and
// delays (atoms only, so the Monte Carlo reuses its input splits), its
// command direction i.i.d. or a two-state bursty channel.
func chainLoop(c chainRef) string {
	K, k, k0, alpha, beta, d := c.K, c.k, c.k0, c.alpha, c.beta, c.d
	n := 2 * K
	S := make([][]float64, K)
	for i := range S {
		S[i] = make([]float64, K)
		S[i][i] = 2 * k
		if i == K-1 {
			S[i][i] = k
		}
		S[i][i] += k0
		if i > 0 {
			S[i][i-1], S[i-1][i] = -k, -k
		}
	}
	A := make([][]float64, n)
	W := make([][]float64, n)
	for i := range A {
		A[i] = make([]float64, n)
		W[i] = make([]float64, n)
	}
	for i := 0; i < K; i++ {
		A[i][K+i] = 1
		W[K+i][K+i] = 1e-4
		for j := 0; j < K; j++ {
			A[K+i][j] = -S[i][j]
			id := 0.0
			if i == j {
				id = 1
			}
			A[K+i][K+j] = -(alpha*id + beta*S[i][j])
		}
	}
	B := make([][]float64, n)
	for i := range B {
		B[i] = []float64{0}
	}
	B[K][0] = 1
	C := [][]float64{make([]float64, n)}
	C[0][0] = 1
	delays := `{kind: mixture, parts: [{weight: 0.7, kind: constant, value: 0.002},
      {weight: 0.2, kind: constant, value: 0.005}, {weight: 0.1, kind: constant, value: 0.0095}]}`
	command := "\n    loss: 0.1\n    delay: " + delays
	if c.channel == "bursty" {
		command = "\n    states:\n      - {name: good, mean_dwell: 2s, loss: 0.02, delay: " + delays + "}" +
			"\n      - {name: bad, mean_dwell: 0.2s, loss: 0.5, delay: 6ms}"
	}
	return fmt.Sprintf(`# A row of %d carriages coupled by springs on a conveyor track (invented, for tests).
period: 10ms
plant:
  a: %s
  b: %s
  c: %s
  process_noise: %s
  sensor_noise: [[1e-8]]
controller: {d: [[%s]]}
compute_delay: 0.0005
profile:
  name: carriage-track
  sensor_to_controller: {loss: 0.05, delay: 0.001}
  controller_to_actuator:%s
`, K, yamlMatrix(A), yamlMatrix(B), yamlMatrix(C), yamlMatrix(W), fmtFloat(d), command)
}

func yamlMatrix(m [][]float64) string {
	var b strings.Builder
	b.WriteString("[")
	for i, r := range m {
		if i > 0 {
			b.WriteString(", ")
		}
		b.WriteString("[")
		for j, v := range r {
			if j > 0 {
				b.WriteString(", ")
			}
			b.WriteString(fmtFloat(v))
		}
		b.WriteString("]")
	}
	b.WriteString("]")
	return b.String()
}

// chainRef is one line of chains.out.
type chainRef struct {
	name                  string
	K                     int
	k, k0, alpha, beta, d float64
	channel               string
	rho, secondMomentE2   float64
}

func readChains() ([]chainRef, error) {
	const path = "testdata/reference/chains.out"
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	var out []chainRef
	sc := bufio.NewScanner(f)
	line := 0
	for sc.Scan() {
		line++
		fs := strings.Fields(sc.Text())
		if len(fs) == 0 || strings.HasPrefix(fs[0], "#") {
			continue
		}
		// name K k k0 alpha beta d channel rho e2
		if len(fs) != 10 {
			return nil, fmt.Errorf("%s:%d: want 10 fields, got %d", path, line, len(fs))
		}
		var c chainRef
		c.name, c.channel = fs[0], fs[7]
		K, err := strconv.Atoi(fs[1])
		if err != nil {
			return nil, fmt.Errorf("%s:%d: K: %v", path, line, err)
		}
		c.K = K
		var nums [7]float64
		for i, f := range append(fs[2:7:7], fs[8:]...) {
			if nums[i], err = strconv.ParseFloat(f, 64); err != nil {
				return nil, fmt.Errorf("%s:%d: %q: %v", path, line, f, err)
			}
		}
		c.k, c.k0, c.alpha, c.beta, c.d, c.rho, c.secondMomentE2 = nums[0], nums[1], nums[2], nums[3], nums[4], nums[5], nums[6]
		out = append(out, c)
	}
	return out, sc.Err()
}

// predictCase runs Predict on a loop file in the child and reports its
// verdict, ρ, its error and E[eᵀe], and the time.
func predictCase(yaml string) childResult {
	var r childResult
	loop, err := profiles.ParseLoop([]byte(yaml), "loop.yaml", "")
	if err != nil {
		r.Err = "loop file: " + err.Error()
		r.str("stage", "load")
		return r
	}
	t0 := time.Now()
	pr, err := estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	r.took("predict", time.Since(t0))
	if err != nil {
		r.Err = err.Error()
		r.str("stage", "predict")
		return r
	}
	r.str("stability", pr.Stability)
	r.num("stable", b2f(pr.MeanSquareStable))
	r.num("rho", pr.SpectralRadius)
	r.num("rhoErr", pr.RadiusError)
	if pr.Error != nil {
		r.num("E[eᵀe]", pr.Error.SecondMoment)
	}
	return r
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

func init() {
	isolatedSuites["chains"] = func() ([]isolatedCase, error) {
		refs, err := readChains()
		if err != nil {
			return nil, err
		}
		var out []isolatedCase
		for _, c := range refs {
			y := chainLoop(c)
			out = append(out, isolatedCase{Name: c.name, Run: func() childResult { return predictCase(y) }})
		}
		return out, nil
	}
}

// TestChainVerdictsAgreeWithMonteCarlo: for each chain the prediction's
// verdict and ρ agree with SciPy (chains.out), and with the Monte-Carlo
// simulator (estimate.Simulate, which draws each period's fate from the
// profile's samplers and moves the plant by its exact sampling): a
// stable loop settles at the predicted E[eᵀe] within chainZ standard
// errors, an unstable one grows.
func TestChainVerdictsAgreeWithMonteCarlo(t *testing.T) {
	refs, err := readChains()
	if err != nil {
		t.Fatal(err)
	}
	_, outs := runIsolated(t, "chains", 60*time.Second, edgeMaxRSSKB)
	for i, c := range refs {
		o := outs[i]
		t.Run(c.name, func(t *testing.T) {
			stableRef := c.rho < 1
			if o.Result == nil {
				t.Fatalf("prediction of a %d-state chain: %s", 2*c.K, o.Failure)
			}
			r := o.Result
			if r.Err != "" {
				t.Fatalf("a valid %d-state loop must get an answer: %s", 2*c.K, r.Err)
			}
			t.Logf("%d states: Predict %v, verdict %s, ρ %.9f ± %.2g (SciPy %.9f)", 2*c.K,
				r.Took("predict").Round(time.Millisecond), r.Strs["stability"], r.Num("rho"), r.Num("rhoErr"), c.rho)
			if d := math.Abs(r.Num("rho") - c.rho); !(d <= chainRhoTol) {
				t.Errorf("ρ = %.12g, SciPy %.12g: off by %.3g, bar %g", r.Num("rho"), c.rho, d, chainRhoTol)
			}
			wantVerdict := estimate.StabilityUnstable
			if stableRef {
				wantVerdict = estimate.StabilityStable
			}
			if got := r.Strs["stability"]; got != wantVerdict {
				t.Errorf("verdict %q, want %q (ρ = %.9f by SciPy)", got, wantVerdict, c.rho)
			}
			if (r.Num("stable") == 1) != stableRef {
				t.Errorf("MeanSquareStable %v, want %v", r.Num("stable") == 1, stableRef)
			}
			loop, err := profiles.ParseLoop([]byte(chainLoop(c)), c.name+".yaml", "")
			if err != nil {
				t.Fatal(err)
			}
			if stableRef {
				pred := r.Num("E[eᵀe]")
				if rel := math.Abs(pred-c.secondMomentE2) / c.secondMomentE2; !(rel <= chainMomentTol) {
					t.Errorf("E[eᵀe] = %.12g, SciPy %.12g (%.3g relative, bar %g)", pred, c.secondMomentE2, rel, chainMomentTol)
				}
				checkSettles(t, loop, c, pred)
			} else {
				checkGrows(t, loop)
			}
		})
	}
}

// checkSettles simulates a stable chain long against its slowest mode
// (ρ^warm-up ≤ e^-5) and compares with the predicted E[eᵀe], within
// chainZ standard errors.
func checkSettles(t *testing.T, loop *profiles.Loop, c chainRef, pred float64) {
	t.Helper()
	decay := -math.Log(c.rho)         // per period
	warm := int(math.Ceil(5 / decay)) // ρ^warm ≤ e^-5
	periods := warm + int(15/decay)   // about 7 correlation times after it
	runs := 24
	t0 := time.Now()
	res, err := estimate.Simulate(loop, estimate.SimOptions{Periods: periods, Runs: runs, Warmup: warm, Seed: 20240610})
	if err != nil {
		t.Fatal(err)
	}
	z := (res.SecondMoment - pred) / res.StdErr
	t.Logf("Monte Carlo: %d runs × %d periods in %v: E[eᵀe] = %.4g ± %.2g (predicted %.4g, SciPy %.4g, z = %.2f)",
		runs, periods, time.Since(t0).Round(time.Millisecond), res.SecondMoment, res.StdErr, pred, c.secondMomentE2, z)
	if math.IsNaN(z) || math.Abs(z) > chainZ {
		t.Errorf("simulated E[eᵀe] %.4g ± %.2g, predicted %.4g: %.1f standard errors apart, bar %d",
			res.SecondMoment, res.StdErr, pred, z, chainZ)
	}
}

// checkGrows simulates an unstable chain for 2000 periods from rest and
// wants its error's energy to grow by chainGrowth at least.
func checkGrows(t *testing.T, loop *profiles.Loop) {
	t.Helper()
	const periods, window = 2000, 200
	res, err := estimate.Simulate(loop, estimate.SimOptions{Periods: periods, Runs: 1, Paths: 1, Seed: 20240611})
	if err != nil {
		t.Fatal(err)
	}
	path := res.Paths[0]
	energy := func(from, to int) float64 {
		s := 0.0
		for _, p := range path[from:to] {
			for _, e := range p.Error {
				s += e * e
			}
		}
		return s / float64(to-from)
	}
	early, late := energy(0, window), energy(periods-window, periods)
	t.Logf("Monte Carlo: mean eᵀe %.3g over the first %d periods, %.3g over the last", early, window, late)
	if !(late > chainGrowth*early) {
		t.Errorf("predicted unstable, but the simulated eᵀe went from %.3g to %.3g (want growth by %g)", early, late, chainGrowth)
	}
}

// The marginal loops: ρ is exactly 1 (an undamped plant or an integrator
// under a zero controller: the plant's own modes stay on the unit circle
// in every mode of the network), so the loop is not mean-square stable
// and must not be called stable.
var marginalLoops = []struct{ name, yaml string }{
	{"undamped_oscillator_zero_controller_lossy", `period: 10ms
plant: {a: [[0, 1], [-39.47841760435743, 0]], b: [[0], [1]], c: [[1, 0]], process_noise: [[0, 0], [0, 1e-4]]}
controller: {d: [[0]]}
compute_delay: 0.5ms
profile:
  sensor_to_controller: {loss: 0.1, delay: 1ms}
  controller_to_actuator: {loss: 0.05, delay: {kind: lognormal, median: 2ms, sigma: 0.5}}
`},
	{"undamped_oscillator_zero_controller_clean", `period: 10ms
plant: {a: [[0, 1], [-39.47841760435743, 0]], b: [[0], [1]], c: [[1, 0]], process_noise: [[0, 0], [0, 1e-4]]}
controller: {d: [[0]]}
profile: {}
`},
	{"undamped_1rad_s_zero_controller_clean", `period: 10ms
plant: {a: [[0, 1], [-1, 0]], b: [[0], [1]], c: [[1, 0]], process_noise: [[0, 0], [0, 1e-4]]}
controller: {d: [[0]]}
profile: {}
`},
	{"undamped_1rad_s_zero_controller_sensor_loss", `period: 10ms
plant: {a: [[0, 1], [-1, 0]], b: [[0], [1]], c: [[1, 0]], process_noise: [[1e-3, 0], [0, 1e-3]]}
controller: {d: [[0]]}
profile: {sensor_to_controller: {loss: 0.1, delay: 1ms}}
`},
	{"integrator_zero_controller", `period: 20ms
plant: {a: [[0]], b: [[1]], c: [[1]], process_noise: [[1e-3]]}
controller: {d: [[0]]}
profile:
  sensor_to_controller: {loss: 0.02, delay: 2ms}
`},
}

// hugeLoops are valid loops with entries at the edge of float64.
var hugeLoops = []struct{ name, yaml string }{
	{"plant_a_1e5_at_10ms", `period: 10ms
plant: {a: [[1e5]], b: [[1]], c: [[1]]}
controller: {d: [[0.5]]}
profile:
  sensor_to_controller: {loss: 0.01, delay: {kind: gamma, shape: 0.5, scale: 1ms, shift: 0.2ms}}
  controller_to_actuator: {loss: 0.01, delay: 1ms}
`},
	{"controller_d_1e300", `period: 10ms
plant: {a: [[-1]], b: [[1]], c: [[1]], process_noise: [[1e-4]]}
controller: {d: [[1e300]]}
profile:
  sensor_to_controller: {loss: 0.01, delay: {kind: lognormal, median: 1ms, sigma: 1.5}}
  controller_to_actuator: {loss: 0.01, delay: 1ms}
`},
	{"stiff_stable_plant_a_minus_1e5", `period: 10ms
plant: {a: [[-1e5]], b: [[1]], c: [[1]], process_noise: [[1e-4]]}
controller: {d: [[0.5]]}
profile:
  sensor_to_controller: {loss: 0.01, delay: 1ms}
  controller_to_actuator: {loss: 0.01, delay: 1ms}
`},
}

func init() {
	isolatedSuites["marginal"] = func() ([]isolatedCase, error) {
		var out []isolatedCase
		for _, c := range marginalLoops {
			out = append(out, isolatedCase{Name: c.name, Run: func() childResult { return predictCase(c.yaml) }})
		}
		return out, nil
	}
	isolatedSuites["huge"] = func() ([]isolatedCase, error) {
		var out []isolatedCase
		for _, c := range hugeLoops {
			out = append(out, isolatedCase{Name: c.name, Run: func() childResult { return predictCase(c.yaml) }})
		}
		return out, nil
	}
}

func TestMarginalLoopNotCalledStable(t *testing.T) {
	_, outs := runIsolated(t, "marginal", edgeTimeout, edgeMaxRSSKB)
	for i, c := range marginalLoops {
		o := outs[i]
		t.Run(c.name, func(t *testing.T) {
			if o.Result == nil {
				t.Fatal(o.Failure)
			}
			r := o.Result
			if r.Err != "" {
				t.Fatalf("a valid loop must get an answer: %s", r.Err)
			}
			rho, rerr := r.Num("rho"), r.Num("rhoErr")
			t.Logf("verdict %s, ρ = %.17g ± %.3g", r.Strs["stability"], rho, rerr)
			if st := r.Strs["stability"]; st == estimate.StabilityStable || r.Num("stable") == 1 {
				t.Errorf("called stable (ρ = %.17g) though ρ is exactly 1", rho)
			} else if st != estimate.StabilityMarginal && st != estimate.StabilityUnstable {
				t.Errorf("verdict %q, want marginal or unstable", st)
			}
			if r.Has("E[eᵀe]") {
				t.Errorf("steady E[eᵀe] = %v reported for a loop that is not mean-square stable", r.Num("E[eᵀe]"))
			}
			if math.IsNaN(rho) || math.IsInf(rho, 0) || math.IsNaN(rerr) || math.IsInf(rerr, 0) {
				t.Fatalf("ρ = %v ± %v, want finite numbers", rho, rerr)
			}
			// The true ρ is 1: the stated error must cover it.
			if !(math.Abs(rho-1) <= rerr+radiusSlack) {
				t.Errorf("ρ = %.17g ± %.3g does not cover the exact value 1", rho, rerr)
			}
		})
	}
}

func TestHugeEntriesAnswerOrRefuse(t *testing.T) {
	_, outs := runIsolated(t, "huge", edgeTimeout, edgeMaxRSSKB)
	for i, c := range hugeLoops {
		o := outs[i]
		t.Run(c.name, func(t *testing.T) {
			if o.Result == nil {
				t.Fatalf("want an answer or a clear error within %v: %s", edgeTimeout, o.Failure)
			}
			r := o.Result
			if r.Err != "" {
				t.Logf("refused in %v: %s", r.Took("predict").Round(time.Millisecond), r.Err)
				return
			}
			t.Logf("answered in %v: %s, ρ = %v ± %v", r.Took("predict").Round(time.Millisecond),
				r.Strs["stability"], r.Num("rho"), r.Num("rhoErr"))
			for _, k := range []string{"rho", "rhoErr"} {
				if v := r.Num(k); math.IsNaN(v) || math.IsInf(v, 0) {
					t.Errorf("%s = %v: an answer must be finite (or the input refused with a clear error)", k, v)
				}
			}
			switch st := r.Strs["stability"]; st {
			case estimate.StabilityStable:
				if v := r.Num("E[eᵀe]"); math.IsNaN(v) || math.IsInf(v, 0) {
					t.Errorf("stable, but E[eᵀe] = %v", v)
				}
			case estimate.StabilityMarginal, estimate.StabilityUnstable:
			default:
				t.Errorf("verdict %q", st)
			}
		})
	}
}

// Oversized loops: a 150-state plant (a 90 KB file), and a 3-state plant
// under two 64-state channels (the format's maximum; 4096 joint states).
// Their second-moment operators would have sides of about 11 000 and
// 41 000 (a dense matrix of 1 GB and 13 GB): they must be refused up front,
// within oversizeTime and without the process growing by more than
// oversizeGrowthKB, by Build and by Predict, with an error that names the
// limit.
var limitWords = regexp.MustCompile(`(?i)limit|at most|maximum`)

func bigPlantLoop(n int) string {
	A := make([][]float64, n)
	for i := range A {
		A[i] = make([]float64, n)
		A[i][i] = -1
		if i+1 < n {
			A[i][i+1] = 0.5
		}
	}
	B := make([][]float64, n)
	for i := range B {
		B[i] = []float64{0}
	}
	B[n-1][0] = 1
	C := [][]float64{make([]float64, n)}
	C[0][0] = 1
	return fmt.Sprintf(`period: 10ms
plant: {a: %s, b: %s, c: %s}
controller: {d: [[0.1]]}
profile:
  sensor_to_controller: {loss: 0.01, delay: 1ms}
  controller_to_actuator: {loss: 0.01, delay: 1ms}
`, yamlMatrix(A), yamlMatrix(B), yamlMatrix(C))
}

func bigChannelLoop(states int) string {
	ch := func(prefix string) string {
		var b strings.Builder
		b.WriteString("\n    states:\n")
		for i := 0; i < states; i++ {
			fmt.Fprintf(&b, "      - {name: %s%d, mean_dwell: 1s, loss: %s, delay: %dus, next: {%s%d: 1}}\n",
				prefix, i, fmtFloat(float64(i)/float64(2*states)), 100+10*i, prefix, (i+1)%states)
		}
		return b.String()
	}
	return fmt.Sprintf(`period: 10ms
plant: {a: [[-1, 1, 0], [0, -2, 1], [0, 0, -3]], b: [[0], [0], [1]], c: [[1, 0, 0]]}
controller: {d: [[0.5]]}
profile:
  sensor_to_controller:%s  controller_to_actuator:%s`, ch("s"), ch("a"))
}

var oversizedLoops = []struct{ name, yaml string }{
	{"plant_150_states", bigPlantLoop(150)},
	{"channels_64x64_plant_3", bigChannelLoop(64)},
}

// oversizedCase parses the loop, resets the peak resident size
// (/proc/self/clear_refs, 5: Linux's proc(5)), and times Build or Predict.
func oversizedCase(yaml string, predict bool) childResult {
	var r childResult
	loop, err := profiles.ParseLoop([]byte(yaml), "big.yaml", "")
	if err != nil {
		r.Err = "loop file: " + err.Error()
		r.str("stage", "load")
		return r
	}
	reset := os.WriteFile("/proc/self/clear_refs", []byte("5"), 0) == nil
	r.num("hwmReset", b2f(reset))
	r.num("rssBeforeKB", float64(selfKB("VmRSS")))
	r.num("hwmBeforeKB", float64(selfKB("VmHWM")))
	t0 := time.Now()
	if predict {
		_, err = estimate.Predict(loop, estimate.PredictOptions{SkipMargin: true})
	} else {
		_, err = estimate.Build(loop, estimate.Options{})
	}
	r.took("call", time.Since(t0))
	r.num("hwmAfterKB", float64(selfKB("VmHWM")))
	if err != nil {
		r.Err = err.Error()
		r.str("stage", "call")
	}
	return r
}

func init() {
	isolatedSuites["oversized"] = func() ([]isolatedCase, error) {
		var out []isolatedCase
		for _, c := range oversizedLoops {
			for _, predict := range []bool{false, true} {
				name := c.name + "/Build"
				if predict {
					name = c.name + "/Predict"
				}
				out = append(out, isolatedCase{Name: name, Run: func() childResult { return oversizedCase(c.yaml, predict) }})
			}
		}
		return out, nil
	}
}

func TestOversizedLoopRefusedQuickly(t *testing.T) {
	cases, outs := runIsolated(t, "oversized", edgeTimeout, edgeMaxRSSKB)
	for i, c := range cases {
		o := outs[i]
		t.Run(c.Name, func(t *testing.T) {
			if o.Result == nil {
				t.Fatalf("want a refusal within %v: %s (peak resident size %d MB)", oversizeTime, o.Failure, o.PeakRSSKB>>10)
			}
			r := o.Result
			if r.Strs["stage"] == "load" {
				t.Fatalf("the loader refused a valid loop: %s", r.Err)
			}
			took := r.Took("call")
			growth := int64(r.Num("hwmAfterKB") - r.Num("rssBeforeKB"))
			if r.Num("hwmReset") != 1 {
				growth = int64(r.Num("hwmAfterKB") - r.Num("hwmBeforeKB")) // peak not reset: a lower bound
			}
			t.Logf("%v, resident size grew by %d MB at its peak; error: %s", took.Round(time.Microsecond), growth>>10, r.Err)
			if r.Err == "" {
				t.Errorf("answered; want the documented refusal naming the limit")
			} else if !limitWords.MatchString(r.Err) {
				t.Errorf("refusal %q does not name the limit", r.Err)
			}
			if took > oversizeTime {
				t.Errorf("took %v, over the bar of %v", took, oversizeTime)
			}
			if growth > oversizeGrowthKB {
				t.Errorf("resident size grew by %d MB, over the bound of %d MB", growth>>10, oversizeGrowthKB>>10)
			}
		})
	}
}
