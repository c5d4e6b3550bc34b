package emulate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"testing/synctest"
	"time"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

func TestReleaseOnTime(t *testing.T) {
	// Under synctest the clock is exact: a datagram with delay D leaves at
	// arrival + D, to the nanosecond, whatever order they arrived in.
	synctest.Test(t, func(t *testing.T) {
		delays := []time.Duration{5 * time.Millisecond, 1 * time.Millisecond, 3 * time.Millisecond}
		p := &profiles.Profile{
			SensorToController:   oneState(0, &stepDelays{d: delays}),
			ControllerToActuator: oneState(0, nil),
		}
		rig := startFake(t, p, nil)
		start := time.Now()
		for i := range delays {
			rig.listen.push(sensorAddr, fmt.Appendf(nil, "s%d", i))
			synctest.Wait()
		}
		time.Sleep(10 * time.Millisecond)
		synctest.Wait()
		sent := rig.up.sent()
		if len(sent) != 3 {
			t.Fatalf("sent %d, want 3", len(sent))
		}
		wantOrder := []string{"s1", "s2", "s0"}
		for i, d := range sent {
			if string(d.data) != wantOrder[i] {
				t.Errorf("release %d: %q, want %q", i, d.data, wantOrder[i])
			}
			if d.addr != controllerAddr {
				t.Errorf("release %d went to %v", i, d.addr)
			}
		}
		for _, d := range sent {
			var i int
			fmt.Sscanf(string(d.data), "s%d", &i)
			if got := d.at.Sub(start); got != delays[i] {
				t.Errorf("%s released after %v, want %v", d.data, got, delays[i])
			}
		}
		if got := len(rig.tapped.sent()); got != 3 {
			t.Errorf("tap got %d copies, want 3", got)
		}
		rig.stop(t)
		if got := rig.count(profiles.SensorToController, OutcomeForwarded); got != 3 {
			t.Errorf("forwarded counter %d, want 3", got)
		}
	})
}

// releaseAll sends everything d holds, due or not, as its release
// goroutine would send what is due; batch and out are scratch of the same
// length.
func releaseAll(d *direction, batch []*packet, out []message) {
	for {
		d.mu.Lock()
		k := d.popDueLocked(math.MaxInt64, batch)
		d.mu.Unlock()
		if k == 0 {
			return
		}
		d.sendPopped(batch[:k], out[:k])
	}
}

// stepDelays is a delay law for tests that returns its delays in turn.
type stepDelays struct {
	d []time.Duration
	i int
}

func (s *stepDelays) Kind() string { return "test" }

func (s *stepDelays) Sample(*rand.Rand) float64 { x := s.d[s.i%len(s.d)]; s.i++; return x.Seconds() }

func (s *stepDelays) CDF(float64) float64 { return 0 }

func (s *stepDelays) Density(float64) float64 { return 0 }

func (s *stepDelays) Atoms() []laws.Atom { return nil }

func (s *stepDelays) Mean() float64 { return 0 }

func (s *stepDelays) Variance() float64 { return 0 }

func (s *stepDelays) Support() (lo, hi float64) { return 0, 1 }

func TestShutdownDrainsOnTime(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{
			SensorToController:   oneState(0, laws.Constant{Value: 0.2}),
			ControllerToActuator: oneState(0, laws.Constant{Value: 0.3}),
		}
		rig := startFake(t, p, nil)
		start := time.Now()
		rig.listen.push(sensorAddr, []byte("sample"))
		synctest.Wait()
		rig.up.push(controllerAddr, []byte("command"))
		synctest.Wait()
		rig.stop(t) // returns only once both are released
		if got := time.Since(start); got != 300*time.Millisecond {
			t.Errorf("Run returned after %v, want 300ms (the last due time)", got)
		}
		up, down := rig.up.sent(), rig.listen.sent()
		if len(up) != 1 || up[0].at.Sub(start) != 200*time.Millisecond {
			t.Errorf("sample: %+v, want one release at 200ms", up)
		}
		if len(down) != 1 || down[0].at.Sub(start) != 300*time.Millisecond || down[0].addr != sensorAddr {
			t.Errorf("command: %+v, want one release at 300ms to the sensor's address", down)
		}
	})
}

func TestAbortCountsWhatIsLeft(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{SensorToController: oneState(0, laws.Constant{Value: 10}), ControllerToActuator: oneState(0, nil)}
		rig := startFake(t, p, nil)
		for range 4 {
			rig.listen.push(sensorAddr, []byte("x"))
		}
		synctest.Wait()
		rig.cancel()
		synctest.Wait()
		close(rig.abort)
		if err := <-rig.done; err != nil {
			t.Fatal(err)
		}
		if got := rig.count(profiles.SensorToController, OutcomeShutdown); got != 4 {
			t.Errorf("shutdown counter %d, want 4", got)
		}
	})
}

func TestSendErrorCounted(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		p := &profiles.Profile{SensorToController: oneState(0, nil), ControllerToActuator: oneState(0, nil)}
		rig := startFake(t, p, nil)
		rig.up.failTo = controllerAddr
		rig.listen.push(sensorAddr, []byte("x"))
		synctest.Wait()
		rig.stop(t)
		if got := rig.count(profiles.SensorToController, OutcomeSendError); got != 1 {
			t.Errorf("send errors %d, want 1", got)
		}
	})
}
