package engine

import (
	"context"
	"encoding/binary"
	"math"
	"net"
	"net/netip"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/testutil/promlint"

	"rigwire/emulate"
	"rigwire/estimate"
	"rigwire/estimate/online"
	"rigwire/profiles"
)

// loopYAML is a scalar loop of our own (a pump's flow loop, invented)
// with a decode section filled in per test.
const loopYAML = `period: 10ms
plant: {a: [[-1]], b: [[2]], c: [[1]], process_noise: [[0.01]], sensor_noise: [[1e-4]]}
controller: {d: [[0.5]]}
setpoint: [0.8]
profile: {name: t, sensor_to_controller: {loss: 0.02}}
`

func testLoop(t testing.TB, decode string) *profiles.Loop {
	t.Helper()
	l, err := profiles.ParseLoop([]byte(loopYAML+decode), "loop.yaml", ".")
	if err != nil {
		t.Fatal(err)
	}
	return l
}

const binaryDecode = `decode: {format: binary, sequence: {offset: 0, type: uint32, order: big}, outputs: [{offset: 4, type: float64, order: little}]}
`
const textDecode = `decode: {format: text, sequence: {field: 0}, outputs: [{field: 1}]}
`

func binDatagram(seq uint32, y float64) []byte {
	b := make([]byte, 12)
	binary.BigEndian.PutUint32(b, seq)
	binary.LittleEndian.PutUint64(b[4:], math.Float64bits(y))
	return b
}

func TestFeedBinaryCountsAndValues(t *testing.T) {
	m, err := New(testLoop(t, binaryDecode), nil, Options{Warmup: 30 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	now := time.Unix(0, 0)
	ys := []float64{0.7, 0.9, 0.75, 0.85, 0.8, 0.6}
	for i, y := range ys {
		m.Feed(binDatagram(uint32(i), y), now)
	}
	m.Feed(binDatagram(2, 0.1), now)         // duplicate
	m.Feed(binDatagram(9, 0.8), now)         // gap of 3 (6, 7, 8)
	m.Feed(binDatagram(9, 0.8)[:11], now)    // too short
	m.Feed(make([]byte, 5000), now)          // oversized
	m.Feed(binDatagram(10, math.NaN()), now) // not finite
	s := m.Summary()
	// Warm-up 30 ms at 10 ms: the first three samples skipped; then
	// 0.85, 0.8, 0.6, 0.8 with r = 0.8: e = −0.05, 0, 0.2, 0.
	want := (0.05*0.05 + 0.2*0.2) / 4
	if s.Samples != 4 || s.SkippedWarmup != 3 || math.Abs(*s.ErrorSecondMoment-want) > 1e-15 {
		t.Errorf("samples %d skipped %d E[eᵀe] %v, want 4, 3, %v", s.Samples, s.SkippedWarmup, *s.ErrorSecondMoment, want)
	}
	if s.Gaps != 3 || s.Duplicates != 1 || s.Datagrams != 11 {
		t.Errorf("gaps %d duplicates %d datagrams %d", s.Gaps, s.Duplicates, s.Datagrams)
	}
	for reason, n := range map[string]int64{"too_short": 1, "oversized": 1, "not_finite": 1, "not_a_number": 0, "bad_sequence": 0} {
		if s.DecodeFailures[reason] != n {
			t.Errorf("decode failures %s = %d, want %d", reason, s.DecodeFailures[reason], n)
		}
	}
}

func TestFeedDoesNotAllocate(t *testing.T) {
	for _, c := range []struct {
		name, decode string
		payloads     [][]byte
	}{
		{"binary", binaryDecode, [][]byte{binDatagram(1, 0.7), {1, 2}}},
		{"text", textDecode, [][]byte{[]byte("1,0.75\n"), []byte("1,zz"), make([]byte, 9000)}},
	} {
		m, err := New(testLoop(t, c.decode), &estimate.Prediction{}, Options{})
		if err != nil {
			t.Fatal(err)
		}
		now := time.Now()
		i := 0
		if n := testing.AllocsPerRun(1000, func() { m.Feed(c.payloads[i%len(c.payloads)], now); i++ }); n != 0 {
			t.Errorf("%s: %v allocations per datagram", c.name, n)
		}
	}
}

// The verdict rule (judgeInterval), case by case: the prediction against
// the interval widened by the tolerance, and each way the data cannot tell.
func TestVerdict(t *testing.T) {
	// x̄ = 1.4 on [0.75, 2.6]: 20 batches, independent; widened by 0.1
	// it reaches below x̄/2 = 0.7, too wide to confirm.
	// 50 effective samples per batch; x's standard deviation 2, t 2.09.
	st := online.Stats{Samples: 1000, Batches: 20, SecondMoment: 1.4, CILow: 0.75, CIHigh: 2.6,
		BatchCorrelation: 0.05, BatchCorrelationZ: 0.2, EffectiveSamples: 1000, XStd: 2, T: 2.09}
	with := func(f func(*online.Stats)) online.Stats { c := st; f(&c); return c }
	// Correlated batch means, lag-1 0.6, on [1, 2]: judged against the
	// worst case 1.4·exp(±2.09·2/1.4) = [0.0707, 27.72].
	corr := with(func(c *online.Stats) {
		c.CILow, c.CIHigh, c.BatchCorrelation, c.BatchCorrelationZ = 1, 2, 0.6, 3
	})
	// Batches spanning 2.5 effective samples each: short too.
	few := with(func(c *online.Stats) { c.CILow, c.CIHigh, c.EffectiveSamples = 1.2, 1.6, 50 })
	// Narrow enough to confirm: [1.2, 1.6] around 1.4.
	narrow := with(func(c *online.Stats) { c.CILow, c.CIHigh = 1.2, 1.6 })
	cases := []struct {
		name      string
		st        online.Stats
		pred      float64
		tol       float64
		notStable string
		want      string
		reason    string // a part of the reason
	}{
		{"inside, narrow", narrow, 1.5, 0.1, "", VerdictAgree, "inside the measured interval [1.2, 1.6] widened by 0.1"},
		{"inside, narrow, at the widened edge", narrow, 1.08, 0.1, "", VerdictAgree, "inside"},
		{"inside, reaching x̄/2 once widened", st, 1.5, 0.1, "", VerdictInconclusive, "too wide to confirm"},
		{"inside, reaching 2·x̄ once widened", with(func(c *online.Stats) { c.CILow = 1 }), 1.5, 0.1, "", VerdictInconclusive, "too wide to confirm"},
		{"narrow, but a tolerance of 0.5", narrow, 1.3, 0.5, "", VerdictInconclusive, "too wide to confirm"},
		{"below the interval: measured above", narrow, 1.15, 0, "", VerdictAbove, "prediction 1.15 below the measured interval [1.2, 1.6] widened by 0: measured above"},
		{"below the widened interval, wide", st, 0.67, 0.1, "", VerdictAbove, "measured above"},
		{"above the widened interval, wide: measured below", st, 2.9, 0.1, "", VerdictBelow, "measured below"},
		{"too few samples", with(func(c *online.Stats) { c.Samples = 399 }), 1.5, 0.1, "", VerdictInconclusive,
			"only 399 judged samples, want ≥ 400"},
		{"too few batches", with(func(c *online.Stats) { c.Batches = 9 }), 1.5, 0.1, "", VerdictInconclusive,
			"only 9 complete batches, want ≥ 10"},
		{"no interval", with(func(c *online.Stats) { c.CILow, c.CIHigh = math.NaN(), math.NaN() }), 1, 0.1, "", VerdictInconclusive, "complete batches"},
		{"correlated, inside the worst case", corr, 0.75, 0, "", VerdictInconclusive,
			"batch means correlated: lag-1 0.60, z 3.00 > 2.33: batches of 0 samples are short"},
		{"correlated, below the worst case", corr, 0.05, 0, "", VerdictAbove,
			"prediction 0.05 below the worst-case interval (batch means correlated: lag-1 0.60, z 3.00 > 2.33) [0.0707, 27.72]"},
		{"correlated, above the worst case", corr, 30, 0, "", VerdictBelow, "measured below"},
		{"few effective samples per batch, inside", few, 1.4, 0.1, "", VerdictInconclusive, "2.5 effective samples per batch, want ≥ 3"},
		{"few effective samples per batch, outside the batch interval only", few, 1.1, 0.1, "", VerdictInconclusive, "2.5 effective samples per batch"},
		{"unstable prediction", st, math.NaN(), 0.1, "unstable", VerdictUnstable, "prediction unstable"},
		{"marginal prediction", st, math.NaN(), 0.1, "marginal", VerdictUnstable, "prediction marginal"},
		{"measured zero, predicted zero", with(func(c *online.Stats) { c.SecondMoment, c.CILow, c.CIHigh = 0, 0, 0 }), 0, 0.1, "",
			VerdictInconclusive, "too wide"},
	}
	for _, c := range cases {
		got, why := judgeInterval(c.st, c.pred, c.tol, c.notStable, DefaultMinSamples)
		if got != c.want || !strings.Contains(why, c.reason) {
			t.Errorf("%s: %s (%s), want %s (… %s …)", c.name, got, why, c.want, c.reason)
		}
	}
}

// The metrics pass client_golang's promlint and carry the one prefix.
func TestMetricsLint(t *testing.T) {
	m, err := New(testLoop(t, textDecode), nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	for i := range 100 {
		m.Feed([]byte(strconv.Itoa(i)+",0.81"), time.Now())
	}
	reg := prometheus.NewRegistry()
	if err := m.RegisterMetrics(reg); err != nil {
		t.Fatal(err)
	}
	fams, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	problems, err := promlint.NewWithMetricFamilies(fams).Lint()
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range problems {
		t.Errorf("promlint: %s: %s", p.Metric, p.Text)
	}
	for _, f := range fams {
		if !strings.HasPrefix(f.GetName(), "rigwire_monitor_") {
			t.Errorf("metric %s lacks the prefix", f.GetName())
		}
	}
}

// Feed from several goroutines while the summary and the metrics are
// read (run with -race).
func TestFeedConcurrent(t *testing.T) {
	m, _ := New(testLoop(t, `decode: {format: text, outputs: [{field: 0}]}
`), &estimate.Prediction{}, Options{})
	reg := prometheus.NewRegistry()
	m.RegisterMetrics(reg)
	var wg sync.WaitGroup
	for g := 0; g < 4; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for range 2000 {
				m.Feed([]byte("0.8"), time.Now())
			}
		}()
	}
	for range 20 {
		m.Summary()
		reg.Gather()
	}
	wg.Wait()
	if s := m.Summary(); s.Samples != 8000 {
		t.Errorf("samples %d, want 8000", s.Samples)
	}
}

// The relay and the monitor in one process: emulate.Config.TapFunc feeds
// the monitor every sensor datagram the relay accepts, before
// impairment (so the relay's 50 % loss does not reach the monitor).
func TestInProcessRelayTap(t *testing.T) {
	loop := testLoop(t, textDecode)
	m, err := New(loop, nil, Options{})
	if err != nil {
		t.Fatal(err)
	}
	ctl, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	defer ctl.Close()
	prof, err := profiles.Parse([]byte("name: half\nsensor_to_controller: {loss: 0.5}\n"), "p.yaml", ".")
	if err != nil {
		t.Fatal(err)
	}
	relay, err := emulate.New(emulate.Config{Profile: prof, Listen: netip.MustParseAddrPort("127.0.0.1:0"),
		Controller: ctl.LocalAddr().(*net.UDPAddr).AddrPort(), TapFunc: m.Feed, Seed: 1, SeedSet: true})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- relay.Run(ctx, nil) }()
	sensor, err := net.DialUDP("udp4", nil, net.UDPAddrFromAddrPort(relay.ListenAddr()))
	if err != nil {
		t.Fatal(err)
	}
	defer sensor.Close()
	const n = 500
	for k := 0; k < n; k++ {
		sensor.Write([]byte(strconv.Itoa(k) + ",0.79"))
		if k%50 == 49 {
			time.Sleep(time.Millisecond)
		}
	}
	deadline := time.Now().Add(10 * time.Second)
	for m.Summary().Datagrams < n && time.Now().Before(deadline) {
		time.Sleep(10 * time.Millisecond)
	}
	cancel()
	if err := <-done; err != nil {
		t.Fatal(err)
	}
	if s := m.Summary(); s.Datagrams != n {
		t.Errorf("monitor saw %d datagrams through the tap, sent %d", s.Datagrams, n)
	}
}
