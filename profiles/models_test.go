package profiles

import (
	"strings"
	"testing"
)

const formHead = "period: 10ms\nprofile: {sensor_to_controller: {loss: 0.1}}\n"

// TestModelFormsBad: improper or inconsistent plant and controller forms
// are refused with file, line, key and what was expected.
func TestModelFormsBad(t *testing.T) {
	siso := "plant: {transfer_function: [{num: [1], den: [1, 1]}]}\n"
	cases := map[string]string{
		"plant: {transfer_function: [{num: [1, 0], den: [1, 1]}]}\ncontroller: {d: [[1]]}\n":                                           "plant.transfer_function[0]: want a strictly proper transfer function",
		"plant: {transfer_function: [{num: [1, 0, 0], den: [1, 1]}]}\ncontroller: {d: [[1]]}\n":                                        "plant.transfer_function[0]: improper: the numerator's degree 2 is above the denominator's 1",
		"plant: {transfer_function: [{num: [1], den: [0, 0]}]}\ncontroller: {d: [[1]]}\n":                                              "plant.transfer_function[0].den: want a denominator that is not zero",
		"plant: {transfer_function: [{num: [1]}]}\ncontroller: {d: [[1]]}\n":                                                           "plant.transfer_function[0].den: missing (required)",
		"plant: {transfer_function: [{num: [1], den: [1, 1]}], process_noise: [[1]]}\ncontroller: {d: [[1]]}\n":                        "plant.process_noise: not with transfer_function",
		"plant: {a: [[-1]], b: [[1]], c: [[1]], transfer_function: [{num: [1], den: [1, 1]}]}\ncontroller: {d: [[1]]}\n":               "plant: want one form of the plant",
		"plant: {a: [[-1]], b: [[1]], c: [[1]], input_noise: 1}\ncontroller: {d: [[1]]}\n":                                             "plant.input_noise: only with transfer_function",
		"plant: {discrete: {a: [[-0.5]], b: [[1]], c: [[1]]}}\ncontroller: {d: [[1]]}\n":                                               "plant.discrete: Φ has the eigenvalue -0.5 on the closed negative real axis",
		"plant: {discrete: {a: [[0.9]], b: [[1]]}}\ncontroller: {d: [[1]]}\n":                                                          "plant.discrete.c: missing (required)",
		siso + "controller: {pid: {kp: 1}}\n":                                                                                          "controller.pid.method: missing (required)",
		siso + "controller: {pid: {kp: 1, method: bilinear}}\n":                                                                        "controller.pid.method: want one of tustin, backward_euler, forward_euler, zoh",
		siso + "controller: {pid: {kp: 0, method: tustin}}\n":                                                                          "controller.pid: want at least one of kp, ki, kd not zero",
		siso + "controller: {pid: {kp: 1, kd: 0.1, method: forward_euler}}\n":                                                          "controller.pid: forward_euler gives a controller that is not causal",
		siso + "controller: {pid: {kp: 1, kd: 0.1, method: zoh}}\n":                                                                    "controller.pid: zoh needs a proper C(s): give a derivative filter > 0",
		siso + "controller: {pid: {kp: 1, method: tustin}, d: [[1]]}\n":                                                                "controller.d: not with pid or transfer_function",
		siso + "controller: {transfer_function: {num: [1, 0, 0], den: [1, -1]}}\n":                                                     "controller.transfer_function: improper: the numerator's degree 2 is above the denominator's 1",
		siso + "controller: {pid: {kp: 1, method: tustin}, transfer_function: {num: [1], den: [1]}}\n":                                 "controller: want pid or transfer_function, got both",
		"plant: {transfer_function: [{num: [1], den: [1, 1]}, {num: [2], den: [1, 3]}]}\ncontroller: {pid: {kp: 1, method: tustin}}\n": "controller: want a plant with one input and one output for pid or transfer_function, got 1 inputs and 2 outputs",
	}
	for yaml, want := range cases {
		_, err := ParseLoop([]byte(formHead+yaml), "loop.yaml", "")
		if err == nil || !strings.Contains(err.Error(), want) || !strings.HasPrefix(err.Error(), "loop.yaml:") {
			t.Errorf("%s\n got %v\nwant loop.yaml:…%s", yaml, err, want)
		}
	}
	// A two-output plant from one input: realisations stacked.
	l, err := ParseLoop([]byte(formHead+"plant: {transfer_function: [{num: [1], den: [1, 1]}, {num: [2], den: [1, 3, 2]}], input_noise: 0.5}\ncontroller: {d: [[1, 0]]}\n"), "loop.yaml", "")
	if err != nil {
		t.Fatal(err)
	}
	if n, m, p, _ := l.Dims(); n != 3 || m != 1 || p != 2 || l.Plant.W.At(0, 0) != 0.5 || l.Plant.W.At(1, 1) != 0.5 || l.Plant.W.At(0, 1) != 0.5 {
		t.Errorf("stacked: n %d m %d p %d, W %v", n, m, p, l.Plant.W)
	}
}
