package rig

import (
	"bytes"
	"fmt"
	"math"
	"net"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"rigwire/estimate"
	"rigwire/profiles"
)

// TestJudge: the timing policy of one arrival (estimate/model.md §13;
// profiles.Timing): used iff its age is below the horizon and its
// sequence number above the last used; expiry is judged first.
func TestJudge(t *testing.T) {
	const h = 10_000_000 // ns
	cases := []struct {
		name            string
		age, horizon    int64
		k, last         int64
		want            verdict
		wantDescribedAs string
	}{
		{"first ever, fresh", 0, h, 0, -1, use, "used"},
		{"a nanosecond under one period", h - 1, h, 5, 4, use, "used"},
		{"exactly one period: expired", h, h, 5, 4, expired, "stale or late"},
		{"three periods' horizon, 2.9 periods old", 29 * h / 10, 3 * h, 9, 2, use, "used"},
		{"three periods' horizon, exactly three", 3 * h, 3 * h, 9, 2, expired, "stale or late"},
		{"same sequence again", h / 2, 3 * h, 7, 7, repeated, "duplicate"},
		{"overtaken", h / 2, 3 * h, 6, 7, overtaken, "older"},
		{"overtaken and expired: expired", 4 * h, 3 * h, 6, 7, expired, "stale or late"},
		{"duplicate and expired: expired", h, h, 7, 7, expired, "stale or late"},
		{"a gap in sequence is fine", 0, h, 40, 7, use, "used"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if got := judge(tc.age, tc.horizon, tc.k, tc.last); got != tc.want {
				t.Errorf("judge(age %d, horizon %d, k %d, last %d) = %d, want %d (%s)",
					tc.age, tc.horizon, tc.k, tc.last, got, tc.want, tc.wantDescribedAs)
			}
		})
	}
}

// The pick arm's joint (position, speed; a motor with friction), noise
// free, its actuator applying commands up to three periods after their
// sample.
const pickArmLoop = `
period: 10ms
plant:
  a: [[0, 1], [0, -2]]
  b: [[0], [3]]
  c: [[1, 0]]
controller:
  d: [[0.5]]
profile: {name: none}
timing: {command_horizon: 3}
decode:
  format: text
  sequence: {field: 0}
  outputs: [{field: 2}]
`

// TestNodeTimingPolicyExact drives the node's actuator and sensor at
// chosen instants (no sockets in the way, no wall clock): commands that
// overtake each other, repeat, come late, come for a sample not taken
// yet, two input changes within one period, one at the very
// start of a period and one a nanosecond before its horizon. The node's
// counts, its sample log and its plant state at every t_k are checked;
// the state against the sampled model with each input change at its own
// offset a_e in the period,
//
//	x(t_{k+1}) = Φ x(t_k) + Γ u(t_k) + Σ_e Γ0(a_e) (u_e − u_{e−1}),
//	Γ0(a) = ∫₀^{h−a} e^{As} ds B
//
// (Åström–Wittenmark, Computer-Controlled Systems, 3rd ed., §2.3, the
// zero-order hold with an input delay, one term per change;
// estimate/model.md §13), Φ, Γ and Γ0 from estimate.Discretize and
// Sampled.Split.
func TestNodeTimingPolicyExact(t *testing.T) {
	const tol = 1e-12 // two orders of rounding of the same integrals
	loop, err := profiles.ParseLoop([]byte(pickArmLoop), "pick-arm.yaml", "")
	if err != nil {
		t.Fatal(err)
	}
	relay, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	defer relay.Close()
	const periods = 10
	x0, u0 := []float64{0.12, -0.7}, 0.4
	var log bytes.Buffer
	nd, err := NewNode(NodeConfig{Loop: loop, Relay: relay.LocalAddr().(*net.UDPAddr).AddrPort(), Periods: periods,
		Log: &log, Start: Start{X: x0, U: []float64{u0}}})
	if err != nil {
		t.Fatal(err)
	}
	defer nd.conn.Close()
	const h = 10_000_000 // ns
	const t0 = 5_000_000_000
	nd.t0, nd.xt = t0, t0
	at := func(tenths int64) int64 { return t0 + tenths*h/10 } // t0 + tenths of a period

	type arrival struct {
		when int64
		k    uint64
		u    float64
		want string // applied, late, duplicate, older, malformed
	}
	arrivals := []arrival{
		{at(3), 0, 1.0, "applied"},
		{at(5), 0, 1.0, "duplicate"},
		{at(7), 2, 9.9, "malformed"}, // sample 2 is not taken yet
		{at(21), 1, -0.5, "applied"}, // period 2: two changes, an overtaken one between
		{at(24), 2, 0.8, "applied"},
		{at(26), 1, -0.5, "older"},
		{at(28), 3, 7.7, "malformed"},
		{at(32), 3, 0.3, "applied"},
		{at(35), 2, 0.8, "older"},
		{at(40) + 500_000, 4, -1.1, "applied"},
		{at(41), 4, -1.1, "duplicate"},
		{at(80), 5, 2.2, "late"},          // exactly three periods old
		{at(80), 6, 0.6, "applied"},       // at t_8 itself: a_e = 0
		{at(100) - 1, 7, -0.2, "applied"}, // a nanosecond before three periods, in period 9
	}
	want := map[string]uint64{}
	for _, a := range arrivals {
		want[a.want]++
	}

	// The hand computation, period by period.
	s := estimate.Discretize(loop.Plant.A, loop.Plant.B, nil, float64(h)*1e-9)
	xWant := mat.NewVecDense(2, append([]float64(nil), x0...))
	uNow := u0
	nextArrival := 0
	var stateAt [periods + 1][]float64
	var wantAt [periods + 1][]float64
	appliedAfter := map[int]int64{}
	for k := 0; k <= periods; k++ {
		tk := t0 + int64(k)*h
		nd.catchUpLocked(tk)
		stateAt[k] = nd.plant.State()
		wantAt[k] = []float64{xWant.AtVec(0), xWant.AtVec(1)}
		// Period k: the model's next state and the node's arrivals.
		var next mat.VecDense
		next.MulVec(s.Phi, xWant)
		var tmp mat.VecDense
		tmp.MulVec(s.Gamma, mat.NewVecDense(1, []float64{uNow}))
		next.AddVec(&next, &tmp)
		for ; k < periods && nextArrival < len(arrivals) && arrivals[nextArrival].when < tk+h; nextArrival++ {
			a := arrivals[nextArrival]
			nd.catchUpLocked(a.when)
			before := nd.stats
			nd.commandLocked(a.k, []float64{a.u}, a.when)
			if got := verdictOf(before, nd.stats); got != a.want {
				t.Errorf("command %d at t0 + %d ns: %s, want %s", a.k, a.when-t0, got, a.want)
			}
			if a.want == "applied" {
				g0, _ := s.Split(float64(a.when-tk) * 1e-9)
				tmp.MulVec(g0, mat.NewVecDense(1, []float64{a.u - uNow}))
				next.AddVec(&next, &tmp)
				uNow = a.u
				appliedAfter[int(a.k)] = a.when - (t0 + int64(a.k)*h)
			}
		}
		xWant = &next
	}
	for k := range stateAt {
		for i := range stateAt[k] {
			if d := math.Abs(stateAt[k][i] - wantAt[k][i]); d > tol {
				t.Errorf("x(t_%d)[%d] = %.17g, want %.17g (the sampled model with every change at its offset)",
					k, i, stateAt[k][i], wantAt[k][i])
			}
		}
	}
	st := nd.stats
	if st.Applied != want["applied"] || st.Late != want["late"] || st.Duplicate != want["duplicate"] ||
		st.Older != want["older"] || st.Malformed != want["malformed"] || st.Samples != periods {
		t.Errorf("stats %+v; want applied %d, late %d, duplicate %d, older %d, malformed %d, samples %d",
			st, want["applied"], want["late"], want["duplicate"], want["older"], want["malformed"], periods)
	}

	// The sample log: one row per sample in order, command k's delay in
	// its row even when it came periods later, empty when never applied.
	if err := nd.slog.flush(); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(log.String()), "\n")
	if len(lines) != periods+1 || lines[0] != SampleLogHeader(1, 1) {
		t.Fatalf("sample log:\n%s", log.String())
	}
	for k := 0; k < periods; k++ {
		f := strings.Split(lines[k+1], ",")
		wantTau := ""
		if d, ok := appliedAfter[k]; ok {
			wantTau = string(appendSeconds(nil, d))
		}
		if f[0] != fmt.Sprint(k) || f[1] != string(appendSeconds(nil, t0+int64(k)*h)) || f[len(f)-1] != wantTau {
			t.Errorf("log row %d = %q, want k %d, t_k %s, applied after %q", k, lines[k+1], k,
				appendSeconds(nil, t0+int64(k)*h), wantTau)
		}
	}
}

// verdictOf names the one count that moved between two NodeStats.
func verdictOf(before, after NodeStats) string {
	moved := []string{}
	for _, c := range []struct {
		name string
		b, a uint64
	}{
		{"applied", before.Applied, after.Applied}, {"late", before.Late, after.Late},
		{"duplicate", before.Duplicate, after.Duplicate}, {"older", before.Older, after.Older},
		{"malformed", before.Malformed, after.Malformed},
	} {
		if c.a != c.b {
			moved = append(moved, c.name)
		}
	}
	if len(moved) != 1 {
		return fmt.Sprintf("counts moved: %v", moved)
	}
	return moved[0]
}
