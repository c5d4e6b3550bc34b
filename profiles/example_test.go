package profiles_test

import (
	"fmt"
	"log"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// Load reads and validates a network profile file: here the warehouse
// Wi-Fi of a pick-and-place arm (a scenario of our own, in
// profiles/examples), each direction a two-state Markov channel. Every
// state carries its delay law; the channel states its long-run loss (the
// stationary mix of its states' losses).
func ExampleLoad() {
	p, err := profiles.Load("examples/profiles/warehouse-wifi.yaml")
	if err != nil {
		log.Fatal(err)
	}
	fmt.Println("profile:", p.Name)
	for _, d := range []struct {
		name string
		ch   *markov.Channel
	}{
		{profiles.SensorToController, p.SensorToController},
		{profiles.ControllerToActuator, p.ControllerToActuator},
	} {
		fmt.Printf("%s: long-run loss %.4f\n", d.name, d.ch.LongRunLoss())
		for _, s := range d.ch.States {
			fmt.Printf("  %-7s loss %-5g delay %s\n", s.Name, s.Loss, laws.Describe(s.Delay))
		}
	}
	// Output:
	// profile: warehouse-wifi
	// sensor_to_controller: long-run loss 0.0175
	//   clear   loss 0.002 delay lognormal median 1.2ms sigma 0.45 + 300µs
	//   fading  loss 0.25  delay gamma shape 2 scale 1.8ms + 1ms
	// controller_to_actuator: long-run loss 0.0064
	//   clear   loss 0.001 delay lognormal median 900µs sigma 0.35 + 300µs
	//   fading  loss 0.15  delay uniform 1.5ms…7ms
}

// Parse validates a profile held in memory; file names the source in
// error messages and dir is where relative paths (an empirical law's
// sample file, a trace) are resolved. A direction the text leaves out is
// a clean one: no loss, no delay.
func ExampleParse() {
	text := []byte(`
name: pump-skid-cable
sensor_to_controller:
  loss: 0.01
  delay: {kind: constant, value: 2ms}
`)
	p, err := profiles.Parse(text, "pump.yaml", ".")
	if err != nil {
		log.Fatal(err)
	}
	s := p.SensorToController.States[0]
	fmt.Printf("sensor: loss %g, delay %s\n", s.Loss, laws.Describe(s.Delay))
	c := p.ControllerToActuator.States[0]
	fmt.Printf("command: loss %g, delay %s\n", c.Loss, laws.Describe(c.Delay))

	// A mistake is named by file, line and key.
	_, err = profiles.Parse([]byte("sensor_to_controller:\n  loss: 1.5\n"), "pump.yaml", ".")
	fmt.Println(err)
	// Output:
	// sensor: loss 0.01, delay constant 2ms
	// command: loss 0, delay constant 0s
	// pump.yaml:2: sensor_to_controller.loss: want a number in [0, 1], got "1.5"
}
