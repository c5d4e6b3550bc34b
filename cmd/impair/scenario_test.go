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
}
