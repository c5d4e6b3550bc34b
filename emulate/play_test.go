package emulate

import (
	"context"
	"errors"
	"testing"
	"testing/synctest"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"

	"rigwire/emulate/trip"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// constSC is a profile whose sensor datagrams all take delay d.
func constSC(d time.Duration) *profiles.Profile {
	return &profiles.Profile{SensorToController: oneState(0, laws.Constant{Value: d.Seconds()}), ControllerToActuator: oneState(0, nil)}
}

func TestPlaySteps(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		rig := startFake(t, constSC(time.Millisecond), nil)
		steps := []profiles.ScenarioStep{
			{At: 0, Phase: 0, Profile: constSC(10 * time.Millisecond)},
			{At: 100 * time.Millisecond, Phase: 1, Profile: constSC(4 * time.Millisecond)},
		}
		names := []string{"calm", "congested"}
		applied := make(chan profiles.ScenarioStep, len(steps))
		start := time.Now()
		done := make(chan error, 1)
		go func() {
			done <- rig.relay.Play(context.Background(), names, steps, 200*time.Millisecond, func(s profiles.ScenarioStep) { applied <- s })
		}()
		if s := <-applied; s.At != 0 {
			t.Fatalf("first step at %v", s.At)
		}
		phase := func(i, name string) float64 {
			return testutil.ToFloat64(rig.relay.m.ScenarioPhase.WithLabelValues(i, name))
		}
		if phase("0", "calm") != 1 {
			t.Error("phase 0 gauge not 1 during phase 0")
		}
		time.Sleep(95 * time.Millisecond)
		// Between steps the gauge still reads the time since the start.
		if got := testutil.ToFloat64(rig.relay.m.ScenarioElapsed); got != 0.095 {
			t.Errorf("elapsed gauge %v between the steps, at 95 ms", got)
		}
		rig.listen.push(sensorAddr, []byte("held")) // due at 105 ms, across the step
		synctest.Wait()
		s := <-applied
		if got := time.Since(start); s.At != 100*time.Millisecond || got != s.At {
			t.Fatalf("second step (at %v) applied after %v", s.At, got)
		}
		if phase("0", "calm") != 0 || phase("1", "congested") != 1 {
			t.Errorf("phase gauges %v, %v after the change, want 0, 1", phase("0", "calm"), phase("1", "congested"))
		}
		if got := testutil.ToFloat64(rig.relay.m.ScenarioElapsed); got != 0.1 {
			t.Errorf("elapsed gauge %v at the second step, want 0.1", got)
		}
		rig.listen.push(sensorAddr, []byte("new")) // 4 ms now: due at 104 ms
		synctest.Wait()
		if err := <-done; err != nil {
			t.Fatal(err)
		}
		if got := time.Since(start); got != 200*time.Millisecond {
			t.Errorf("Play returned after %v, want 200ms", got)
		}
		time.Sleep(time.Second)
		if got := testutil.ToFloat64(rig.relay.m.ScenarioElapsed); got != 0.2 {
			t.Errorf("elapsed gauge %v after the end, want the scenario's 0.2 s", got)
		}
		sent := rig.up.sent()
		if len(sent) != 2 || string(sent[0].data) != "new" || string(sent[1].data) != "held" {
			t.Fatalf("sent %+v, want new then held", sent)
		}
		if got := sent[0].at.Sub(start); got != 104*time.Millisecond {
			t.Errorf("new left at %v, want 104ms (4 ms after the step)", got)
		}
		if got := sent[1].at.Sub(start); got != 105*time.Millisecond {
			t.Errorf("held left at %v, want 105ms (its 10 ms kept)", got)
		}
		if got := testutil.ToFloat64(rig.relay.m.ScenarioSteps); got != 2 {
			t.Errorf("steps counter %v, want 2", got)
		}
		if got := testutil.ToFloat64(rig.relay.m.Reloads.WithLabelValues("ok")); got != 0 {
			t.Errorf("scenario steps counted as %v reloads", got)
		}
		rig.stop(t)
		if got := rig.totalOutcomes(profiles.SensorToController); got != 2 {
			t.Errorf("%d outcomes for 2 datagrams", got)
		}
	})
}

func TestPlayCancel(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		rig := startFake(t, constSC(time.Millisecond), nil)
		steps := []profiles.ScenarioStep{
			{At: 0, Profile: constSC(2 * time.Millisecond)},
			{At: 100 * time.Millisecond, Profile: constSC(3 * time.Millisecond)},
		}
		ctx, cancel := context.WithCancel(context.Background())
		time.AfterFunc(50*time.Millisecond, cancel)
		start := time.Now()
		err := rig.relay.Play(ctx, []string{"only"}, steps, time.Second, nil)
		if !errors.Is(err, context.Canceled) {
			t.Errorf("Play returned %v, want context.Canceled", err)
		}
		if got := time.Since(start); got != 50*time.Millisecond {
			t.Errorf("Play returned after %v, want 50ms", got)
		}
		if got := testutil.ToFloat64(rig.relay.m.ScenarioSteps); got != 1 {
			t.Errorf("steps counter %v, want 1", got)
		}
		rig.stop(t)
	})
}

func TestPlayAfterTrip(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		rig := startFake(t, constSC(time.Millisecond), nil)
		steps := []profiles.ScenarioStep{
			{At: 0, Profile: constSC(2 * time.Millisecond)},
			{At: 100 * time.Millisecond, Profile: &profiles.Profile{SensorToController: oneState(1, nil), ControllerToActuator: oneState(1, nil)}},
		}
		time.AfterFunc(50*time.Millisecond, func() { rig.relay.Trip(trip.Clean, "test") })
		start := time.Now()
		if err := rig.relay.Play(context.Background(), []string{"only"}, steps, 300*time.Millisecond, nil); err != nil {
			t.Fatal(err)
		}
		if got := time.Since(start); got != 300*time.Millisecond {
			t.Errorf("Play returned after %v, want 300ms (it keeps time after a trip)", got)
		}
		if got := testutil.ToFloat64(rig.relay.m.ScenarioSteps); got != 1 {
			t.Errorf("steps counter %v, want 1 (none applied after the trip)", got)
		}
		rig.listen.push(sensorAddr, []byte("x"))
		synctest.Wait()
		if sent := rig.up.sent(); len(sent) != 1 || !sent[0].at.Equal(time.Now()) {
			t.Errorf("sent %+v, want one datagram forwarded at once (clean, the lossy step ignored)", sent)
		}
		rig.stop(t)
	})
}

func TestPlayRejectsBadSteps(t *testing.T) {
	rig := &Relay{}
	p := constSC(0)
	for _, c := range []struct {
		name  string
		steps []profiles.ScenarioStep
	}{
		{"no profile", []profiles.ScenarioStep{{At: 0}}},
		{"phase out of range", []profiles.ScenarioStep{{At: 0, Phase: 1, Profile: p}}},
		{"out of order", []profiles.ScenarioStep{{At: 2, Profile: p}, {At: 1, Profile: p}}},
		{"after the end", []profiles.ScenarioStep{{At: 2 * time.Second, Profile: p}}},
	} {
		if err := rig.Play(context.Background(), []string{"only"}, c.steps, time.Second, nil); err == nil {
			t.Errorf("%s: no error", c.name)
		}
	}
}
