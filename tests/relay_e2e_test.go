package tests

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"math"
	"math/rand/v2"
	"net"
	"net/netip"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// relayRig is the built impair binary running as its own process between
// a sensor/actuator socket and a controller socket of the test's, all on
// loopback.
type relayRig struct {
	p          *proc
	listen     netip.AddrPort
	ctlSide    netip.AddrPort
	metrics    string
	sensor     *net.UDPConn // the sensor node; commands come back to it
	controller *net.UDPConn
	tap        *net.UDPConn
	record     string
	profile    string
}

func udpLoopback(t testing.TB) *net.UDPConn {
	t.Helper()
	c, err := net.ListenUDP("udp4", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	c.SetReadBuffer(8 << 20)
	t.Cleanup(func() { c.Close() })
	return c
}

func apOf(c *net.UDPConn) netip.AddrPort { return c.LocalAddr().(*net.UDPAddr).AddrPort() }

// startRelay writes profile to a file and starts impair run on it.
func startRelay(t testing.TB, profile string, extra ...string) *relayRig {
	t.Helper()
	dir := t.TempDir()
	rig := &relayRig{
		sensor: udpLoopback(t), controller: udpLoopback(t), tap: udpLoopback(t),
		profile: filepath.Join(dir, "profile.yaml"), record: filepath.Join(dir, "record.csv"),
	}
	if err := os.WriteFile(rig.profile, []byte(profile), 0o644); err != nil {
		t.Fatal(err)
	}
	rig.listen = netip.MustParseAddrPort(freePort(t, "udp"))
	rig.ctlSide = netip.MustParseAddrPort(freePort(t, "udp"))
	metrics := freePort(t, "tcp")
	rig.metrics = "http://" + metrics + "/metrics"
	args := append([]string{"run", "--profile", rig.profile,
		"--listen", rig.listen.String(), "--controller-bind", rig.ctlSide.String(),
		"--controller", apOf(rig.controller).String(), "--tap", apOf(rig.tap).String(),
		"--metrics", metrics, "--record", rig.record}, extra...)
	rig.p = start(t, buildCmd(t, "impair"), args...)
	waitHTTP(t, rig.metrics, rig.p)
	return rig
}

// datagram is what the test sends: a sequence number, the send time (ns
// since the test's epoch) and filler bytes that vary with the sequence.
func datagram(seq uint32, sent int64, size int) []byte {
	b := make([]byte, max(size, 12))
	binary.BigEndian.PutUint32(b, seq)
	binary.BigEndian.PutUint64(b[4:], uint64(sent))
	r := rand.New(rand.NewPCG(uint64(seq), 99))
	for i := 12; i < len(b); i++ {
		b[i] = byte(r.Uint32())
	}
	return b
}

type arrival struct {
	data []byte
	at   int64
}

// collect reads c until quiet for idle, stamping each datagram.
func collect(c *net.UDPConn, epoch time.Time, idle time.Duration, into *[]arrival, wg *sync.WaitGroup) {
	defer wg.Done()
	buf := make([]byte, 70000)
	for {
		c.SetReadDeadline(time.Now().Add(idle))
		n, _, err := c.ReadFromUDPAddrPort(buf)
		if err != nil {
			return
		}
		*into = append(*into, arrival{data: bytes.Clone(buf[:n]), at: int64(time.Since(epoch))})
	}
}

func binomialOK(t *testing.T, what string, k, n int, p float64) {
	t.Helper()
	const z = 4.5 // tolerance in standard errors
	got := float64(k) / float64(n)
	se := math.Sqrt(p*(1-p)/float64(n)) + 1e-9
	t.Logf("%s: %d of %d = %.4f (profile %.4f ± %.4f)", what, k, n, got, p, z*se)
	if math.Abs(got-p) > z*se {
		t.Errorf("%s: %.4f, profile says %.4f ± %.4f (%.1f standard errors)", what, got, p, z*se, z)
	}
}

// ksOK tests a sample against a law's CDF with the one-sample
// Kolmogorov–Smirnov test (p-value from Stephens 1970, laws.KSPValue).
func ksOK(t *testing.T, what string, xs []float64, d laws.Delay) {
	t.Helper()
	const alpha = 0.001
	sort.Float64s(xs)
	stat := laws.KSStatistic(xs, d.CDF)
	p := laws.KSPValue(stat, len(xs))
	t.Logf("%s: KS D = %.4f over %d, p = %.3g", what, stat, len(xs), p)
	if p < alpha {
		t.Errorf("%s: Kolmogorov–Smirnov rejects the profile's law (D = %.4f, n = %d, p = %.3g < %g)", what, stat, len(xs), p, alpha)
	}
}

// The relay as a separate process: per direction, losses and delays
// follow the profile; payloads pass byte for byte; the tap gets an exact
// copy of every sensor datagram.
func TestRelayFollowsProfile(t *testing.T) {
	const profile = `name: e2e-iid
seed: 11
sensor_to_controller:
  loss: 0.1
  delay: {kind: lognormal, median: 3ms, sigma: 0.4, shift: 1ms}
controller_to_actuator:
  loss: 0.05
  delay: {kind: uniform, min: 2ms, max: 6ms}
`
	prof, err := profiles.Parse([]byte(profile), "e2e.yaml", "")
	if err != nil {
		t.Fatal(err)
	}
	rig := startRelay(t, profile)
	const n = 4000
	epoch := time.Now()
	var atController, atTap, atActuator []arrival
	var wg sync.WaitGroup
	wg.Add(3)
	go collect(rig.tap, epoch, 2*time.Second, &atTap, &wg)
	go collect(rig.sensor, epoch, 2*time.Second, &atActuator, &wg)
	// The controller echoes each sample back at once as a command, with its
	// own send time in place of the sample's.
	go func() {
		defer wg.Done()
		buf := make([]byte, 70000)
		for {
			rig.controller.SetReadDeadline(time.Now().Add(2 * time.Second))
			k, _, err := rig.controller.ReadFromUDPAddrPort(buf)
			if err != nil {
				return
			}
			now := int64(time.Since(epoch))
			atController = append(atController, arrival{data: bytes.Clone(buf[:k]), at: now})
			cmd := bytes.Clone(buf[:k])
			binary.BigEndian.PutUint64(cmd[4:], uint64(now))
			rig.controller.WriteToUDPAddrPort(cmd, rig.ctlSide)
		}
	}()
	sent := map[uint32][]byte{}
	for i := range n {
		size := 12 + (i*37)%1300
		d := datagram(uint32(i), int64(time.Since(epoch)), size)
		sent[uint32(i)] = d
		if _, err := rig.sensor.WriteToUDPAddrPort(d, rig.listen); err != nil {
			t.Fatal(err)
		}
		time.Sleep(500 * time.Microsecond) // about 1.5 k/s; bounded: n·0.5ms
	}
	wg.Wait()

	// The tap: every sensor datagram, exactly, in order.
	if len(atTap) != n {
		t.Fatalf("tap got %d datagrams, want all %d", len(atTap), n)
	}
	for i, a := range atTap {
		if !bytes.Equal(a.data, sent[uint32(i)]) {
			t.Fatalf("tap datagram %d differs from what the sensor sent", i)
		}
	}
	// Payloads byte for byte; one-way delays as the profile says.
	check := func(name string, got []arrival, law laws.Delay) []float64 {
		var delays []float64
		seen := map[uint32]bool{}
		for _, a := range got {
			seq := binary.BigEndian.Uint32(a.data)
			orig, ok := sent[seq]
			if !ok || seen[seq] {
				t.Fatalf("%s: unexpected datagram %d", name, seq)
			}
			seen[seq] = true
			if !bytes.Equal(a.data[12:], orig[12:]) || len(a.data) != len(orig) {
				t.Fatalf("%s: datagram %d altered", name, seq)
			}
			delays = append(delays, float64(a.at-int64(binary.BigEndian.Uint64(a.data[4:])))/1e9)
		}
		// The measured delay is the drawn one plus the loopback stack and
		// the release lateness; the median shows both are small.
		med := median(delays)
		want := laws.Quantile(law, 0.5)
		t.Logf("%s: measured one-way median %.3f ms, profile median %.3f ms", name, med*1e3, want*1e3)
		if med < want-0.2e-3 || med > want+1e-3 {
			t.Errorf("%s: measured median delay %.3f ms, profile's %.3f ms (tolerance −0.2/+1 ms for the host's stack)", name, med*1e3, want*1e3)
		}
		return delays
	}
	sc := prof.SensorToController.States[0]
	ca := prof.ControllerToActuator.States[0]
	check("sensor→controller", atController, sc.Delay)
	binomialOK(t, "sensor→controller loss", n-len(atController), n, sc.Loss)
	check("controller→actuator", atActuator, ca.Delay)
	binomialOK(t, "controller→actuator loss", len(atController)-len(atActuator), len(atController), ca.Loss)

	// The delays the relay drew (its record) follow the laws exactly.
	rig.p.signal(t, syscall.SIGTERM)
	if code := rig.p.wait(t, 10*time.Second); code != 0 {
		t.Fatalf("impair exited %d after SIGTERM, want 0", code)
	}
	drawn := map[string][]float64{}
	for _, l := range readLines(t, rig.record)[1:] {
		f := strings.Split(l, ",")
		if f[3] == "forwarded" {
			x, _ := strconv.ParseFloat(f[4], 64)
			drawn[f[1]] = append(drawn[f[1]], x)
		}
	}
	ksOK(t, "drawn sensor→controller delays", drawn[profiles.SensorToController], sc.Delay)
	ksOK(t, "drawn controller→actuator delays", drawn[profiles.ControllerToActuator], ca.Delay)
	if got := len(drawn[profiles.SensorToController]); got != len(atController) {
		t.Errorf("record lists %d forwarded sensor datagrams, the controller got %d", got, len(atController))
	}
}

func median(xs []float64) float64 {
	s := append([]float64(nil), xs...)
	sort.Float64s(s)
	return s[len(s)/2]
}

// A stranger's datagrams, at either socket, are counted and not forwarded.
func TestRelayRejectsStrangers(t *testing.T) {
	sensor := udpLoopback(t)
	rig := startRelay(t, "name: clean\n", "--sensor", apOf(sensor).String())
	stranger := udpLoopback(t)
	for range 5 {
		stranger.WriteToUDPAddrPort([]byte("not the sensor"), rig.listen)
		stranger.WriteToUDPAddrPort([]byte("not the controller"), rig.ctlSide)
	}
	sensor.WriteToUDPAddrPort([]byte("the sensor"), rig.listen)
	var got []arrival
	var wg sync.WaitGroup
	wg.Add(1)
	collect(rig.controller, time.Now(), 500*time.Millisecond, &got, &wg)
	if len(got) != 1 || string(got[0].data) != "the sensor" {
		t.Fatalf("controller got %d datagrams, want only the sensor's", len(got))
	}
	m := scrape(t, rig.metrics)["rigwire_relay_datagrams_total"]
	for _, dir := range []string{profiles.SensorToController, profiles.ControllerToActuator} {
		if v := m["direction="+dir+",outcome=stranger"]; v != 5 {
			t.Errorf("%s strangers counted %v, want 5", dir, v)
		}
	}
	// The stranger got nothing back.
	stranger.SetReadDeadline(time.Now().Add(100 * time.Millisecond))
	if _, _, err := stranger.ReadFromUDPAddrPort(make([]byte, 100)); err == nil {
		t.Error("the stranger received a datagram")
	}
}

// SIGHUP swaps the profile without losing what is in flight; SIGTERM
// releases what is in flight on time and exits 0.
func TestRelaySignals(t *testing.T) {
	rig := startRelay(t, "name: slow\nsensor_to_controller: {delay: {kind: constant, value: 400ms}}\n")
	epoch := time.Now()
	var got []arrival
	var wg sync.WaitGroup
	wg.Add(1)
	go collect(rig.controller, epoch, 3*time.Second, &got, &wg)
	for i := range 10 {
		rig.sensor.WriteToUDPAddrPort(datagram(uint32(i), int64(time.Since(epoch)), 32), rig.listen)
	}
	time.Sleep(50 * time.Millisecond)
	if err := os.WriteFile(rig.profile, []byte("name: cut\nsensor_to_controller: {loss: 1}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	rig.p.signal(t, syscall.SIGHUP)
	deadline := time.Now().Add(5 * time.Second)
	for scrape(t, rig.metrics)["rigwire_relay_profile_reloads_total"]["result=ok"] != 1 {
		if time.Now().After(deadline) {
			t.Fatal("no reload counted after SIGHUP")
		}
		time.Sleep(10 * time.Millisecond)
	}
	for i := 10; i < 20; i++ {
		rig.sensor.WriteToUDPAddrPort(datagram(uint32(i), int64(time.Since(epoch)), 32), rig.listen)
	}
	time.Sleep(20 * time.Millisecond)
	// A second batch under the old delay, then SIGTERM while all are held.
	if err := os.WriteFile(rig.profile, []byte("name: slow\nsensor_to_controller: {delay: 300ms}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	rig.p.signal(t, syscall.SIGHUP)
	time.Sleep(100 * time.Millisecond)
	for i := 20; i < 30; i++ {
		rig.sensor.WriteToUDPAddrPort(datagram(uint32(i), int64(time.Since(epoch)), 32), rig.listen)
	}
	time.Sleep(20 * time.Millisecond)
	termAt := time.Since(epoch)
	rig.p.signal(t, syscall.SIGTERM)
	if code := rig.p.wait(t, 10*time.Second); code != 0 {
		t.Fatalf("exit status %d after SIGTERM, want 0", code)
	}
	exitAt := time.Since(epoch)
	wg.Wait()
	seqs := map[uint32]bool{}
	for _, a := range got {
		seq := binary.BigEndian.Uint32(a.data)
		seqs[seq] = true
		want := 400 * time.Millisecond
		if seq >= 20 {
			want = 300 * time.Millisecond
		}
		delay := time.Duration(a.at - int64(binary.BigEndian.Uint64(a.data[4:])))
		if delay < want || delay > want+50*time.Millisecond {
			t.Errorf("datagram %d took %v, want %v (+50 ms for the host)", seq, delay, want)
		}
	}
	for i := range 30 {
		if want := i < 10 || i >= 20; seqs[uint32(i)] != want {
			t.Errorf("datagram %d delivered %v, want %v", i, seqs[uint32(i)], want)
		}
	}
	if exitAt-termAt < 250*time.Millisecond {
		t.Errorf("exited %v after SIGTERM, before the datagrams in flight were due", exitAt-termAt)
	}
}

// The same seed gives the same decisions, run after run: the relay's
// record lists the fate of each datagram in turn.
func TestRelaySeedReproducible(t *testing.T) {
	fates := func() string {
		rig := startRelay(t, "name: iid\nsensor_to_controller: {loss: 0.3, delay: {kind: uniform, min: 0, max: 1ms}}\n", "--seed", "4242")
		for i := range 300 {
			rig.sensor.WriteToUDPAddrPort(datagram(uint32(i), 0, 16), rig.listen)
			time.Sleep(200 * time.Microsecond)
		}
		time.Sleep(50 * time.Millisecond)
		rig.p.signal(t, syscall.SIGTERM)
		rig.p.wait(t, 5*time.Second)
		var b strings.Builder
		for _, l := range readLines(t, rig.record)[1:] {
			f := strings.Split(l, ",")
			if f[1] == profiles.SensorToController {
				fmt.Fprintf(&b, "%s %s\n", f[3], f[4]) // decision and drawn delay
			}
		}
		return b.String()
	}
	a, b := fates(), fates()
	if strings.Count(a, "\n") != 300 {
		t.Fatalf("record lists %d sensor datagrams, want 300", strings.Count(a, "\n"))
	}
	if sortedLines(a) != sortedLines(b) {
		t.Errorf("two runs with seed 4242 drew different fates")
	}
}

// sortedLines puts lines in order: releases are recorded as they settle,
// and two datagrams due within a microsecond may settle in either order.
func sortedLines(s string) string {
	l := strings.Split(s, "\n")
	sort.Strings(l)
	return strings.Join(l, "\n")
}

// A bad profile stops the relay before it starts, naming file, line and key.
func TestRelayBadProfile(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "bad.yaml")
	os.WriteFile(path, []byte("name: bad\nsensor_to_controller:\n  lossy: 0.1\n"), 0o644)
	p := start(t, buildCmd(t, "impair"), "run", "--profile", path, "--listen", "127.0.0.1:0", "--controller", "127.0.0.1:9", "--metrics", "off")
	if code := p.wait(t, 10*time.Second); code != 2 {
		t.Errorf("exit status %d, want 2", code)
	}
	if out := p.out.String(); !strings.Contains(out, "bad.yaml:3") || !strings.Contains(out, `"lossy"`) {
		t.Errorf("message does not name the file, line and key:\n%s", out)
	}
}
