package emulate

import (
	"fmt"
	"strings"
	"testing"
	"testing/synctest"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"

	"rigwire/emulate/trip"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// lossyDelayed is the trip tests' profile: both directions lose half the
// datagrams and delay the others by 5 ms.
func lossyDelayed() *profiles.Profile {
	return &profiles.Profile{
		SensorToController:   oneState(0.5, laws.Constant{Value: 0.005}),
		ControllerToActuator: oneState(0.5, laws.Constant{Value: 0.005}),
	}
}

// sentWith are the datagrams in ds whose payload starts with prefix.
func sentWith(ds []fakeDatagram, prefix string) []fakeDatagram {
	var out []fakeDatagram
	for _, d := range ds {
		if strings.HasPrefix(string(d.data), prefix) {
			out = append(out, d)
		}
	}
	return out
}

// totalOutcomes is the sum of a direction's outcome counters.
func (rig *fakeRig) totalOutcomes(dir string) int {
	n := 0
	for _, o := range outcomeIndex {
		n += rig.count(dir, o)
	}
	return n
}

func TestTripClean(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		rig := startFake(t, lossyDelayed(), nil)
		sc, ca := profiles.SensorToController, profiles.ControllerToActuator
		start := time.Now()
		const n = 40
		for i := range n {
			rig.listen.push(sensorAddr, fmt.Appendf(nil, "before-s%d", i))
		}
		synctest.Wait()
		for i := range n {
			rig.up.push(controllerAddr, fmt.Appendf(nil, "before-c%d", i))
		}
		synctest.Wait()
		heldSC, heldCA := rig.relay.InFlight()
		if heldSC == 0 || heldSC == n || heldCA == 0 || heldCA == n {
			t.Fatalf("held %d and %d of %d: the profile should keep some and lose some", heldSC, heldCA, n)
		}
		if got := testutil.ToFloat64(rig.relay.m.Tripped); got != 0 {
			t.Errorf("tripped gauge %v before the trip, want 0", got)
		}
		if !rig.relay.Trip(trip.Clean, "test") {
			t.Fatal("first Trip returned false")
		}
		if rig.relay.Trip(trip.StopCommands, "again") {
			t.Error("second Trip returned true")
		}
		if !rig.relay.Tripped() || testutil.ToFloat64(rig.relay.m.Tripped) != 1 {
			t.Error("Tripped() or the tripped gauge does not say tripped")
		}
		for i := range n {
			rig.listen.push(sensorAddr, fmt.Appendf(nil, "after-s%d", i))
		}
		synctest.Wait()
		for i := range n {
			rig.up.push(controllerAddr, fmt.Appendf(nil, "after-c%d", i))
		}
		synctest.Wait()
		// After a clean trip, every datagram leaves at once (no time has
		// passed on the fake clock); those held before keep their 5 ms.
		for _, c := range []struct {
			name string
			out  *fakeConn
			held int
		}{{sc, rig.up, heldSC}, {ca, rig.listen, heldCA}} {
			after := sentWith(c.out.sent(), "after-")
			if len(after) != n {
				t.Errorf("%s: %d of %d forwarded after the clean trip", c.name, len(after), n)
			}
			for _, d := range after {
				if d.at != start {
					t.Errorf("%s: %s left after %v, want 0", c.name, d.data, d.at.Sub(start))
				}
			}
			if got := len(sentWith(c.out.sent(), "before-")); got != 0 {
				t.Errorf("%s: %d held datagrams left before their due time", c.name, got)
			}
		}
		time.Sleep(10 * time.Millisecond)
		synctest.Wait()
		for _, c := range []struct {
			name string
			out  *fakeConn
			held int
		}{{sc, rig.up, heldSC}, {ca, rig.listen, heldCA}} {
			before := sentWith(c.out.sent(), "before-")
			if len(before) != c.held {
				t.Errorf("%s: %d held datagrams released, want %d", c.name, len(before), c.held)
			}
			for _, d := range before {
				if got := d.at.Sub(start); got != 5*time.Millisecond {
					t.Errorf("%s: held %s left after %v, want its 5ms", c.name, d.data, got)
				}
			}
		}
		rig.stop(t)
		for _, dir := range []string{sc, ca} {
			if got := rig.totalOutcomes(dir); got != 2*n {
				t.Errorf("%s: %d outcomes for %d datagrams", dir, got, 2*n)
			}
			if got := rig.count(dir, OutcomeTripped); got != 0 {
				t.Errorf("%s: %d tripped after a clean trip, want 0", dir, got)
			}
		}
	})
}

func TestTripStopCommands(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		rig := startFake(t, lossyDelayed(), nil)
		sc, ca := profiles.SensorToController, profiles.ControllerToActuator
		start := time.Now()
		rig.listen.push(sensorAddr, []byte("first")) // so commands have an address
		synctest.Wait()
		const n = 40
		for i := range n {
			rig.up.push(controllerAddr, fmt.Appendf(nil, "before-c%d", i))
		}
		synctest.Wait()
		_, held := rig.relay.InFlight()
		dropped := rig.count(ca, OutcomeDropped)
		if held == 0 || held+dropped != n {
			t.Fatalf("held %d, dropped %d of %d", held, dropped, n)
		}
		if !rig.relay.Trip(trip.StopCommands, "test") {
			t.Fatal("first Trip returned false")
		}
		if rig.relay.Trip(trip.Clean, "again") {
			t.Error("second Trip returned true")
		}
		if _, h := rig.relay.InFlight(); h != 0 {
			t.Errorf("%d commands still held after the trip", h)
		}
		if got := rig.count(ca, OutcomeTripped); got != held {
			t.Errorf("tripped %d right after the trip, want the %d held", got, held)
		}
		for i := range n {
			rig.up.push(controllerAddr, fmt.Appendf(nil, "after-c%d", i))
			rig.listen.push(sensorAddr, fmt.Appendf(nil, "after-s%d", i))
		}
		synctest.Wait()
		time.Sleep(20 * time.Millisecond)
		synctest.Wait()
		if got := rig.listen.sent(); len(got) != 0 {
			t.Errorf("%d commands reached the actuator after stop_commands", len(got))
		}
		after := sentWith(rig.up.sent(), "after-s")
		if len(after) != n {
			t.Errorf("%d of %d sensor datagrams forwarded after the trip", len(after), n)
		}
		for _, d := range after {
			if d.at != start {
				t.Errorf("sensor %s left after %v, want 0 (clean)", d.data, d.at.Sub(start))
			}
		}
		rig.stop(t)
		if got, want := rig.count(ca, OutcomeTripped), held+n; got != want {
			t.Errorf("tripped %d, want %d (%d held + %d after)", got, want, held, n)
		}
		if got := rig.count(ca, OutcomeDropped); got != dropped {
			t.Errorf("dropped %d, want %d (no profile drops after the trip)", got, dropped)
		}
		if got := rig.totalOutcomes(ca); got != 2*n {
			t.Errorf("commands: %d outcomes for %d datagrams", got, 2*n)
		}
		if got := rig.totalOutcomes(sc); got != n+1 {
			t.Errorf("sensor: %d outcomes for %d datagrams", got, n+1)
		}
		if got := recordDecisions(rig.record.String(), ca, OutcomeTripped); got != held+n {
			t.Errorf("record has %d tripped lines, want %d", got, held+n)
		}
	})
}

func TestTripFromTapAndAfterwards(t *testing.T) {
	synctest.Test(t, func(t *testing.T) {
		var relay *Relay
		taps := 0
		rig := startFake(t, lossyDelayed(), func(c *Config) {
			c.TapFunc = func(payload []byte, _ time.Time) {
				taps++
				if string(payload) == "trip" {
					relay.Trip(trip.Clean, "from the tap")
				}
			}
		})
		relay = rig.relay
		start := time.Now()
		rig.listen.push(sensorAddr, []byte("trip"))
		synctest.Wait() // would hang if the tap's Trip deadlocked
		if !relay.Tripped() || taps != 1 {
			t.Fatalf("tripped %v after %d taps", relay.Tripped(), taps)
		}
		// Reloads after the trip change nothing.
		relay.Reload(&profiles.Profile{SensorToController: oneState(1, nil), ControllerToActuator: oneState(1, nil)})
		if got := testutil.ToFloat64(relay.m.Reloads.WithLabelValues("ignored")); got != 1 {
			t.Errorf("ignored reloads %v, want 1", got)
		}
		if got := testutil.ToFloat64(relay.m.Reloads.WithLabelValues("ok")); got != 0 {
			t.Errorf("ok reloads %v, want 0", got)
		}
		for i := range 10 {
			rig.listen.push(sensorAddr, fmt.Appendf(nil, "after-%d", i))
		}
		synctest.Wait()
		after := sentWith(rig.up.sent(), "after-")
		if len(after) != 10 {
			t.Errorf("%d of 10 forwarded after the trip and an ignored reload", len(after))
		}
		for _, d := range after {
			if d.at != start {
				t.Errorf("%s left after %v, want 0", d.data, d.at.Sub(start))
			}
		}
		rig.stop(t)
	})
}

// recordDecisions counts the record lines of direction dir with decision
// outcome.
func recordDecisions(record, dir, outcome string) int {
	n := 0
	for _, line := range strings.Split(record, "\n") {
		f := strings.Split(line, ",")
		if len(f) == len(RecordColumns) && f[1] == dir && f[3] == outcome {
			n++
		}
	}
	return n
}
