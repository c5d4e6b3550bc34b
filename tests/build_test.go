package tests

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
	"net"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/prometheus/common/expfmt"
	"github.com/prometheus/common/model"
)

var (
	binDir  string
	binOnce = map[string]*sync.Once{}
	binErr  = map[string]error{}
	binMu   sync.Mutex
)

func TestMain(m *testing.M) {
	dir, err := os.MkdirTemp("", "rigwire-e2e-bin")
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
	binDir = dir
	code := m.Run()
	os.RemoveAll(dir)
	os.Exit(code)
}

// buildCmd builds ./cmd/NAME once per test run and returns its path.
func buildCmd(t testing.TB, name string) string {
	t.Helper()
	binMu.Lock()
	once := binOnce[name]
	if once == nil {
		once = new(sync.Once)
		binOnce[name] = once
	}
	binMu.Unlock()
	path := filepath.Join(binDir, name)
	once.Do(func() {
		cmd := exec.Command("go", "build", "-o", path, "../cmd/"+name)
		out, err := cmd.CombinedOutput()
		if err != nil {
			err = fmt.Errorf("go build %s: %v\n%s", name, err, out)
		}
		binMu.Lock()
		binErr[name] = err
		binMu.Unlock()
	})
	binMu.Lock()
	err := binErr[name]
	binMu.Unlock()
	if err != nil {
		t.Fatal(err)
	}
	return path
}

// proc is a command started by a test, with its output kept.
type proc struct {
	cmd     *exec.Cmd
	out     syncBuffer
	done    chan struct{}
	waitErr error
}

type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

func start(t testing.TB, bin string, args ...string) *proc {
	t.Helper()
	p := &proc{cmd: exec.Command(bin, args...), done: make(chan struct{})}
	p.cmd.Stdout = &p.out
	p.cmd.Stderr = &p.out
	if err := p.cmd.Start(); err != nil {
		t.Fatal(err)
	}
	go func() { p.waitErr = p.cmd.Wait(); close(p.done) }()
	t.Cleanup(func() {
		select {
		case <-p.done:
		default:
			p.cmd.Process.Kill()
			<-p.done
		}
		if t.Failed() {
			t.Logf("output of %s:\n%s", filepath.Base(bin), p.out.String())
		}
	})
	return p
}

func (p *proc) signal(t testing.TB, s syscall.Signal) {
	t.Helper()
	if err := p.cmd.Process.Signal(s); err != nil {
		t.Fatal(err)
	}
}

// wait waits for the process to exit and returns its exit code.
func (p *proc) wait(t testing.TB, limit time.Duration) int {
	t.Helper()
	select {
	case <-p.done:
	case <-time.After(limit):
		t.Fatalf("process still running after %v", limit)
	}
	if p.waitErr == nil {
		return 0
	}
	if ee, ok := p.waitErr.(*exec.ExitError); ok {
		return ee.ExitCode()
	}
	t.Fatal(p.waitErr)
	return -1
}

// freePort returns a loopback port that was free a moment ago.
func freePort(t testing.TB, network string) string {
	t.Helper()
	switch network {
	case "udp":
		c, err := net.ListenPacket("udp4", "127.0.0.1:0")
		if err != nil {
			t.Fatal(err)
		}
		defer c.Close()
		return c.LocalAddr().String()
	default:
		l, err := net.Listen("tcp4", "127.0.0.1:0")
		if err != nil {
			t.Fatal(err)
		}
		defer l.Close()
		return l.Addr().String()
	}
}

// scrape reads a Prometheus text endpoint into name → samples, each sample a
// label set (as "k=v,k=v" sorted by the exposition) and its value.
func scrape(t testing.TB, url string) map[string]map[string]float64 {
	t.Helper()
	resp, err := http.Get(url)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	parser := expfmt.NewTextParser(model.LegacyValidation)
	fams, err := parser.TextToMetricFamilies(resp.Body)
	if err != nil {
		t.Fatalf("%s: %v", url, err)
	}
	out := map[string]map[string]float64{}
	for name, f := range fams {
		out[name] = map[string]float64{}
		for _, m := range f.Metric {
			var labels []string
			for _, l := range m.Label {
				labels = append(labels, l.GetName()+"="+l.GetValue())
			}
			key := strings.Join(labels, ",")
			switch {
			case m.Counter != nil:
				out[name][key] = m.Counter.GetValue()
			case m.Gauge != nil:
				out[name][key] = m.Gauge.GetValue()
			case m.Histogram != nil:
				out[name][key] = float64(m.Histogram.GetSampleCount())
			}
		}
	}
	return out
}

// waitHTTP polls url until it answers.
func waitHTTP(t testing.TB, url string, p *proc) {
	t.Helper()
	deadline := time.Now().Add(20 * time.Second)
	for time.Now().Before(deadline) {
		select {
		case <-p.done:
			t.Fatalf("process exited before serving %s:\n%s", url, p.out.String())
		default:
		}
		if resp, err := http.Get(url); err == nil {
			io.Copy(io.Discard, resp.Body)
			resp.Body.Close()
			return
		}
		time.Sleep(20 * time.Millisecond)
	}
	t.Fatalf("%s did not answer", url)
}

// readLines reads a text file's non-comment lines.
func readLines(t testing.TB, path string) []string {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var lines []string
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		if l := sc.Text(); l != "" && !strings.HasPrefix(l, "#") {
			lines = append(lines, l)
		}
	}
	return lines
}
