package estimate

import (
	"fmt"
	"math"
	"math/cmplx"
	"testing"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// sineRef is a reference of amplitude a and phase φ (degrees) on every
// output.
func sineRef(p int, a, phaseDeg float64) profiles.Reference {
	r := profiles.Reference{Kind: profiles.ReferenceSine, Frequencies: []float64{1}}
	for range p {
		r.Amplitude = append(r.Amplitude, a)
		r.Phase = append(r.Phase, phaseDeg*math.Pi/180)
	}
	return r
}

// harmonicLoops are the loops of the frequency-response checks: the servo
// over an i.i.d. lossy, delaying channel, also with an actuator that
// zeroes its input unless a fresh command is in force; the servo over
// burst channels; the scalar integrator with a four-period command horizon (the long
// chain) over a burst channel.
func harmonicLoops() map[string]*profiles.Loop {
	ms := 1e-3
	iid := profile(iidChannel(0.1, must(laws.NewGamma(2, 1.5*ms, 0))), iidChannel(0.15, must(laws.NewUniform(1*ms, 6*ms))))
	burst := profile(twoState(0.5, 0.02, must(laws.NewConstant(1*ms)), 0.1, 0.6, must(laws.NewUniform(2*ms, 8*ms))),
		twoState(0.8, 0.01, must(laws.NewLognormal(2*ms, 0.4, 0)), 0.2, 0.4, must(laws.NewConstant(7*ms))))
	long := profile(nil, twoState(0.5, 0.02, must(laws.NewLognormal(8*ms, 0.5, 0)), 0.2, 0.3, must(laws.NewGamma(2, 6*ms, 12*ms))))
	zero := servo(iid, 0)
	zero.Actuator.OnLoss = profiles.ZeroUnlessFresh
	return map[string]*profiles.Loop{
		"servo, zero unless fresh":    zero,
		"servo, i.i.d.":               servo(iid, 0.5*ms),
		"servo, burst":                servo(burst, 0),
		"integrator, 4-period, burst": scalarIntegrator(0.3, 0.2, 1e-4, 1e-6, 4, long),
	}
}

// TestHarmonicZeroFrequency: at frequency 0 the reference is the constant
// setpoint + Re(R) = setpoint + A sin φ, so the mean and the second moment
// at θ = 0 must be today's constant-setpoint prediction (Steady) for that
// setpoint, in the one-period model and in the long chain.
func TestHarmonicZeroFrequency(t *testing.T) {
	for name, loop := range harmonicLoops() {
		t.Run(name, func(t *testing.T) {
			md, err := Build(loop, Options{})
			if err != nil {
				t.Fatal(err)
			}
			ref := sineRef(1, 0.3, 50)
			hs, err := md.FrequencyResponse(ref, []float64{0})
			if err != nil {
				t.Fatal(err)
			}
			h := hs[0]
			sp := *loop
			sp.Setpoint = []float64{loop.Setpoint[0] + 0.3*math.Sin(50*math.Pi/180)}
			md2, err := Build(&sp, Options{})
			if err != nil {
				t.Fatal(err)
			}
			mo, err := md2.Steady()
			if err != nil {
				t.Fatal(err)
			}
			st := md2.Error(mo)
			mean := h.ErrorOffset[0] + real(h.Error[0])
			v := h.Variance[0] + real(h.VarianceFirst[0]) + real(h.VarianceSecond[0])
			second := mean*mean + v
			if math.Abs(mean-st.Mean[0]) > 1e-9*math.Max(1, math.Abs(st.Mean[0])) {
				t.Errorf("E[e]: harmonic %.12g, steady %.12g", mean, st.Mean[0])
			}
			if math.Abs(second-st.SecondMoment) > 1e-9*st.SecondMoment {
				t.Errorf("E[eᵀe]: harmonic %.12g, steady %.12g", second, st.SecondMoment)
			}
			t.Logf("E[e] %.6g, E[eᵀe] %.6g", st.Mean[0], st.SecondMoment)
		})
	}
}

// TestHarmonicConsistency: across frequencies the answers are finite,
// the phase-averaged variance is ≥ 0 and ≤ its peak, Error = R − Output,
// and the second moment adds up.
func TestHarmonicConsistency(t *testing.T) {
	for name, loop := range harmonicLoops() {
		md, err := Build(loop, Options{})
		if err != nil {
			t.Fatal(err)
		}
		nyq := 1 / (2 * loop.Period)
		hs, err := md.FrequencyResponse(sineRef(1, 0.2, 0), []float64{0.01, 1, 10, 0.5 * nyq, 0.999 * nyq})
		if err != nil {
			t.Fatal(err)
		}
		for _, h := range hs {
			if cmplx.Abs(h.Error[0]-(h.Reference[0]-h.Output[0])) > 1e-12 {
				t.Errorf("%s %g Hz: error ≠ R − Y", name, h.Frequency)
			}
			if !(h.Spread >= 0) || !(h.SpreadPeak >= h.Spread-1e-15) || math.IsInf(h.SpreadPeak, 0) {
				t.Errorf("%s %g Hz: spread %g, peak %g", name, h.Frequency, h.Spread, h.SpreadPeak)
			}
			sq := h.ErrorOffset[0]*h.ErrorOffset[0] + math.Pow(cmplx.Abs(h.Error[0]), 2)/2 + h.Spread
			if math.Abs(sq-h.SecondMoment) > 1e-12*sq {
				t.Errorf("%s %g Hz: E[eᵀe] %g, parts add to %g", name, h.Frequency, h.SecondMoment, sq)
			}
			g, ph := Gain(h.Output[0], h.Reference[0])
			t.Logf("%s %8.3f Hz: gain %.4f phase %7.2f°, spread %.4g (peak %.4g), nominal gain %.4f", name, h.Frequency, g, ph, h.Spread, h.SpreadPeak, cmplx.Abs(h.Nominal.Output[0]/h.Reference[0]))
		}
	}
}

// TestHarmonicLossFreeAgainstSciPy: over a network that delivers every
// datagram at once, the predicted mean response is the classical
// discrete-time closed-loop frequency response T(e^{jωh}) R, and the
// spread at every frequency is the noise-only variance of the same
// linear loop (the reference does not change it): both against SciPy's
// dfreqresp and solve_discrete_lyapunov, committed in
// testdata/reference/frequency_response.{py,out} with the command, to
// 1e-9 relative to the reference's amplitude (the response) and to the
// variance.
func TestHarmonicLossFreeAgainstSciPy(t *testing.T) {
	want := readNamedValues(t, "testdata/reference/frequency_response.out")
	ideal := profile(nil, nil) // no loss, no delay
	servoLoop := servo(ideal, 0)
	mimo := &profiles.Loop{
		Period: 0.02,
		Plant: profiles.Plant{
			A: dense([]float64{-1, 0.5}, []float64{0.2, -2}), B: dense([]float64{1, 0}, []float64{0, 1}),
			C: dense([]float64{1, 0}, []float64{0, 1}),
			W: dense([]float64{0.01, 0}, []float64{0, 0.02}), V: dense([]float64{1e-4, 0}, []float64{0, 2e-4}),
		},
		Controller: profiles.Controller{D: dense([]float64{3, 0.5}, []float64{0, 4})},
		Setpoint:   []float64{0.2, -0.1},
		Compute:    laws.Constant{},
		Profile:    ideal,
	}
	mimoRef := profiles.Reference{Kind: profiles.ReferenceSine, Amplitude: []float64{1, 0.5}, Phase: []float64{0, math.Pi / 2}}
	cases := []struct {
		name  string
		loop  *profiles.Loop
		ref   profiles.Reference
		freqs []float64
	}{
		{"servo", servoLoop, sineRef(1, 0.5, 0), []float64{0.05, 0.5, 1, 3, 20, 45}},
		{"mimo", mimo, mimoRef, []float64{0.1, 1, 5, 12}},
	}
	for _, c := range cases {
		md, err := Build(c.loop, Options{})
		if err != nil {
			t.Fatal(err)
		}
		hs, err := md.FrequencyResponse(c.ref, c.freqs)
		if err != nil {
			t.Fatal(err)
		}
		for _, h := range hs {
			for i, y := range h.Output {
				key := fmt.Sprintf("%s_f%g_y%d_", c.name, h.Frequency, i)
				re, ok1 := want[key+"re"]
				im, ok2 := want[key+"im"]
				if !ok1 || !ok2 {
					t.Fatalf("%s: not in the reference file", key)
				}
				scale := c.ref.Amplitude[0]
				if d := cmplx.Abs(y - complex(re, im)); d > 1e-9*scale {
					t.Errorf("%s: Y = %.12g, SciPy %.12g (|Δ| %.2g)", key, y, complex(re, im), d)
				}
				if d := cmplx.Abs(h.Nominal.Output[i] - complex(re, im)); d > 1e-9*scale {
					t.Errorf("%s: nominal Y = %.12g, SciPy %.12g", key, h.Nominal.Output[i], complex(re, im))
				}
				v := want[fmt.Sprintf("%s_var%d", c.name, i)]
				if math.Abs(h.Variance[i]-v) > 1e-9*v || math.Abs(h.Nominal.Variance[i]-v) > 1e-9*v {
					t.Errorf("%s %g Hz output %d: variance %.12g (nominal %.12g), SciPy %.12g", c.name, h.Frequency, i, h.Variance[i], h.Nominal.Variance[i], v)
				}
				// Linear loop: the variance does not move with the phase.
				if cmplx.Abs(h.VarianceFirst[i])+cmplx.Abs(h.VarianceSecond[i]) > 1e-9*v {
					t.Errorf("%s %g Hz output %d: the variance moves with the phase (%g, %g)", c.name, h.Frequency, i, h.VarianceFirst[i], h.VarianceSecond[i])
				}
			}
		}
	}
}
