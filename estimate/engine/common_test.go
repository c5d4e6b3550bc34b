package engine

import (
	"strconv"
	"testing"
	"time"

	"rigwire/estimate"
)

// clock is an injected monitor clock.
type clock struct{ t time.Time }

func (c *clock) now() time.Time { return c.t }

func stablePred(v float64) *estimate.Prediction {
	return &estimate.Prediction{MeanSquareStable: true, Error: &estimate.ErrorStats{SecondMoment: v, Mean: []float64{0}}}
}

// newClocked is a monitor of the text-decode test loop (10 ms, r = 0.8)
// on clock c.
func newClocked(t *testing.T, c *clock, opts Options) *Monitor {
	t.Helper()
	opts.Now = c.now
	m, err := New(testLoop(t, textDecode), stablePred(0.04), opts)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// feedErr feeds sample seq with error e (y = 0.8 − e) arriving at at.
func feedErr(m *Monitor, seq int, e float64, at time.Time) {
	m.Feed([]byte(strconv.Itoa(seq)+","+strconv.FormatFloat(0.8-e, 'g', -1, 64)), at)
}
