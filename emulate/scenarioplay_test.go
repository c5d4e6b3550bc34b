package emulate

import (
	"testing"
	"time"

	"rigwire/profiles"
)

func TestScenarioProgressLine(t *testing.T) {
	p := &ScenarioPlan{
		Name:   "conveyor-qualification",
		Phases: []string{"calm", "degrading", "outage", "recovery"},
		Scenario: &profiles.Scenario{Phases: []profiles.Phase{
			{Name: "calm", Duration: time.Minute},
			{Name: "degrading", Duration: 3 * time.Minute},
			{Name: "outage", Duration: 2 * time.Minute},
			{Name: "recovery", Duration: 4 * time.Minute},
		}},
		Total: 10 * time.Minute,
	}
	for _, tc := range []struct {
		at   time.Duration
		want string
	}{
		{0, "scenario conveyor-qualification: phase 1/4 calm, 0s of 10m0s"},
		{70*time.Second + 300*time.Millisecond, "scenario conveyor-qualification: phase 2/4 degrading, 1m10s of 10m0s"},
		{4 * time.Minute, "scenario conveyor-qualification: phase 3/4 outage, 4m0s of 10m0s"},
		{11 * time.Minute, "scenario conveyor-qualification: phase 4/4 recovery, 10m0s of 10m0s"},
	} {
		if got := p.Progress(tc.at); got != tc.want {
			t.Errorf("at %v: %q\nwant %q", tc.at, got, tc.want)
		}
	}
	short := &ScenarioPlan{Name: "pump-rehearsal", Phases: []string{"calm"},
		Scenario: &profiles.Scenario{Phases: []profiles.Phase{{Name: "calm", Duration: 10200 * time.Millisecond}}}, Total: 10200 * time.Millisecond}
	if got, want := short.Progress(short.Total), "scenario pump-rehearsal: phase 1/1 calm, 10.2s of 10.2s"; got != want {
		t.Errorf("short scenario's end: %q, want %q", got, want)
	}
	if got, want := short.Progress(4*time.Second+140*time.Millisecond), "scenario pump-rehearsal: phase 1/1 calm, 4.1s of 10.2s"; got != want {
		t.Errorf("short scenario: %q, want %q", got, want)
	}
}
