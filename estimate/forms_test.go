package estimate

import (
	"fmt"
	"math"
	"math/cmplx"
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
)

// formsYAML is the servo (plant 3/(s(s + 2)), process noise W = diag(0,
// 0.04) — an intensity 0.04/9 at the input —, sensor noise 1e-6, the
// controller u = 12 e + 0.05 Σe, i.e. xc' = xc + 0.01 e, u = 5 xc + 12 e)
// over a lossy, delaying network, with the plant and the controller
// given as %s and %s.
const formsYAML = `period: 10ms
plant:
%s
  sensor_noise: [[1e-6]]
controller:
%s
setpoint: [0.5]
compute_delay: 0.5ms
profile:
  sensor_to_controller: {loss: 0.1, delay: {kind: gamma, shape: 2, scale: 1ms}}
  controller_to_actuator: {loss: 0.05, delay: {kind: uniform, min: 1ms, max: 6ms}}
`

// TestModelFormsPredictTheSame: the servo loop given with its plant as a
// continuous state space, as a transfer function, and as the state space
// sampled at the period by GNU Octave (c2d, and W_d by Van Loan's
// integral: testdata/reference/model_forms.{m,out}), and its controller
// as a state space, a discrete transfer function and PI gains discretised
// by forward Euler, predicts the same spectral radius and E[eᵀe] to 1e-9
// whichever forms are combined.
func TestModelFormsPredictTheSame(t *testing.T) {
	ref := readNamedValues(t, "testdata/reference/model_forms.out")
	mx := func(name string, r, c int) string {
		s := "["
		for i := 0; i < r; i++ {
			if i > 0 {
				s += ", "
			}
			s += "["
			for j := 0; j < c; j++ {
				if j > 0 {
					s += ", "
				}
				s += fmt.Sprintf("%.17g", ref[fmt.Sprintf("servo_%s_%d%d", name, i, j)])
			}
			s += "]"
		}
		return s + "]"
	}
	plants := map[string]string{
		"state space":       "  a: [[0, 1], [0, -2]]\n  b: [[0], [3]]\n  c: [[1, 0]]\n  process_noise: [[0, 0], [0, 0.04]]",
		"transfer function": "  transfer_function: [{num: [3], den: [1, 2, 0]}]\n  input_noise: 0.0044444444444444444",
		"sampled by Octave": fmt.Sprintf("  discrete: {a: %s, b: %s, c: [[1, 0]]}\n  process_noise: %s", mx("phi", 2, 2), mx("gamma", 2, 1), mx("wd", 2, 2)),
	}
	controllers := map[string]string{
		"state space":       "  {a: [[1]], b: [[0.01]], c: [[5]], d: [[12]]}",
		"transfer function": "  transfer_function: {num: [12, -11.95], den: [1, -1]}",
		"PI gains":          "  pid: {kp: 12, ki: 5, method: forward_euler}",
	}
	var first *Prediction
	for pn, pv := range plants {
		for cn, cv := range controllers {
			loop, err := profiles.ParseLoop([]byte(fmt.Sprintf(formsYAML, pv, cv)), "forms.yaml", "")
			if err != nil {
				t.Fatalf("plant %s, controller %s: %v", pn, cn, err)
			}
			pr, err := Predict(loop, PredictOptions{SkipMargin: true})
			if err != nil || pr.Error == nil {
				t.Fatalf("plant %s, controller %s: %v", pn, cn, err)
			}
			if first == nil {
				first = pr
				t.Logf("ρ %.12g, E[eᵀe] %.12g", pr.SpectralRadius, pr.Error.SecondMoment)
				continue
			}
			if d := math.Abs(pr.SpectralRadius - first.SpectralRadius); d > 1e-9 {
				t.Errorf("plant %s, controller %s: ρ %.12g, first form %.12g", pn, cn, pr.SpectralRadius, first.SpectralRadius)
			}
			if d := math.Abs(pr.Error.SecondMoment - first.Error.SecondMoment); d > 1e-9*first.Error.SecondMoment {
				t.Errorf("plant %s, controller %s: E[eᵀe] %.12g, first form %.12g", pn, cn, pr.Error.SecondMoment, first.Error.SecondMoment)
			}
		}
	}
}

// TestDiscretePlantAgainstOctave: the continuous plant the loader finds
// for the sampled servo is Octave's d2c of it, to 1e-9, and samples back
// to it (this package's Discretize) to 1e-12.
func TestDiscretePlantAgainstOctave(t *testing.T) {
	ref := readNamedValues(t, "testdata/reference/model_forms.out")
	yaml := fmt.Sprintf(formsYAML, fmt.Sprintf("  discrete: {a: [[%.17g, %.17g], [%.17g, %.17g]], b: [[%.17g], [%.17g]], c: [[1, 0]]}",
		ref["servo_phi_00"], ref["servo_phi_01"], ref["servo_phi_10"], ref["servo_phi_11"], ref["servo_gamma_00"], ref["servo_gamma_10"]),
		"  {d: [[1]]}")
	loop, err := profiles.ParseLoop([]byte(yaml), "d.yaml", "")
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 2; i++ {
		for j := 0; j < 2; j++ {
			if w := ref[fmt.Sprintf("servo_d2c_a_%d%d", i, j)]; math.Abs(loop.Plant.A.At(i, j)-w) > 1e-9 {
				t.Errorf("A[%d][%d] = %.15g, Octave d2c %.15g", i, j, loop.Plant.A.At(i, j), w)
			}
		}
		if w := ref[fmt.Sprintf("servo_d2c_b_%d0", i)]; math.Abs(loop.Plant.B.At(i, 0)-w) > 1e-9 {
			t.Errorf("B[%d] = %.15g, Octave d2c %.15g", i, loop.Plant.B.At(i, 0), w)
		}
	}
	s := Discretize(loop.Plant.A, loop.Plant.B, nil, 0.01)
	for i := 0; i < 2; i++ {
		for j := 0; j < 2; j++ {
			if d := math.Abs(s.Phi.At(i, j) - ref[fmt.Sprintf("servo_phi_%d%d", i, j)]); d > 1e-12 {
				t.Errorf("Φ[%d][%d] back: off by %.2g", i, j, d)
			}
		}
	}
	// A plant whose Φ has a negative eigenvalue samples no continuous one.
	bad := fmt.Sprintf(formsYAML, "  discrete: {a: [[-0.5]], b: [[1]], c: [[1]]}", "  {d: [[0.1]]}")
	if _, err := profiles.ParseLoop([]byte(bad), "bad.yaml", ""); err == nil {
		t.Error("Φ = −0.5 accepted")
	}
}

// TestPIDAgainstOctave: a PID with a derivative filter (kp 2, ki 1.5, kd
// 0.1, filter 20 ms) discretised at 10 ms by tustin and by zoh has the
// frequency response of Octave's c2d of the same C(s) (num/den committed
// in testdata/reference/model_forms.out) to 1e-9 relative, at z on the
// unit circle and off it.
func TestPIDAgainstOctave(t *testing.T) {
	ref := readNamedValues(t, "testdata/reference/model_forms.out")
	for _, method := range []string{"tustin", "zoh"} {
		pid := profiles.PID{Kp: 2, Ki: 1.5, Kd: 0.1, Filter: 0.02, Method: method}
		A, B, C, D, err := pid.Discrete(0.01)
		if err != nil {
			t.Fatal(err)
		}
		num := []float64{ref["pid_"+method+"_num0"], ref["pid_"+method+"_num1"], ref["pid_"+method+"_num2"]}
		den := []float64{ref["pid_"+method+"_den0"], ref["pid_"+method+"_den1"], ref["pid_"+method+"_den2"]}
		for _, z := range []complex128{cmplx.Rect(1, 0.3), cmplx.Rect(1, 2), complex(0.5, 0.2), complex(-0.7, 0)} {
			c := func(v float64) complex128 { return complex(v, 0) }
			want := (c(num[0])*z*z + c(num[1])*z + c(num[2])) / (c(den[0])*z*z + c(den[1])*z + c(den[2]))
			got := ssAt(A, B, C, D, z)
			if cmplx.Abs(got-want) > 1e-9*cmplx.Abs(want) {
				t.Errorf("%s at z = %v: %v, Octave %v", method, z, got, want)
			}
		}
	}
	if _, _, _, _, err := (profiles.PID{Kp: 1, Kd: 0.1, Method: "forward_euler"}).Discrete(0.01); err == nil {
		t.Error("a pure derivative by forward Euler (not causal) accepted")
	}
}

// ssAt evaluates C (zI − A)⁻¹ B + D of a single-input, single-output
// state space at z.
func ssAt(A, B, C, D *mat.Dense, z complex128) complex128 {
	if A == nil {
		return complex(D.At(0, 0), 0)
	}
	n, _ := A.Dims()
	m := mat.NewCDense(n, n, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			v := complex(-A.At(i, j), 0)
			if i == j {
				v += z
			}
			m.Set(i, j, v)
		}
	}
	// Solve (zI − A) x = B by Gaussian elimination in complex numbers.
	x := make([]complex128, n)
	a := make([][]complex128, n)
	for i := range a {
		a[i] = make([]complex128, n+1)
		for j := 0; j < n; j++ {
			a[i][j] = m.At(i, j)
		}
		a[i][n] = complex(B.At(i, 0), 0)
	}
	for c := 0; c < n; c++ {
		p := c
		for r := c + 1; r < n; r++ {
			if cmplx.Abs(a[r][c]) > cmplx.Abs(a[p][c]) {
				p = r
			}
		}
		a[c], a[p] = a[p], a[c]
		for r := c + 1; r < n; r++ {
			f := a[r][c] / a[c][c]
			for k := c; k <= n; k++ {
				a[r][k] -= f * a[c][k]
			}
		}
	}
	for r := n - 1; r >= 0; r-- {
		s := a[r][n]
		for k := r + 1; k < n; k++ {
			s -= a[r][k] * x[k]
		}
		x[r] = s / a[r][r]
	}
	out := complex(D.At(0, 0), 0)
	for i := 0; i < n; i++ {
		out += complex(C.At(0, i), 0) * x[i]
	}
	return out
}
