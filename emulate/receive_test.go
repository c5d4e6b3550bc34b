package emulate

import (
	"strings"
	"testing"
	"testing/synctest"
	"time"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

func TestRejections(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{SensorToController: oneState(0, laws.Constant{Value: 0.001}), ControllerToActuator: oneState(0, nil)}
		rig := startFake(t, p, func(c *Config) {
			c.Sensor = sensorAddr
			c.MaxDatagram = 100
			c.MaxInFlight = 3
		})
		rig.listen.push(strangerAddr, []byte("not the rig"))
		rig.up.push(strangerAddr, []byte("not the controller"))
		rig.listen.push(sensorAddr, make([]byte, 101))
		for range 5 { // 3 fit in flight, 2 overflow
			rig.listen.push(sensorAddr, make([]byte, 100))
		}
		synctest.Wait()
		time.Sleep(5 * time.Millisecond)
		synctest.Wait()
		rig.stop(t)
		sc, ca := profiles.SensorToController, profiles.ControllerToActuator
		for _, c := range []struct {
			dir, outcome string
			want         int
		}{
			{sc, OutcomeStranger, 1}, {ca, OutcomeStranger, 1}, {sc, OutcomeOversized, 1},
			{sc, OutcomeOverflow, 2}, {sc, OutcomeForwarded, 3},
		} {
			if got := rig.count(c.dir, c.outcome); got != c.want {
				t.Errorf("%s %s: %d, want %d", c.dir, c.outcome, got, c.want)
			}
		}
		if got := len(rig.tapped.sent()); got != 5 {
			t.Errorf("tap got %d, want the 5 accepted sensor datagrams", got)
		}
		lines := strings.Count(rig.record.String(), "\n") - 3
		if lines != 8 {
			t.Errorf("record has %d lines, want one per datagram (8):\n%s", lines, rig.record)
		}
	})
}
