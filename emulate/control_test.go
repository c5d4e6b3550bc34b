package emulate

import (
	"testing"
	"testing/synctest"
	"time"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

func TestReloadKeepsInFlight(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		slow := &profiles.Profile{SensorToController: oneState(0, laws.Constant{Value: 0.05}), ControllerToActuator: oneState(0, nil)}
		lossy := &profiles.Profile{SensorToController: oneState(1, nil), ControllerToActuator: oneState(0, nil)}
		rig := startFake(t, slow, nil)
		start := time.Now()
		rig.listen.push(sensorAddr, []byte("before"))
		synctest.Wait()
		rig.relay.Reload(lossy)
		rig.listen.push(sensorAddr, []byte("after"))
		synctest.Wait()
		time.Sleep(100 * time.Millisecond)
		synctest.Wait()
		rig.stop(t)
		sent := rig.up.sent()
		if len(sent) != 1 || string(sent[0].data) != "before" || sent[0].at.Sub(start) != 50*time.Millisecond {
			t.Fatalf("sent %+v, want only \"before\" at 50ms", sent)
		}
		if got := rig.count(profiles.SensorToController, OutcomeDropped); got != 1 {
			t.Errorf("dropped %d, want 1 (the datagram after the reload)", got)
		}
	})
}
