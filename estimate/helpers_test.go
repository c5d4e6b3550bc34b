package estimate

import (
	"math"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// Test helpers that build loops in code, without the loop-file loader.

func iidChannel(loss float64, d laws.Delay) *markov.Channel {
	if d == nil {
		d = laws.Constant{}
	}
	return &markov.Channel{States: []markov.State{{MeanDwell: math.Inf(1), Loss: loss, Delay: d}}}
}

// twoState is a Gilbert–Elliott channel (Gilbert 1960, Elliott 1963):
// a good and a bad state with their mean dwell times.
func twoState(dwellGood, lossGood float64, dGood laws.Delay, dwellBad, lossBad float64, dBad laws.Delay) *markov.Channel {
	return &markov.Channel{States: []markov.State{
		{Name: "good", MeanDwell: dwellGood, Loss: lossGood, Delay: dGood, Jump: []float64{0, 1}},
		{Name: "bad", MeanDwell: dwellBad, Loss: lossBad, Delay: dBad, Jump: []float64{1, 0}},
	}}
}

func profile(sc, ca *markov.Channel) *profiles.Profile {
	if sc == nil {
		sc = iidChannel(0, nil)
	}
	if ca == nil {
		ca = iidChannel(0, nil)
	}
	return &profiles.Profile{Name: "test", SensorToController: sc, ControllerToActuator: ca}
}

func dense(rows ...[]float64) *mat.Dense {
	m := mat.NewDense(len(rows), len(rows[0]), nil)
	for i, r := range rows {
		m.SetRow(i, r)
	}
	return m
}

// scalarDeadbeat is the loop of the closed-form checks: a scalar plant
// whose sampled pole is a (A = ln(a)/h, B = 1, C = 1), the deadbeat static
// controller u = (a/Γ) e with Γ = (a − 1)/A, setpoint 0, no noise.
func scalarDeadbeat(a, h float64, prof *profiles.Profile, policy profiles.ActuatorPolicy) *profiles.Loop {
	ac := math.Log(a) / h
	gamma := (a - 1) / ac
	return &profiles.Loop{
		Period: h,
		Plant: profiles.Plant{
			A: dense([]float64{ac}), B: dense([]float64{1}), C: dense([]float64{1}),
			W: dense([]float64{0}), V: dense([]float64{0}),
		},
		Controller: profiles.Controller{D: dense([]float64{a / gamma})},
		Setpoint:   []float64{0},
		Profile:    prof,
		Actuator:   profiles.Actuator{OnLoss: policy},
	}
}

// servo is a smooth test loop: a DC motor position plant
// (A = [[0, 1], [0, −2]], B = [0; 3], C = [1, 0]) with process and sensor
// noise, a PI-like dynamic controller, setpoint 0.5 — the loop of
// profiles/testdata/loops/good.yaml, with a profile of the caller's.
func servo(prof *profiles.Profile, c float64) *profiles.Loop {
	return &profiles.Loop{
		Period: 0.01,
		Plant: profiles.Plant{
			A: dense([]float64{0, 1}, []float64{0, -2}),
			B: dense([]float64{0}, []float64{3}),
			C: dense([]float64{1, 0}),
			W: dense([]float64{0, 0}, []float64{0, 0.04}),
			V: dense([]float64{1e-6}),
		},
		Controller: profiles.Controller{
			A: dense([]float64{1}), B: dense([]float64{0.01}),
			C: dense([]float64{5}), D: dense([]float64{12}),
		},
		Setpoint: []float64{0.5},
		Compute:  laws.Constant{Value: c},
		Profile:  prof,
	}
}
