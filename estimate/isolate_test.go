package estimate_test

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"os/exec"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
)

// Cases that may hang, or grow without bound, run in a child process: this
// test binary started again with -test.run=^TestIsolatedChild$. The child
// runs a suite's cases one after the other and writes one line per case;
// the parent watches the time of each case and the child's resident size,
// kills the child when a case overstays its timeout or the memory bound,
// records that case, and starts a new child at the next case. A hang in
// LAPACK cannot be interrupted inside a process (a goroutine left spinning
// would slow every test after it); a process can be killed.

const (
	isolatedSuiteEnv = "RIGWIRE_ISOLATED_SUITE"
	isolatedFromEnv  = "RIGWIRE_ISOLATED_FROM"
)

// isolatedCase is one case of a suite: Run is called in the child.
// Timeout and MaxRSSKB, when set, replace the suite's bounds for it.
type isolatedCase struct {
	Name     string
	Run      func() childResult
	Timeout  time.Duration
	MaxRSSKB int64
}

// childResult is what the child reports of one case. Numbers travel as
// text so that NaN and ±Inf survive JSON.
type childResult struct {
	Err     string            `json:"err,omitempty"`
	Nums    map[string]string `json:"nums,omitempty"`
	Strs    map[string]string `json:"strs,omitempty"`
	Seconds map[string]string `json:"seconds,omitempty"`
}

func (r *childResult) num(k string, v float64) {
	if r.Nums == nil {
		r.Nums = map[string]string{}
	}
	r.Nums[k] = strconv.FormatFloat(v, 'g', -1, 64)
}

func (r *childResult) str(k, v string) {
	if r.Strs == nil {
		r.Strs = map[string]string{}
	}
	r.Strs[k] = v
}

func (r *childResult) took(k string, d time.Duration) {
	if r.Seconds == nil {
		r.Seconds = map[string]string{}
	}
	r.Seconds[k] = strconv.FormatFloat(d.Seconds(), 'g', -1, 64)
}

// Num returns a reported number; NaN when it was not reported.
func (r *childResult) Num(k string) float64 {
	s, ok := r.Nums[k]
	if !ok {
		return math.NaN()
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return math.NaN()
	}
	return v
}

func (r *childResult) Has(k string) bool { _, ok := r.Nums[k]; return ok }

// Took returns a reported duration; 0 when not reported.
func (r *childResult) Took(k string) time.Duration {
	v, err := strconv.ParseFloat(r.Seconds[k], 64)
	if err != nil {
		return 0
	}
	return time.Duration(v * float64(time.Second))
}

// isolatedOutcome is what became of one case in the parent.
type isolatedOutcome struct {
	Result *childResult // nil when the case did not answer
	// Failure says why there is no result: "timeout after 5s", "memory:
	// resident 1.2 GB", "child exited: …".
	Failure string
	// PeakRSSKB is the largest resident size seen while the case ran
	// (kB, from /proc/PID/status, sampled every 20 ms), the child's own
	// start-up included.
	PeakRSSKB int64
}

// isolatedSuites maps a suite's name to its cases; the child and the
// parent build the same list.
var isolatedSuites = map[string]func() ([]isolatedCase, error){}

// TestIsolatedChild is the child's side; it does nothing unless a parent
// started it.
func TestIsolatedChild(t *testing.T) {
	suite := os.Getenv(isolatedSuiteEnv)
	if suite == "" {
		t.Skip("helper process of the isolated tests: runs only when one of them starts it")
	}
	from, _ := strconv.Atoi(os.Getenv(isolatedFromEnv))
	mk, ok := isolatedSuites[suite]
	if !ok {
		fmt.Printf("isolated-error unknown suite %q\n", suite)
		return
	}
	cases, err := mk()
	if err != nil {
		fmt.Printf("isolated-error %v\n", strings.ReplaceAll(err.Error(), "\n", " "))
		return
	}
	for i := from; i < len(cases); i++ {
		fmt.Printf("isolated-start %d\n", i)
		res := cases[i].Run()
		b, _ := json.Marshal(res)
		fmt.Printf("isolated-result %d %s\n", i, b)
	}
}

// runIsolated runs every case of suite in child processes and returns
// the cases and one outcome per case. A case gets timeout unless it sets
// its own; the child is killed when its resident size passes maxRSSKB (or
// the case's own bound).
func runIsolated(t *testing.T, suite string, timeout time.Duration, maxRSSKB int64) ([]isolatedCase, []isolatedOutcome) {
	t.Helper()
	cases, err := isolatedSuites[suite]()
	if err != nil {
		t.Fatalf("isolated suite %s: %v", suite, err)
	}
	n := len(cases)
	tmo := make([]time.Duration, n)
	rss := make([]int64, n)
	for i, c := range cases {
		tmo[i], rss[i] = timeout, maxRSSKB
		if c.Timeout > 0 {
			tmo[i] = c.Timeout
		}
		if c.MaxRSSKB > 0 {
			rss[i] = c.MaxRSSKB
		}
	}
	out := make([]isolatedOutcome, n)
	for from := 0; from < n; {
		next, err := runChild(suite, from, n, tmo, rss, out)
		if err != nil {
			t.Fatalf("isolated suite %s: %v", suite, err)
		}
		from = next
	}
	return cases, out
}

// runChild starts one child at case from and collects outcomes until the
// child ends; it returns the index to start the next child at.
func runChild(suite string, from, n int, timeout []time.Duration, maxRSSKB []int64, out []isolatedOutcome) (int, error) {
	cmd := exec.Command(os.Args[0], "-test.run=^TestIsolatedChild$", "-test.count=1", "-test.v=false")
	cmd.Env = append(os.Environ(), isolatedSuiteEnv+"="+suite, isolatedFromEnv+"="+strconv.Itoa(from))
	stdout, err := cmd.StdoutPipe()
	if err != nil {
		return n, err
	}
	var stderr lockedBuffer
	cmd.Stderr = &stderr
	if err := cmd.Start(); err != nil {
		return n, err
	}
	lines := make(chan string)
	go func() {
		sc := bufio.NewScanner(stdout)
		sc.Buffer(make([]byte, 1<<20), 1<<24)
		for sc.Scan() {
			lines <- sc.Text()
		}
		close(lines)
	}()
	kill := func() {
		_ = cmd.Process.Kill() // the child this function started, by its own handle
		for range lines {
		}
		_ = cmd.Wait()
	}
	cur := -1
	var deadline <-chan time.Time
	tick := time.NewTicker(20 * time.Millisecond)
	defer tick.Stop()
	for {
		select {
		case line, ok := <-lines:
			if !ok {
				_ = cmd.Wait()
				if cur >= 0 && out[cur].Result == nil {
					out[cur].Failure = "child exited during the case: " + tailOf(stderr.String(), 600)
					return cur + 1, nil
				}
				if cur < 0 {
					return n, fmt.Errorf("child ended before its first case: %s", tailOf(stderr.String(), 600))
				}
				return n, nil
			}
			f := strings.SplitN(line, " ", 3)
			switch f[0] {
			case "isolated-start":
				cur, _ = strconv.Atoi(f[1])
				deadline = time.After(timeout[cur])
			case "isolated-result":
				i, _ := strconv.Atoi(f[1])
				var r childResult
				if len(f) < 3 || json.Unmarshal([]byte(f[2]), &r) != nil {
					out[i].Failure = "unreadable result line: " + line
				} else {
					out[i].Result = &r
				}
			case "isolated-error":
				kill()
				return n, fmt.Errorf("%s", line)
			}
		case <-deadline:
			kill()
			out[cur].Failure = fmt.Sprintf("no answer within %v (child killed)", timeout[cur])
			return cur + 1, nil
		case <-tick.C:
			if cur < 0 {
				continue
			}
			rss := statusKB(cmd.Process.Pid, "VmRSS")
			if rss > out[cur].PeakRSSKB {
				out[cur].PeakRSSKB = rss
			}
			if maxRSSKB[cur] > 0 && rss > maxRSSKB[cur] {
				kill()
				out[cur].Failure = fmt.Sprintf("resident size %d MB passed the bound of %d MB (child killed)", rss>>10, maxRSSKB[cur]>>10)
				return cur + 1, nil
			}
		}
	}
}

// statusKB reads a "Name: N kB" line of /proc/PID/status; 0 when absent.
func statusKB(pid int, name string) int64 {
	b, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		return 0
	}
	return statusField(b, name)
}

func statusField(b []byte, name string) int64 {
	for _, l := range strings.Split(string(b), "\n") {
		if strings.HasPrefix(l, name+":") {
			f := strings.Fields(l[len(name)+1:])
			if len(f) > 0 {
				v, _ := strconv.ParseInt(f[0], 10, 64)
				return v
			}
		}
	}
	return 0
}

// selfKB reads a field of this process's own /proc/self/status.
func selfKB(name string) int64 {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		return 0
	}
	return statusField(b, name)
}

func tailOf(s string, n int) string {
	s = strings.TrimSpace(s)
	if len(s) > n {
		s = "…" + s[len(s)-n:]
	}
	return s
}

type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}
