package engine

import "time"

// DefaultHistoryEvery is the default spacing of the history points.
const DefaultHistoryEvery = time.Second

// MaxHistory is the most points the history keeps.
const MaxHistory = 4096

// Point is one point of the run's history (for a report's plot).
type Point struct {
	// Elapsed is the sample's arrival, seconds since the monitor started.
	Elapsed float64 `json:"elapsed_seconds"`
	// Samples estimated so far over the run.
	Samples int64 `json:"samples"`
	// Measured E[eᵀe] and its interval over the shortest configured
	// window (over the run when there is none); null when not yet known.
	Measured *float64 `json:"measured"`
	CILow    *float64 `json:"ci_low"`
	CIHigh   *float64 `json:"ci_high"`
	// Predicted is the predicted E[eᵀe] in force (CurrentPrediction);
	// null when not mean-square stable.
	Predicted *float64 `json:"predicted"`
	// Phase is the running phase's index, -1 outside phases.
	Phase int `json:"phase"`
}

// point is a Point without pointers (NaN for absent values), so that
// recording does not allocate.
type point struct {
	elapsed                     float64
	samples                     int64
	measured, lo, hi, predicted float64
	phase                       int
}

// history records a point every `every` estimated samples into a slice
// of at most MaxHistory points; when full it keeps every other point
// (the odd ones, so the newest stays and the spacing stays even) and
// doubles every, so its memory is flat for any run length.
type history struct {
	every  int64 // samples between points
	since  int64 // samples since the last point
	points []point
}

func (h *history) init(every int64) {
	if every < 1 {
		every = 1
	}
	h.every = every
	h.points = make([]point, 0, MaxHistory)
}

// tick counts one estimated sample that arrived at at (under the lock).
func (h *history) tick(m *Monitor, at time.Time) {
	h.since++
	if h.since < h.every {
		return
	}
	if len(h.points) == MaxHistory {
		for i := 0; i < MaxHistory/2; i++ {
			h.points[i] = h.points[2*i+1]
		}
		h.points = h.points[:MaxHistory/2]
		h.every *= 2
		if h.since < h.every {
			return // the next point comes at the doubled spacing
		}
	}
	h.since = 0
	var st struct{ x, lo, hi float64 }
	if len(m.windows) > 0 {
		ws := m.on.Window(m.shortest(), m.meanBuf)
		st.x, st.lo, st.hi = ws.SecondMoment, ws.CILow, ws.CIHigh
	} else {
		rs := m.on.Run(m.meanBuf)
		st.x, st.lo, st.hi = rs.SecondMoment, rs.CILow, rs.CIHigh
	}
	ph := -1
	if m.phase != nil {
		ph = m.phase.index
	}
	h.points = append(h.points, point{elapsed: at.Sub(m.started).Seconds(), samples: m.on.Samples(),
		measured: st.x, lo: st.lo, hi: st.hi, predicted: m.curPr, phase: ph})
}

// shortest is the index of the shortest window.
func (m *Monitor) shortest() int {
	j := 0
	for i, w := range m.windows {
		if w < m.windows[j] {
			j = i
		}
	}
	return j
}

// HistoryEvery is the current spacing of the history points in
// estimated samples (it doubles each time the history fills).
func (m *Monitor) HistoryEvery() int64 {
	m.mu.Lock()
	defer m.mu.Unlock()
	return m.hist.every
}

// History returns a copy of the run's history: a point every
// HistoryEvery estimated samples (Options.HistoryEvery at the start,
// doubled each time MaxHistory points are reached, when every other
// point is dropped).
func (m *Monitor) History() []Point {
	m.mu.Lock()
	defer m.mu.Unlock()
	out := make([]Point, len(m.hist.points))
	for i, p := range m.hist.points {
		out[i] = Point{Elapsed: p.elapsed, Samples: p.samples, Measured: finite(p.measured),
			CILow: finite(p.lo), CIHigh: finite(p.hi), Predicted: finite(p.predicted), Phase: p.phase}
	}
	return out
}
