package rig_test

import (
	"bytes"
	"context"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
	"testing"
	"time"

	"rigwire/emulate/rig"
	"rigwire/estimate"
	"rigwire/profiles"
)

const rulesLoop = `
period: 10ms
plant:
  a: [[-2.5]]
  b: [[5]]
  c: [[1]]
controller:
  d: [[0.8]]
setpoint: [1.2]
compute_delay: 1ms
profile: {name: none}
decode:
  format: text
  sequence: {field: 0}
  outputs: [{field: 2}]
`

func parseLoop(t *testing.T, src string) *profiles.Loop {
	t.Helper()
	l, err := profiles.ParseLoop([]byte(src), "rules.yaml", t.TempDir())
	if err != nil {
		t.Fatal(err)
	}
	return l
}

// TestRigActuatorRules drives the rig node from a test controller on a
// loopback socket: sample k's command is sent back at once for even k and
// 1.3 periods after t_k for odd k. estimate/model.md §1 step 3: a command whose
// total delay since t_k is below h is applied, a later one is discarded
// (late), and a second command for a period already served is discarded.
func TestRigActuatorRules(t *testing.T) {
	loop := parseLoop(t, rulesLoop)
	const periods = 40
	s := driveNode(t, loop, periods, nil, func(uint64) float64 { return 0.5 }, func(k uint64) []int64 {
		switch {
		case k%2 == 1:
			return []int64{13}
		case k%4 == 0:
			return []int64{0, 0} // the second is a duplicate
		}
		return []int64{0}
	})
	// The last odd command comes after the node has stopped reading. An
	// immediate reply is late only if the host stalls for a period (a
	// loaded machine): allow a few, and count duplicates only of applied
	// commands.
	const stallAllowance = 3
	if s.Applied > periods/2 || s.Applied < periods/2-stallAllowance || s.Late < periods/2-1 || s.Duplicate > periods/4 ||
		s.Applied+s.Late < periods-1 {
		t.Errorf("applied %d, late %d, duplicate %d; want %d (at least %d), ≥ %d, ≤ %d", s.Applied, s.Late, s.Duplicate,
			periods/2, periods/2-stallAllowance, periods/2-1, periods/4)
	}
}

// TestRigControllerRules sends samples to the rig controller: a fresh one
// gets u = Dc (r − y) back at once with its sequence and sample time
// (estimate/model.md §1 step 2, static controller), one stamped a period or more
// ago is stale and gets no reply, and one not newer than the last used is
// discarded. The reply comes no sooner than compute_delay after the sample
// was sent.
func TestRigControllerRules(t *testing.T) {
	loop := parseLoop(t, rulesLoop)
	ctl, stop := startController(t, rig.ControllerConfig{Loop: loop})
	defer stop()
	layout, _ := rig.NewLayout(loop)
	sensor := udpLoopback(t)
	hNs := int64(loop.Period * 1e9)
	cases := []struct {
		name  string
		k     uint64
		age   int64 // how long before sending t_k lies, ns
		y     float64
		reply bool
	}{
		{"fresh", 5, 0, 0.7, true},
		{"stale: exactly a period old", 6, hNs, 0.7, false},
		{"older sequence", 4, 0, 0.7, false},
		{"fresh again", 9, hNs / 2, -0.3, true},
	}
	buf := make([]byte, 256)
	u := make([]float64, 1)
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			sent := rig.Now()
			tk := sent - tc.age
			sensor.WriteToUDPAddrPort(layout.AppendSample(nil, tc.k, tk, []float64{tc.y}), ctl.LocalAddr())
			sensor.SetReadDeadline(time.Now().Add(300 * time.Millisecond))
			n, _, err := sensor.ReadFromUDPAddrPort(buf)
			if !tc.reply {
				if err == nil {
					t.Fatalf("got a reply %q, want none", buf[:n])
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			got := rig.Now()
			k, gotTk, err := rig.ParseCommand(buf[:n], u)
			if err != nil {
				t.Fatal(err)
			}
			want := loop.Controller.D.At(0, 0) * (loop.Setpoint[0] - tc.y)
			if k != tc.k || gotTk != tk || u[0] != want {
				t.Errorf("reply k=%d t=%d u=%g, want k=%d t=%d u=%g", k, gotTk, u[0], tc.k, tk, want)
			}
			if d := got - sent; d < int64(loop.ComputeFloor()*1e9) {
				t.Errorf("reply after %dns, before the compute delay %gs", d, loop.ComputeFloor())
			}
		})
	}
	// Used is counted just after the reply is sent: let it land.
	s := ctl.Stats()
	for deadline := time.Now().Add(time.Second); s.Used < 2 && time.Now().Before(deadline); s = ctl.Stats() {
		time.Sleep(time.Millisecond)
	}
	if s.Used != 2 || s.Stale != 1 || s.Older != 1 || s.Duplicate != 0 {
		t.Errorf("used %d, stale %d, older %d, duplicate %d; want 2, 1, 1, 0", s.Used, s.Stale, s.Older, s.Duplicate)
	}
}

// TestRigPiecewiseFromLog runs a noise-free node and controller over
// loopback and replays the node's sample log through the sampled model
// with the input change at each command's recorded arrival τ_k:
//
//	x_{k+1} = Φ x_k + Γ1(τ_k) u_{k−1} + Γ0(τ_k) u_k
//
// (Åström–Wittenmark, 3rd ed., §2.3; estimate/model.md §3, mode m2), with Φ, Γ0,
// Γ1 from estimate.Discretize and Split — the plant must have switched its
// input exactly when the command arrived. With C = 1 and V = 0, y_k = x_k.
func TestRigPiecewiseFromLog(t *testing.T) {
	const tol = 1e-9 // the log prints floats to round trip, times to the ns
	loop := parseLoop(t, rulesLoop)
	ctl, err := rig.NewController(rig.ControllerConfig{Loop: loop})
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cdone := make(chan error, 1)
	go func() { cdone <- ctl.Run(ctx) }()
	var log bytes.Buffer
	node, err := rig.NewNode(rig.NodeConfig{Loop: loop, Relay: ctl.LocalAddr(), Periods: 150, Seed: 2, Log: &log,
		Start: rig.Start{X: []float64{0.2}, U: []float64{0}}})
	if err != nil {
		t.Fatal(err)
	}
	if err := node.Run(context.Background()); err != nil {
		t.Fatal(err)
	}
	cancel()
	<-cdone
	lines := strings.Split(strings.TrimSpace(log.String()), "\n")
	if lines[0] != rig.SampleLogHeader(1, 1) {
		t.Fatalf("header %q", lines[0])
	}
	type row struct {
		y, u, tau float64
		applied   bool
	}
	var rows []row
	for _, l := range lines[1:] {
		f := strings.Split(l, ",")
		var r row
		r.y, _ = strconv.ParseFloat(f[2], 64)
		r.u, _ = strconv.ParseFloat(f[3], 64)
		if f[4] != "" {
			r.tau, _ = strconv.ParseFloat(f[4], 64)
			r.applied = true
		}
		rows = append(rows, r)
	}
	s := estimate.Discretize(loop.Plant.A, loop.Plant.B, nil, loop.Period)
	phi, gam := s.Phi.At(0, 0), s.Gamma.At(0, 0)
	checked := 0
	for k := 0; k+1 < len(rows); k++ {
		r, next := rows[k], rows[k+1]
		want := phi*r.y + gam*r.u
		if r.applied {
			g0, g1 := s.Split(r.tau)
			want = phi*r.y + g1.At(0, 0)*r.u + g0.At(0, 0)*next.u
			checked++
		}
		if math.Abs(next.y-want) > tol {
			t.Errorf("y[%d] = %.15g, want %.15g from y[%d], u and τ = %g", k+1, next.y, want, k, r.tau)
		}
	}
	if checked < len(rows)/2 {
		t.Errorf("only %d of %d periods had their command applied", checked, len(rows))
	}
}

// TestRigLayout checks the datagram layout against the loop's decode
// section: fields land where decode says, the sample time takes the first
// free field, values round-trip exactly, and a binary decode is refused.
func TestRigLayout(t *testing.T) {
	base := strings.Split(rulesLoop, "decode:")[0]
	cases := []struct {
		name    string
		decode  string
		y       []float64
		want    string
		wantErr string
	}{
		{"no decode section: seq,t,y", "", []float64{0.1}, "7,12.000000345,0.1", ""},
		{"shipped order", "decode: {format: text, sequence: {field: 0}, outputs: [{field: 2}]}", []float64{-2.5e-7}, "7,12.000000345,-2.5e-07", ""},
		{"outputs first, sequence last, separator ;", "decode: {format: text, separator: \";\", sequence: {field: 2}, outputs: [{field: 0}]}", []float64{1.0 / 3}, "0.3333333333333333;12.000000345;7", ""},
		{"no sequence in decode", "decode: {format: text, outputs: [{field: 1}]}", []float64{4}, "7,4,12.000000345", ""},
		{"binary refused", "decode: {format: binary, outputs: [{offset: 0, type: float64, order: little}]}", nil, "", "decode.format: the simulated rig writes text datagrams, got binary"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			loop := parseLoop(t, base+tc.decode+"\n")
			l, err := rig.NewLayout(loop)
			if tc.wantErr != "" {
				if err == nil || err.Error() != tc.wantErr {
					t.Fatalf("error %v, want %q", err, tc.wantErr)
				}
				return
			}
			if err != nil {
				t.Fatal(err)
			}
			b := l.AppendSample(nil, 7, 12_000_000_345, tc.y)
			if string(b) != tc.want {
				t.Errorf("datagram %q, want %q", b, tc.want)
			}
			got := make([]float64, len(tc.y))
			k, tk, err := l.ParseSample(b, got)
			if err != nil || k != 7 || tk != 12_000_000_345 || got[0] != tc.y[0] {
				t.Errorf("parsed k=%d t=%d y=%v err=%v", k, tk, got, err)
			}
		})
	}
}

// FuzzRigDatagrams feeds arbitrary bytes to the rig's two datagram
// parsers: they must return an error or values, never panic.
func FuzzRigDatagrams(f *testing.F) {
	for _, s := range []string{"7,12.000000345,0.1", "0,0.0,1,2", "", ",,,", "1,1.1234567891,3", "9,-1.0,2", "18446744073709551616,1,1"} {
		f.Add([]byte(s))
	}
	loop, err := profiles.ParseLoop([]byte(rulesLoop), "rules.yaml", f.TempDir())
	if err != nil {
		f.Fatal(err)
	}
	l, _ := rig.NewLayout(loop)
	y, u := make([]float64, 1), make([]float64, 1)
	f.Fuzz(func(t *testing.T, b []byte) {
		l.ParseSample(b, y)
		rig.ParseCommand(b, u)
	})
}

// TestRigActuatorHorizon drives the node of a loop with a three-period
// command horizon (estimate/model.md §13) from a test controller that
// answers sample k after 1.2 h (k ≡ 0 mod 4), 0.6 h (k ≡ 1: both land in
// period k+1, two input changes in one period), at once (k ≡ 3, sent
// twice: the second is a duplicate), and for k ≡ 2 after 2.3 h, by which
// time command k+1 has been applied (older, dropped), or, when k ≡ 6 mod
// 8, after 3.2 h (late, dropped). Per 8 periods: 6 applied, 1 older, 1
// late, 2 duplicates; the end of the run cuts the last few. Command k
// carries u = k, so the node's sample log replays exactly (replayLog).
func TestRigActuatorHorizon(t *testing.T) {
	loop := parseLoop(t, rulesLoop+"timing: {command_horizon: 3}\n")
	const periods = 48
	var log bytes.Buffer
	s := driveNode(t, loop, periods, &log, func(k uint64) float64 { return float64(k) }, func(k uint64) []int64 {
		switch {
		case k%4 == 0:
			return []int64{12}
		case k%4 == 1:
			return []int64{6}
		case k%8 == 6:
			return []int64{32}
		case k%4 == 2:
			return []int64{23}
		}
		return []int64{0, 0} // the second is a duplicate
	})
	// The end of the run cuts up to endCut of the 10 arrivals per cycle; a
	// stalled host (a loaded machine) can push a reply past the next one
	// or past its horizon, moving up to stall of them from applied to
	// older or late. The exact rules at exact instants are
	// TestNodeTimingPolicyExact's.
	const cycles, endCut, stall = periods / 8, 4, 3
	within := func(got uint64, lo, hi int) bool { return int(got) >= lo && int(got) <= hi }
	if !within(s.Applied+s.Older+s.Late+s.Duplicate, 10*cycles-endCut, 10*cycles) ||
		!within(s.Applied, 6*cycles-endCut-stall, 6*cycles) || !within(s.Older, cycles-1, cycles+stall) ||
		!within(s.Late, cycles-2, cycles+stall) || !within(s.Duplicate, 2*cycles-2, 2*cycles) {
		t.Errorf("applied %d, older %d, late %d, duplicate %d; want %d, %d, %d, %d (within what the end of the run and a stall change)",
			s.Applied, s.Older, s.Late, s.Duplicate, 6*cycles, cycles, cycles, 2*cycles)
	}
	// A command the node applies after its last period (a stalled host
	// delays the last replies) is counted but in no row of the log.
	const afterEnd = 2
	applied, multi := replayLog(t, loop, log.String(), func(k int) float64 { return float64(k) })
	if applied > int(s.Applied) || applied < int(s.Applied)-afterEnd || multi < cycles-1 {
		t.Errorf("the log holds %d applied commands (the node counted %d) and %d periods with several input changes, want ≥ %d",
			applied, s.Applied, multi, cycles-1)
	}
}

// replayLog checks a noise-free scalar node's sample log (C = 1, V = 0:
// y_k = x(t_k)) against the sampled model with every input change at its
// own offset a_e within the period:
//
//	x(t_{k+1}) = Φ x(t_k) + Γ u(t_k) + Σ_e Γ0(a_e) (u_e − u_{e−1}),
//	Γ0(a) = ∫₀^{h−a} e^{As} ds B
//
// (Åström–Wittenmark, Computer-Controlled Systems, 3rd ed., §2.3, the
// zero-order hold with an input delay, one term per change;
// estimate/model.md §13), Φ, Γ, Γ0 from estimate.Discretize and Split.
// Command j was applied at t_j + its logged delay and carries u = uOf(j);
// the input the log holds at t_{k+1} must be the last applied. It returns
// how many commands the log says were applied and in how many periods
// the input changed more than once.
func replayLog(t *testing.T, loop *profiles.Loop, log string, uOf func(k int) float64) (applied, multi int) {
	t.Helper()
	const tol = 1e-9 // the log prints floats to round trip, times to the ns
	ns := func(f string) int64 {
		v, err := strconv.ParseInt(strings.Replace(f, ".", "", 1), 10, 64)
		if err != nil || !strings.Contains(f, ".") || len(f)-strings.Index(f, ".") != 10 {
			t.Fatalf("log time %q: want seconds with nine decimals", f)
		}
		return v
	}
	lines := strings.Split(strings.TrimSpace(log), "\n")
	if lines[0] != rig.SampleLogHeader(1, 1) {
		t.Fatalf("header %q", lines[0])
	}
	type row struct {
		t    int64
		y, u float64
	}
	type change struct {
		at int64
		u  float64
	}
	var rows []row
	var changes []change
	for i, l := range lines[1:] {
		f := strings.Split(l, ",")
		if k, err := strconv.Atoi(f[0]); err != nil || k != i {
			t.Fatalf("log row %d is %q: rows must come in order of k", i, l)
		}
		var r row
		r.t = ns(f[1])
		r.y, _ = strconv.ParseFloat(f[2], 64)
		r.u, _ = strconv.ParseFloat(f[3], 64)
		rows = append(rows, r)
		if f[4] != "" {
			changes = append(changes, change{r.t + ns(f[4]), uOf(i)})
		}
	}
	sort.Slice(changes, func(i, j int) bool { return changes[i].at < changes[j].at })
	applied = len(changes)
	s := estimate.Discretize(loop.Plant.A, loop.Plant.B, nil, loop.Period)
	phi, gam := s.Phi.At(0, 0), s.Gamma.At(0, 0)
	e := 0
	for k := 0; k+1 < len(rows); k++ {
		r, next := rows[k], rows[k+1]
		want, u, n := phi*r.y+gam*r.u, r.u, 0
		for ; e < len(changes) && changes[e].at < next.t; e++ {
			c := changes[e]
			if c.at < r.t {
				t.Fatalf("a command applied at %d ns, before t_%d = %d but after t_%d", c.at, k, r.t, k-1)
			}
			g0, _ := s.Split(float64(c.at-r.t) * 1e-9)
			want += g0.At(0, 0) * (c.u - u)
			u = c.u
			n++
		}
		if n > 1 {
			multi++
		}
		if next.u != u {
			t.Errorf("u(t_%d) = %g in the log, want %g, the last command applied before", k+1, next.u, u)
		}
		if math.Abs(next.y-want) > tol {
			t.Errorf("y[%d] = %.15g, want %.15g from y[%d], u(t_%d) = %g and %d changes", k+1, next.y, want, k, k, r.u, n)
		}
	}
	return applied, multi
}

// TestRigControllerSampleHorizon: with a sample horizon of two periods
// the controller uses a sample up to 2 h old if it is newer than the last
// used, and drops an overtaken one (estimate/model.md §13).
func TestRigControllerSampleHorizon(t *testing.T) {
	loop := parseLoop(t, rulesLoop+"timing: {sample_horizon: 2, command_horizon: 2}\n")
	ctl, stop := startController(t, rig.ControllerConfig{Loop: loop})
	defer stop()
	layout, _ := rig.NewLayout(loop)
	node := udpLoopback(t)
	hNs := int64(loop.Period * 1e9)
	now := rig.Now()
	send := func(k uint64, age int64) {
		b := layout.AppendSample(nil, k, now-age, []float64{0.2})
		node.WriteToUDPAddrPort(b, ctl.LocalAddr())
	}
	send(10, 15*hNs/10) // 1.5 periods old: used
	send(12, 0)         // used
	send(11, 5*hNs/10)  // overtaken by 12: dropped
	send(13, 25*hNs/10) // 2.5 periods old: stale
	buf := make([]byte, 512)
	var got []uint64
	for len(got) < 2 {
		node.SetReadDeadline(time.Now().Add(2 * time.Second))
		n, _, err := node.ReadFromUDPAddrPort(buf)
		if err != nil {
			t.Fatalf("replies %v: %v", got, err)
		}
		k, _, err := rig.ParseCommand(buf[:n], make([]float64, 1))
		if err != nil {
			t.Fatal(err)
		}
		got = append(got, k)
	}
	deadline := time.Now().Add(2 * time.Second)
	for time.Now().Before(deadline) {
		if s := ctl.Stats(); s.Used == 2 && s.Older == 1 && s.Stale == 1 {
			break
		}
		time.Sleep(5 * time.Millisecond)
	}
	if s := ctl.Stats(); got[0] != 10 || got[1] != 12 || s.Used != 2 || s.Older != 1 || s.Duplicate != 0 || s.Stale != 1 {
		t.Errorf("replies %v, stats %+v; want [10 12], used 2, older (overtaken) 1, stale 1", got, s)
	}
}

// driveNode runs a node of loop for periods samples, writing its sample
// log to log (nil: none), against a test controller on a loopback socket
// that answers sample k with the command u(k) after each delay replies(k)
// lists, in tenths of a period after t_k (0: at once, in order), and
// returns the node's counts once it has stopped.
func driveNode(t *testing.T, loop *profiles.Loop, periods int, log io.Writer, u func(k uint64) float64, replies func(k uint64) []int64) rig.NodeStats {
	t.Helper()
	ctl := udpLoopback(t)
	node, err := rig.NewNode(rig.NodeConfig{Loop: loop, Relay: apOf(ctl), Periods: periods, Seed: 1, Log: log})
	if err != nil {
		t.Fatal(err)
	}
	layout, err := rig.NewLayout(loop)
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- node.Run(context.Background()) }()
	buf := make([]byte, 512)
	y := make([]float64, 1)
	hNs := int64(loop.Period * 1e9)
	for i := 0; i < periods; i++ {
		ctl.SetReadDeadline(time.Now().Add(5 * time.Second))
		n, src, err := ctl.ReadFromUDPAddrPort(buf)
		if err != nil {
			t.Fatal(err)
		}
		k, tk, err := layout.ParseSample(buf[:n], y)
		if err != nil {
			t.Fatalf("sample %q: %v", buf[:n], err)
		}
		cmd := rig.AppendCommand(nil, k, tk, []float64{u(k)})
		for _, after := range replies(k) {
			if after == 0 {
				ctl.WriteToUDPAddrPort(cmd, src)
				continue
			}
			go func() {
				time.Sleep(time.Duration(tk + after*hNs/10 - rig.Now()))
				ctl.WriteToUDPAddrPort(cmd, src)
			}()
		}
	}
	if err := <-done; err != nil {
		t.Fatal(err)
	}
	return node.Stats()
}
