package tests

import (
	"bufio"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"
)

// TestMemoryFlat runs the simulated rig of ../profiles/examples/checks/mem-1khz.yaml (1 ms
// period) through `impair run` with its tap feeding `monitor run`, each its
// own process on loopback, for RIGWIRE_MEMORY_SECONDS (default 60), and
// fails if the relay's or the monitor's resident set (VmRSS of
// /proc/PID/status) grows by more than maxGrowthKiB between the end of a
// 10 s warm-up and the end of the run. Neither keeps anything per datagram
// past its own bounded queues and rings, so at a steady rate their memory
// should stay where the warm-up left it; the 4 MiB allowance covers the Go
// runtime's heap and stack sizing settling (common practice, not a derived
// bound). tests/memory.sh is the same check for ten minutes.
func TestMemoryFlat(t *testing.T) {
	if testing.Short() {
		t.Skip("runs for a minute; skipped with -short")
	}
	if runtime.GOOS != "linux" {
		t.Skip("reads /proc/PID/status: Linux only")
	}
	t.Parallel()
	const (
		warmup       = 10 * time.Second
		maxGrowthKiB = 4096
	)
	total := 60 * time.Second
	if s := os.Getenv("RIGWIRE_MEMORY_SECONDS"); s != "" {
		n, err := strconv.Atoi(s)
		if err != nil || time.Duration(n)*time.Second <= warmup {
			t.Fatalf("RIGWIRE_MEMORY_SECONDS: want a whole number of seconds above the %v warm-up, got %q", warmup, s)
		}
		total = time.Duration(n) * time.Second
	}
	loopPath := "../profiles/examples/checks/mem-1khz.yaml"
	mon, imp := buildCmd(t, "monitor"), buildCmd(t, "impair")
	dir := t.TempDir()
	summary := filepath.Join(dir, "summary.json")
	ctlAddr, relayAddr, tapAddr := freePort(t, "udp"), freePort(t, "udp"), freePort(t, "udp")

	ctl := start(t, mon, "rig", "controller", "--loop", loopPath, "--listen", ctlAddr)
	monP := start(t, mon, "run", "--loop", loopPath, "--listen", tapAddr, "--metrics", "off",
		"--progress", "0", "--summary", summary)
	relay := start(t, imp, "run", "--profile", "../profiles/examples/checks/mem-1khz.profile.yaml", "--listen", relayAddr,
		"--controller", ctlAddr, "--tap", tapAddr, "--metrics", "off")
	time.Sleep(300 * time.Millisecond) // the relay, controller and monitor open their sockets
	node := start(t, mon, "rig", "node", "--loop", loopPath, "--relay", relayAddr, "--seed", "3")
	all := []struct {
		name string
		p    *proc
	}{{"controller", ctl}, {"monitor", monP}, {"relay", relay}, {"node", node}}
	checkAlive := func(when string) {
		t.Helper()
		for _, a := range all {
			select {
			case <-a.p.done:
				t.Fatalf("%s: the %s exited (%v):\n%s", when, a.name, a.p.waitErr, a.p.out.String())
			default:
			}
		}
	}

	began := time.Now()
	time.Sleep(warmup)
	checkAlive("after the warm-up")
	rss0 := map[string]int64{"relay": vmKiB(t, relay, "VmRSS"), "monitor": vmKiB(t, monP, "VmRSS")}
	time.Sleep(total - time.Since(began))
	checkAlive("at the end")
	rss1 := map[string]int64{"relay": vmKiB(t, relay, "VmRSS"), "monitor": vmKiB(t, monP, "VmRSS")}
	hwm := map[string]int64{"relay": vmKiB(t, relay, "VmHWM"), "monitor": vmKiB(t, monP, "VmHWM")}

	node.signal(t, syscall.SIGTERM)
	node.wait(t, 20*time.Second)
	time.Sleep(100 * time.Millisecond)
	for _, p := range []*proc{monP, relay, ctl} {
		p.signal(t, syscall.SIGTERM)
	}
	for _, a := range all[:3] {
		if code := a.p.wait(t, 20*time.Second); code != 0 {
			t.Errorf("the %s exited %d on SIGTERM:\n%s", a.name, code, a.p.out.String())
		}
	}
	for _, name := range []string{"relay", "monitor"} {
		growth := rss1[name] - rss0[name]
		t.Logf("%-8s rss_start_kib %6d  rss_end_kib %6d  growth_kib %6d  hwm_kib %6d", name, rss0[name], rss1[name], growth, hwm[name])
		if growth > maxGrowthKiB {
			t.Errorf("the %s's RSS grew by %d KiB between %v and %v, more than %d KiB", name, growth, warmup, total, maxGrowthKiB)
		}
	}
	var s struct {
		Samples int64 `json:"samples"`
	}
	b, err := os.ReadFile(summary)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatalf("summary: %v\n%s", err, b)
	}
	// Only that the load was there: how many samples a loaded host lets
	// through at 1 kHz is not this test's question.
	t.Logf("monitor counted %d samples over %v (%d periods)", s.Samples, total, int64(total/time.Millisecond))
	if s.Samples == 0 {
		t.Errorf("the monitor counted no samples: no load went through the relay")
	}
}

// vmKiB reads a Vm* field (VmRSS, VmHWM) of the process's /proc status, KiB.
func vmKiB(t *testing.T, p *proc, field string) int64 {
	t.Helper()
	path := fmt.Sprintf("/proc/%d/status", p.cmd.Process.Pid)
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		k, v, ok := strings.Cut(sc.Text(), ":")
		if !ok || k != field {
			continue
		}
		fs := strings.Fields(v) // "  14192 kB"
		if len(fs) != 2 || fs[1] != "kB" {
			t.Fatalf("%s: %s: want \"N kB\", got %q", path, field, v)
		}
		n, err := strconv.ParseInt(fs[0], 10, 64)
		if err != nil {
			t.Fatalf("%s: %s: %v", path, field, err)
		}
		return n
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	t.Fatalf("%s: no %s line", path, field)
	return 0
}
