package main

import (
	"testing"
	"time"

	"rigwire/profiles"
)

func TestScenarioProgressLine(t *testing.T) {
	p := &playingScenario{
		name:  "conveyor-qualification",
		names: []string{"calm", "degrading", "outage", "recovery"},
		sc: &profiles.Scenario{Phases: []profiles.Phase{
			{Name: "calm", Duration: time.Minute},
			{Name: "degrading", Duration: 3 * time.Minute},
			{Name: "outage", Duration: 2 * time.Minute},
			{Name: "recovery", Duration: 4 * time.Minute},
		}},
		total: 10 * time.Minute,
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
		if got := p.progress(tc.at); got != tc.want {
			t.Errorf("at %v: %q\nwant %q", tc.at, got, tc.want)
		}
	}
	short := &playingScenario{name: "pump-rehearsal", names: []string{"calm"},
		sc: &profiles.Scenario{Phases: []profiles.Phase{{Name: "calm", Duration: 10200 * time.Millisecond}}}, total: 10200 * time.Millisecond}
	if got, want := short.progress(short.total), "scenario pump-rehearsal: phase 1/1 calm, 10.2s of 10.2s"; got != want {
		t.Errorf("short scenario's end: %q, want %q", got, want)
	}
	if got, want := short.progress(4*time.Second+140*time.Millisecond), "scenario pump-rehearsal: phase 1/1 calm, 4.1s of 10.2s"; got != want {
		t.Errorf("short scenario: %q, want %q", got, want)
	}
}
