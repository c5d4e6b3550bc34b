package tests

import (
	"strconv"
	"testing"
)

// Statistical end-to-end runs fail now and then with nothing wrong, at
// rates their companions in estimate/engine and tests simulate and bound
// (DEVELOPERS.md, "Build, test, benchmark"). Where that rate is above a
// few per mille the test plays its run through playTwice.

// playTwice plays a run (play(0)); when play reports that its verdict was
// not confirmed, it logs why and plays the run once more, seeded afresh
// (play(1)): that second run is the one the test then judges. play keeps
// the run it made where the test can read it.
func playTwice(t *testing.T, play func(replay int) (confirmed bool, why string)) {
	t.Helper()
	if ok, why := play(0); !ok {
		t.Logf("first run not confirmed; playing it once more, the relay and the rig seeded afresh: %s", why)
		play(1)
	}
}

// relaySeed is the relay's --seed flag for replay n: none on the first
// play (the profile's own seed), a fresh one on a replay.
func relaySeed(replay int) []string {
	if replay == 0 {
		return nil
	}
	return []string{"--seed", strconv.Itoa(1000 + replay)}
}
