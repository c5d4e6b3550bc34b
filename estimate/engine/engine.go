package engine

import (
	"fmt"
	"math"
	"net/netip"
	"sync"
	"time"

	"rigwire/emulate/trip"
	"rigwire/estimate"
	"rigwire/estimate/online"
	"rigwire/profiles"
	"rigwire/profiles/datagram"
)

// Options configures a Monitor. The zero value takes the defaults.
type Options struct {
	// Windows are the sliding windows (default 1 min and 10 min),
	// converted to sample counts by the loop's period.
	Windows []time.Duration
	// Warmup is skipped at the start: the first ⌊Warmup/period⌋ decoded
	// samples are counted but not estimated.
	Warmup time.Duration
	// Tolerance widens the confidence interval for the verdict: the
	// prediction agrees when it lies in [lo·(1 − tol), hi·(1 + tol)] and
	// that interval is narrow enough to have disagreed (judgeInterval).
	Tolerance float64
	// MinSamples is the least number of estimated samples of the run's
	// verdict (default DefaultMinSamples); fewer give "inconclusive".
	MinSamples int
	// MaxDatagram is the longest datagram decoded (default 4096 bytes);
	// longer ones count as oversized.
	MaxDatagram int
	// Level is the confidence level (default 0.95).
	Level float64
	// Now is the clock (default time.Now), for tests.
	Now func() time.Time
	// HistoryEvery is the spacing of the history points (default 1 s),
	// converted to ⌈HistoryEvery/period⌉ estimated samples; it doubles
	// each time the history fills (see History).
	HistoryEvery time.Duration
}

// DefaultMaxDatagram is the default longest datagram decoded, bytes.
const DefaultMaxDatagram = 4096

// DefaultWindows are the default sliding windows.
var DefaultWindows = []time.Duration{time.Minute, 10 * time.Minute}

// Monitor measures one loop from its sensor datagrams. Feed, Serve,
// Progress, Summary and the metrics may be used from any goroutines.
type Monitor struct {
	loop    *profiles.Loop
	pred    *estimate.Prediction
	opts    Options
	now     func() time.Time
	started time.Time
	warmupN int64
	windows []time.Duration

	mu sync.Mutex // guards the fields below
	on *online.Estimator
	y  []float64
	// seq classifies the sequence numbers (when the decode has them).
	seq       online.SeqTracker
	datagrams int64
	// source, when valid, is the only sender Serve feeds (SetSource);
	// strangers counts the datagrams from anyone else, by index in
	// StrangerReasons.
	source    netip.AddrPort
	strangers [len(StrangerReasons)]int64
	decoded   int64     // samples decoded and not duplicates/stale
	skipped   int64     // of those, skipped as warm-up
	failures  []int64   // by index in datagram.Reasons
	first     time.Time // arrival of the first estimated sample
	last      time.Time // arrival of the latest datagram
	meanBuf   []float64
	e         []float64 // e = r − y of the latest sample
	r         []float64 // r(t_k) of the latest sample: the setpoint, or the sinusoid about it
	// fits are the run's fits per frequency of a sinusoidal reference
	// (nil with a constant one).
	fits []*online.HarmonicFit
	segN []int64 // samples estimated at each frequency

	// cur is the prediction in force (UpdatePrediction); curPr its
	// E[eᵀe], NaN when not certified mean-square stable, and curStab
	// then its stability ("" when stable).
	cur     *estimate.Prediction
	curPr   float64
	curStab string
	// phases are the phases started so far; phase the running one;
	// planned the names of all the soak's phases (PlanPhases);
	// phasesEnded is set by EndPhases.
	phases      []*phase
	phase       *phase
	planned     []string
	phasesEnded bool
	trip        tripState
	// afterTrip counts the decoded samples after the trip fired: they
	// are estimated nowhere.
	afterTrip int64
	hist      history
}

// reasonIndex maps each decode failure to its counter.
var reasonIndex = map[*datagram.Error]int{}

func init() {
	for i, r := range datagram.Reasons {
		reasonIndex[r] = i
	}
}

// New prepares a monitor for loop, whose decode section must be present.
// pred is the prediction to compare with; nil computes it
// (estimate.Predict with the loss margin).
func New(loop *profiles.Loop, pred *estimate.Prediction, opts Options) (*Monitor, error) {
	if loop.Decode.Format == "" {
		return nil, fmt.Errorf("%s: decode: missing (the monitor needs to know where the outputs sit in each sensor datagram; see the decode section of profiles/formats.md)", loop.File)
	}
	for i, r := range loop.Setpoint {
		if !(math.Abs(r) <= datagram.MaxOutput) {
			return nil, fmt.Errorf("%s: setpoint[%d]: want a value within ±%g (the bound on decoded outputs), got %g", loop.File, i, datagram.MaxOutput, r)
		}
	}
	if opts.Tolerance < 0 || math.IsNaN(opts.Tolerance) || math.IsInf(opts.Tolerance, 0) {
		return nil, fmt.Errorf("tolerance: want a number ≥ 0, got %g", opts.Tolerance)
	}
	if opts.Warmup < 0 {
		return nil, fmt.Errorf("warm-up: want a duration ≥ 0, got %s", opts.Warmup)
	}
	if opts.MaxDatagram == 0 {
		opts.MaxDatagram = DefaultMaxDatagram
	}
	if opts.MaxDatagram < 1 || opts.MaxDatagram > 65535 {
		return nil, fmt.Errorf("max datagram: want 1…65535 bytes, got %d", opts.MaxDatagram)
	}
	if opts.Windows == nil {
		opts.Windows = DefaultWindows
	}
	if opts.Now == nil {
		opts.Now = time.Now
	}
	if opts.HistoryEvery < 0 {
		return nil, fmt.Errorf("history spacing: want a duration ≥ 0, got %s", opts.HistoryEvery)
	}
	if opts.HistoryEvery == 0 {
		opts.HistoryEvery = DefaultHistoryEvery
	}
	var counts []int
	for _, w := range opts.Windows {
		n := int(math.Round(w.Seconds() / loop.Period))
		if n < 2 || n > 1<<31 {
			return nil, fmt.Errorf("window %s: want at least two periods (%s each) and at most 2³¹, got %d samples",
				w, time.Duration(loop.Period*1e9), n)
		}
		counts = append(counts, n)
	}
	on, err := online.New(online.Options{Setpoint: loop.Setpoint, Windows: counts, Level: opts.Level})
	if err != nil {
		return nil, err
	}
	if pred == nil {
		if pred, err = estimate.Predict(loop, estimate.PredictOptions{}); err != nil {
			return nil, fmt.Errorf("%s: prediction: %w", loop.File, err)
		}
	}
	if opts.Level == 0 {
		opts.Level = 0.95
	}
	if opts.MinSamples < 0 {
		return nil, fmt.Errorf("min samples: want a number ≥ 0, got %d", opts.MinSamples)
	}
	if opts.MinSamples == 0 {
		opts.MinSamples = DefaultMinSamples
	}
	m := &Monitor{
		loop: loop, pred: pred, opts: opts, now: opts.Now, windows: opts.Windows,
		warmupN: int64(math.Floor(opts.Warmup.Seconds()/loop.Period + 1e-9)), // 1e-9: 0.2 s / 20 ms is 10, not 9.999…
		on:      on, failures: make([]int64, len(datagram.Reasons)), y: make([]float64, len(loop.Setpoint)), meanBuf: make([]float64, len(loop.Setpoint)),
		e: make([]float64, len(loop.Setpoint)), r: append([]float64(nil), loop.Setpoint...),
	}
	if loop.Reference.Sinusoidal() {
		if loop.Decode.Sequence == nil {
			return nil, fmt.Errorf("%s: decode.sequence: missing; a sinusoidal reference needs it (the reference's time is the sample's sequence number times the period)", loop.File)
		}
		for seg := range loop.Reference.Frequencies {
			m.fits = append(m.fits, newFit(loop, seg, opts.Level))
		}
		m.segN = make([]int64, len(m.fits))
	}
	m.cur, m.curPr, m.curStab = pred, predictedOf(pred), stabilityOf(pred)
	m.hist.init(int64(math.Ceil(opts.HistoryEvery.Seconds()/loop.Period - 1e-9)))
	m.started = m.now()
	return m, nil
}

// Loop is the loop measured; Prediction what it is compared with.
func (m *Monitor) Loop() *profiles.Loop { return m.loop }

// Prediction is the prediction the measurements are compared with.
func (m *Monitor) Prediction() *estimate.Prediction { return m.pred }

// MaxDatagram is the longest datagram the monitor decodes.
func (m *Monitor) MaxDatagram() int { return m.opts.MaxDatagram }

// Feed takes one sensor datagram that arrived at time at. It decodes the
// outputs, checks the sequence number and updates the estimators; a
// datagram that does not decode is counted by its reason. It does not
// retain payload, does not allocate (unless the safety trip fires) and is
// safe from any goroutine (it fits emulate.Config.TapFunc). When the trip
// fires, Feed calls its fire function after releasing the monitor's lock.
func (m *Monitor) Feed(payload []byte, at time.Time) {
	m.feedFrom(netip.AddrPort{}, payload, at)
}

// feedFrom is Feed of a datagram from src: when src is valid (Serve) and
// a source is set (SetSource), a datagram from anyone else is counted as
// a stranger and not decoded. The source check and the feed take the
// lock once.
func (m *Monitor) feedFrom(src netip.AddrPort, payload []byte, at time.Time) {
	if ev, fire := m.feed(src, payload, at); ev != nil && fire != nil {
		fire(*ev)
	}
}

// feed is feedFrom under the lock; it returns the trip event when this
// sample fired the trip.
func (m *Monitor) feed(src netip.AddrPort, payload []byte, at time.Time) (*trip.Event, func(trip.Event)) {
	m.mu.Lock()
	defer m.mu.Unlock()
	if src.IsValid() && m.stranger(src) {
		return nil, nil
	}
	m.datagrams++
	m.last = at
	if len(payload) > m.opts.MaxDatagram {
		m.failures[reasonIndex[datagram.ErrOversized]]++
		return nil, nil
	}
	seq, hasSeq, err := m.loop.Decode.Output(payload, m.y)
	if err != nil {
		if de, ok := err.(*datagram.Error); ok {
			m.failures[reasonIndex[de]]++
		}
		return nil, nil
	}
	if hasSeq {
		switch m.seq.Observe(seq) {
		case online.SeqDuplicate, online.SeqStale:
			return nil, nil
		}
	}
	m.decoded++
	seg, theta, settling := 0, 0.0, false
	if m.fits != nil {
		seg, theta, settling = m.loop.ReferenceAt(seq, m.r)
	}
	x := 0.0
	for i, r := range m.r {
		m.e[i] = r - m.y[i]
		x += m.e[i] * m.e[i]
	}
	// Safety does not wait for the warm-up or a phase's settling.
	var ev *trip.Event
	tripped := m.trip.event != nil // before this sample
	if m.trip.det.Armed() && !tripped {
		ev = m.checkTrip(x, seq, hasSeq, at)
	}
	if m.decoded <= m.warmupN || settling {
		// With a moving reference, a dwell's settling is left out as
		// the warm-up is: the prediction is the periodic steady state.
		m.skipped++
		return ev, m.trip.fire
	}
	if tripped {
		// After the trip the link is no longer the one under test: the
		// sample is counted, not estimated (the one that fired it is).
		m.afterTrip++
		if p := m.phase; p != nil {
			p.afterTripN++
		}
		return nil, nil
	}
	if m.on.Samples() == 0 {
		m.first = at
	}
	m.on.AddError(m.e)
	if m.fits != nil {
		m.fits[seg].Add(m.y, theta)
		m.segN[seg]++
	}
	if p := m.phase; p != nil {
		switch {
		case p.seg < 0 && harmonicAt(m.cur, seg) != nil:
			// Each sample against the prediction at its own frequency.
			p.add(m.e, at, secondMomentAt(m.cur, seg), m.curStab)
		case p.seg < 0:
			p.add(m.e, at, m.curPr, m.curStab)
		case p.seg == seg:
			p.add(m.e, at, secondMomentAt(m.cur, seg), m.curStab)
			if !at.Before(p.judgeFrom) {
				p.fit.Add(m.y, theta)
			}
		default:
			p.otherN++
		}
	}
	m.hist.tick(m, at)
	return ev, m.trip.fire
}

// WarmupSamples is the number of decoded samples skipped at the start.
func (m *Monitor) WarmupSamples() int64 { return m.warmupN }
