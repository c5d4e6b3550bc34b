package profiles

import (
	"bytes"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"rigwire/profiles/laws"
	"rigwire/profiles/trace"
	"rigwire/profiles/yamlpos"
	"runtime"
	"strings"
	"syscall"
	"testing"
	"time"
	"unicode"
	"unicode/utf8"
)

// callDeadline is how long a refusal may take: the issue asks for a clear
// error within a second (the calls take microseconds; a reader that
// waits on a named pipe never returns, so the test fails instead of
// hanging).
const callDeadline = time.Second

// memBudget is the most a refusal may allocate: the 100 MB.
const memBudget = 100 << 20

// within runs f in a goroutine and fails the test when it does not
// return within callDeadline.
func within(t *testing.T, f func() error) error {
	t.Helper()
	done := make(chan error, 1)
	go func() { done <- f() }()
	select {
	case err := <-done:
		return err
	case <-time.After(callDeadline):
		t.Fatalf("no answer within %s (a reader blocked?)", callDeadline)
		return nil
	}
}

// allocated runs f and returns the bytes it allocated (runtime
// MemStats.TotalAlloc, which counts every allocation whatever the
// collector does meanwhile).
func allocated(f func()) uint64 {
	var before, after runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&before)
	f()
	runtime.ReadMemStats(&after)
	return after.TotalAlloc - before.TotalAlloc
}

func write(t *testing.T, path, text string) string {
	t.Helper()
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func mkfifo(t *testing.T, path string) string {
	t.Helper()
	if err := syscall.Mkfifo(path, 0o600); err != nil {
		t.Skipf("cannot make a named pipe here: %v", err)
	}
	return path
}

// loaders is every reader of this package, each given the path of the
// file under test in the place it reads.
func loaders(dir string) []struct {
	name string
	load func(path string) error
} {
	profile := func(p string) error { _, err := Load(p); return err }
	loop := func(p string) error { _, err := LoadLoop(p); return err }
	scenario := func(p string) error { _, err := LoadScenario(p); return err }
	// via loads, with load, a file named name that refers to the file
	// under test (text's %q).
	via := func(name, text string, load func(string) error) func(string) error {
		return func(path string) error {
			p := filepath.Join(dir, name)
			if err := os.WriteFile(p, fmt.Appendf(nil, text, path), 0o644); err != nil {
				return err
			}
			return load(p)
		}
	}
	return []struct {
		name string
		load func(path string) error
	}{
		{"profile", profile},
		{"loop", loop},
		{"scenario", scenario},
		{"trace", func(p string) error { _, err := trace.LoadTrace(p); return err }},
		{"empirical file", via("ref.yaml", "sensor_to_controller:\n  delay: {kind: empirical, file: %q}\n", profile)},
		{"trace in a profile", via("ref.yaml", "sensor_to_controller:\n  trace: {file: %q}\n", profile)},
		{"profile of a scenario", via("ref-scenario.yaml", "profile: %q\nphases:\n  - {name: a, duration: 1s}\n", scenario)},
		{"profile of a loop", via("ref-loop.yaml", "period: 10ms\nplant: {a: [[0]], b: [[1]], c: [[1]]}\ncontroller: {d: [[-1]]}\nprofile: %q\n", loop)},
	}
}

func TestInputFilesNotRegular(t *testing.T) {
	dir := t.TempDir()
	fifo := mkfifo(t, filepath.Join(dir, "pipe"))
	sub := filepath.Join(dir, "subdir")
	if err := os.Mkdir(sub, 0o755); err != nil {
		t.Fatal(err)
	}
	link := filepath.Join(dir, "link-to-pipe")
	if err := os.Symlink(fifo, link); err != nil {
		t.Fatal(err)
	}
	inputs := []struct {
		name, path, kind string
	}{
		{"named pipe", fifo, "a named pipe"},
		{"symbolic link to a named pipe", link, "a named pipe"},
		{"directory", sub, "a directory"},
		{"character device", "/dev/null", "a character device"},
	}
	for _, in := range inputs {
		for _, l := range loaders(dir) {
			t.Run(in.name+"/"+l.name, func(t *testing.T) {
				if _, err := os.Stat(in.path); err != nil {
					t.Skipf("%s: %v", in.path, err)
				}
				err := within(t, func() error { return l.load(in.path) })
				if err == nil {
					t.Fatal("accepted")
				}
				want := "not a regular file (" + in.kind + ")"
				if !strings.Contains(err.Error(), want) || !strings.Contains(err.Error(), filepath.Base(in.path)) {
					t.Errorf("got  %v\nwant the file named and %q", err, want)
				}
			})
		}
	}
}

func TestReadInputFile(t *testing.T) {
	dir := t.TempDir()
	small := write(t, filepath.Join(dir, "small.yaml"), "name: x\n")
	big := write(t, filepath.Join(dir, "big.yaml"), strings.Repeat("#\n", 600))
	cases := []struct {
		name, path string
		limit      int64
		want       string // error; "" for none
	}{
		{"regular file", small, 100, ""},
		{"at the cap", small, 8, ""},
		{"over the cap", big, 1024, "profile " + big + ": 1200 bytes, want at most 1024 (1 KiB)"},
		{"missing", filepath.Join(dir, "none.yaml"), 100, "reading profile: open " + filepath.Join(dir, "none.yaml") + ": no such file or directory"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			data, err := yamlpos.ReadInputFile(c.path, "profile", c.limit)
			if c.want == "" {
				if err != nil || len(data) == 0 {
					t.Fatalf("got %q, %v", data, err)
				}
				return
			}
			if err == nil || err.Error() != c.want {
				t.Fatalf("got  %v\nwant %s", err, c.want)
			}
		})
	}
}

// flowList is a YAML profile whose empirical samples are a flow list of
// n values, written densely ("0,0,0,…").
func flowList(n int) []byte {
	var b bytes.Buffer
	b.WriteString("sensor_to_controller:\n  delay: {kind: empirical, samples: [")
	for i := range n {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteByte('0')
	}
	b.WriteString("]}\n")
	return b.Bytes()
}

func TestLargeYAMLRefusedCheaply(t *testing.T) {
	dir := t.TempDir()
	huge := filepath.Join(dir, "huge.yaml")
	if err := os.WriteFile(huge, flowList(25_000_000), 0o644); err != nil { // 50 MB
		t.Fatal(err)
	}
	var err error
	n := allocated(func() { err = within(t, func() error { _, e := Load(huge); return e }) })
	if err == nil || !strings.Contains(err.Error(), "want at most 1048576 (1 MiB)") || !strings.Contains(err.Error(), huge) {
		t.Fatalf("got %v, want the file refused for its size", err)
	}
	t.Logf("refusing a 50 MB file: %d KB allocated", n>>10)
	if n > memBudget {
		t.Errorf("allocated %d MB refusing a 50 MB file, want under %d MB", n>>20, memBudget>>20)
	}

	// Under the byte cap, the densest layouts are counted before parsing.
	const small = 8 << 20 // allocation allowed to refuse 1 MiB (common practice: a few times the file)
	shapes := []struct {
		name string
		data []byte
	}{
		{"flow list", flowList(yamlpos.MaxNodes + 10)},
		{"flow mapping of keys", []byte("x: {" + strings.Repeat("a,", 400_000) + "b}\n")},
		{"block list", []byte(strings.Repeat("- 0\n", 200_000))},
		{"block mapping", []byte(strings.Repeat("? a\n", 200_000))},
	}
	for _, s := range shapes {
		t.Run(s.name, func(t *testing.T) {
			if len(s.data) > yamlpos.MaxYAMLBytes {
				t.Fatalf("test file of %d bytes is over the cap", len(s.data))
			}
			var err error
			n := allocated(func() { err = within(t, func() error { _, e := Parse(s.data, "x.yaml", dir); return e }) })
			if err == nil || !strings.Contains(err.Error(), "want at most 100000 values, got more") {
				t.Fatalf("got %v", err)
			}
			t.Logf("%d KB allocated", n>>10)
			if n > small {
				t.Errorf("allocated %d MB refusing it, want under %d MB", n>>20, small>>20)
			}
		})
	}

	// The densest file that is within the limits still loads.
	ok := flowList(yamlpos.MaxNodes - 100)
	var p *Profile
	n = allocated(func() {
		err = within(t, func() error { var e error; p, e = Parse(ok, "ok.yaml", dir); return e })
	})
	if err != nil {
		t.Fatal(err)
	}
	if got := p.SensorToController.States[0].Delay.(*laws.Empirical).Len(); got != yamlpos.MaxNodes-100 {
		t.Errorf("loaded %d samples, want %d", got, yamlpos.MaxNodes-100)
	}
	t.Logf("loading %d values: %d MB allocated", yamlpos.MaxNodes-100, n>>20)
	if n > memBudget {
		t.Errorf("allocated %d MB loading %d values, want under %d MB", n>>20, yamlpos.MaxNodes-100, memBudget>>20)
	}
}

func TestLongRampScenarioRefused(t *testing.T) {
	dir := t.TempDir()
	// A base profile of about 540 KB (60000 inline samples) ramped for
	// 9999 s at the default 1 s step: 9999 copies of it.
	var b bytes.Buffer
	b.WriteString("sensor_to_controller:\n  loss: 0.01\n  delay: {kind: empirical, samples: [")
	r := rand.New(rand.NewPCG(11, 12))
	for i := range 60000 {
		if i > 0 {
			b.WriteByte(',')
		}
		fmt.Fprintf(&b, "%.5f", 0.001+0.004*r.Float64())
	}
	b.WriteString("]}\n")
	write(t, filepath.Join(dir, "base.yaml"), b.String())
	sc := write(t, filepath.Join(dir, "long.yaml"), "profile: base.yaml\nphases:\n  - name: climb\n    duration: 9999s\n    ramp:\n      sensor_to_controller.loss: {from: 0.01, to: 0.2}\n")
	var err error
	n := allocated(func() { err = within(t, func() error { _, e := LoadScenario(sc); return e }) })
	want := sc + ":6: phases[0].ramp: the scenario's steps would hold"
	if err == nil || !strings.HasPrefix(err.Error(), want) || !strings.Contains(err.Error(), "want at most 2000000") {
		t.Fatalf("got  %v\nwant %s… want at most 2000000 …", err, want)
	}
	t.Logf("refusing the long ramp: %d MB allocated", n>>20)
	if n > memBudget {
		t.Errorf("allocated %d MB refusing it, want under %d MB", n>>20, memBudget>>20)
	}

	// The same ramp on a small profile loads and plays.
	write(t, filepath.Join(dir, "small.yaml"), "sensor_to_controller: {loss: 0.01, delay: 2ms}\n")
	ok := write(t, filepath.Join(dir, "ok.yaml"), "profile: small.yaml\nphases:\n  - name: climb\n    duration: 9999s\n    ramp:\n      sensor_to_controller.loss: {from: 0.01, to: 0.2}\n")
	s, err := LoadScenario(ok)
	if err != nil {
		t.Fatal(err)
	}
	if steps, err := s.Steps(); err != nil || len(steps) != 9999 {
		t.Fatalf("got %d steps, %v; want 9999", len(steps), err)
	}
}

func TestSampleFileBounds(t *testing.T) {
	dir := t.TempDir()
	prof := func(body string) string {
		write(t, filepath.Join(dir, "d.txt"), body)
		return write(t, filepath.Join(dir, "p.yaml"), "sensor_to_controller:\n  delay: {kind: empirical, file: d.txt}\n")
	}
	at := "p.yaml:2: sensor_to_controller.delay.file: d.txt:"
	cases := []struct {
		name, body, want string
	}{
		{"beyond an hour", "0.001\n1e10\n", at + "2: want a delay in [0, 3600] seconds, got 1e+10"},
		{"just beyond an hour", "3600.5\n", at + "1: want a delay in [0, 3600] seconds, got 3600.5"},
		{"a long duration", "2h\n", at + "1: want a delay in [0, 3600] seconds, got 7200"},
		{"negative", "# delays\n0.002\n-1\n", at + "3: want a delay in [0, 3600] seconds, got -1"},
		{"not a number", "NaN\n", at + "1: want a delay (seconds, or a duration such as \"3ms\"), got \"NaN\""},
		{"infinite", "+Inf\n", at + "1: want a delay (seconds, or a duration such as \"3ms\"), got \"+Inf\""},
		{"too many", strings.Repeat("0.001\n", laws.MaxSamples+1), at + "100001: want at most 100000 delays, got more"},
		{"a line too long", strings.Repeat("1", 5000) + "\n", at + "1: want one delay a line, got a line longer than 4096 bytes"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Load(prof(c.body))
			if err == nil || !strings.HasSuffix(err.Error(), c.want) {
				t.Fatalf("got  %v\nwant …%s", err, c.want)
			}
		})
	}
	t.Run("at the bounds", func(t *testing.T) {
		p, err := Load(prof("0\n3600\n" + strings.Repeat("1ms\n", laws.MaxSamples-2)))
		if err != nil {
			t.Fatal(err)
		}
		if n := p.SensorToController.States[0].Delay.(*laws.Empirical).Len(); n != laws.MaxSamples {
			t.Errorf("got %d samples, want %d", n, laws.MaxSamples)
		}
	})
}

func TestTraceDelayBound(t *testing.T) {
	head := "seq,send_s,status,rtt_s\n"
	cases := []struct {
		name, body, want string
	}{
		{"beyond an hour", head + "0,0,delivered,0.01\n1,0.1,delivered,3600.01\n", "t.csv:3: rtt_s: want a delay in [0, 3600] seconds or nothing, got \"3600.01\""},
		{"negative", head + "0,0,delivered,-0.01\n", "t.csv:2: rtt_s: want a delay in [0, 3600] seconds or nothing, got \"-0.01\""},
		{"not a number", head + "0,0,delivered,NaN\n", "t.csv:2: rtt_s: want a delay in [0, 3600] seconds or nothing, got \"NaN\""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := trace.ReadTrace(strings.NewReader(c.body), "t.csv")
			if err == nil || err.Error() != c.want {
				t.Fatalf("got  %v\nwant %s", err, c.want)
			}
		})
	}
}

// clean reports whether a message is fit to print: valid UTF-8 without
// control characters.
func clean(s string) bool {
	if !utf8.ValidString(s) {
		return false
	}
	for _, r := range s {
		if unicode.IsControl(r) {
			return false
		}
	}
	return true
}

func TestMessagesOnForeignFiles(t *testing.T) {
	dir := t.TempDir()
	const maxMessage = 300 // characters, besides the temporary directory's path
	r := rand.New(rand.NewPCG(3, 4))
	garbage := make([]byte, 4096)
	for i := range garbage {
		garbage[i] = byte(r.IntN(256))
	}
	printableGarbage := make([]byte, 4096)
	for i := range printableGarbage {
		printableGarbage[i] = byte(' ' + r.IntN(95))
		if i%64 == 63 {
			printableGarbage[i] = '\n'
		}
	}
	const secret = "root:hunter2-s3cr3t:0:0:root:/root:/bin/bash"
	files := []struct {
		name string
		data []byte
	}{
		{"binary", garbage},
		{"printable garbage", printableGarbage},
		{"binary without newlines", bytes.ReplaceAll(garbage, []byte("\n"), []byte("x"))},
		{"password file", []byte(secret + "\ndaemon:x:1:1:daemon:/usr/sbin:/usr/sbin/nologin\n")},
		{"hosts file", []byte("127.0.0.1 localhost " + secret + "\n::1 localhost\n")},
		{"long word", []byte(strings.Repeat("hunter2", 100) + "\n")},
	}
	for _, f := range files {
		path := filepath.Join(dir, "foreign")
		if err := os.WriteFile(path, f.data, 0o644); err != nil {
			t.Fatal(err)
		}
		for _, l := range loaders(dir) {
			t.Run(f.name+"/"+l.name, func(t *testing.T) {
				err := within(t, func() error { return l.load(path) })
				if err == nil {
					t.Fatal("accepted")
				}
				msg := strings.ReplaceAll(err.Error(), dir, "DIR")
				if !clean(msg) {
					t.Errorf("message holds raw bytes: %q", msg)
				}
				if len([]rune(msg)) > maxMessage {
					t.Errorf("message of %d characters, want at most %d: %s", len([]rune(msg)), maxMessage, msg)
				}
				if strings.Contains(msg, "hunter2") {
					t.Errorf("message repeats the file: %s", msg)
				}
			})
		}
	}
}
