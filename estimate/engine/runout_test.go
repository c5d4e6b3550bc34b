package engine

import (
	"bytes"
	"context"
	"encoding/json"
	"net"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// The verdict line: the numbers behind the verdict, "-" for those that do
// not exist, and the reason.
func TestVerdictLine(t *testing.T) {
	cases := []struct {
		name string
		s    Summary
		want string
	}{
		{"numbers", Summary{Verdict: "agree", ErrorSecondMoment: fp(0.0412), CILow: fp(0.039), CIHigh: fp(0.044), Level: 0.95,
			Samples: 1200, PredictedSecondMoment: fp(0.04), Tolerance: 0.1, VerdictReason: "inside"},
			"verdict agree: measured E[eᵀe] 0.0412, 95 % CI [0.039, 0.044] from 1200 samples; predicted 0.04; tolerance 0.1 — inside"},
		{"nothing measured", Summary{Verdict: "inconclusive", Level: 0.95, Tolerance: 0.1, VerdictReason: "no samples"},
			"verdict inconclusive: measured E[eᵀe] -, 95 % CI [-, -] from 0 samples; predicted -; tolerance 0.1 — no samples"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := c.s.VerdictLine(); got != c.want {
				t.Errorf("got  %q\nwant %q", got, c.want)
			}
		})
	}
}

// WriteSummary: to w for "" and "-"; to a file through a temporary one
// renamed into place (mode 0644, nothing left beside it); an error for a
// directory that does not exist.
func TestWriteSummary(t *testing.T) {
	s := &Summary{Samples: 12, Verdict: "agree"}
	want, err := json.MarshalIndent(s, "", "  ")
	if err != nil {
		t.Fatal(err)
	}
	want = append(want, '\n')
	for _, path := range []string{"", "-"} {
		var out bytes.Buffer
		if err := WriteSummary(&out, path, s); err != nil || !bytes.Equal(out.Bytes(), want) {
			t.Errorf("path %q: err %v, wrote %q", path, err, out.String())
		}
	}
	dir := t.TempDir()
	file := filepath.Join(dir, "summary.json")
	var out bytes.Buffer
	if err := WriteSummary(&out, file, s); err != nil {
		t.Fatal(err)
	}
	got, err := os.ReadFile(file)
	if err != nil || !bytes.Equal(got, want) || out.Len() != 0 {
		t.Errorf("file: err %v, %q (and %q on w)", err, got, out.String())
	}
	if st, err := os.Stat(file); err != nil || st.Mode().Perm() != 0o644 {
		t.Errorf("file mode %v (%v), want 0644", st.Mode(), err)
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Errorf("%d entries in the directory, want the summary alone", len(ents))
	}
	if err := WriteSummary(&out, filepath.Join(dir, "missing", "s.json"), s); err == nil {
		t.Errorf("no error for a directory that does not exist")
	}
}

// ServeFor ends after its duration with Serve's result (nil), having
// closed the socket; the status lines it writes meanwhile are Progress
// lines.
func TestServeFor(t *testing.T) {
	m, err := New(testLoop(t, textDecode), stablePred(0.04), Options{})
	if err != nil {
		t.Fatal(err)
	}
	conn, err := net.ListenUDP("udp", &net.UDPAddr{IP: net.IPv4(127, 0, 0, 1)})
	if err != nil {
		t.Fatal(err)
	}
	var w bytes.Buffer
	if err := m.ServeFor(context.Background(), conn, 50*time.Millisecond, 10*time.Millisecond, &w); err != nil {
		t.Fatalf("ServeFor: %v", err)
	}
	if _, err := conn.WriteToUDP([]byte("x"), conn.LocalAddr().(*net.UDPAddr)); err == nil {
		t.Errorf("the socket is still open after ServeFor")
	}
	line := regexp.MustCompile(`^ *\d+s  samples \d+  E\[eᵀe\] \S+  predicted 0\.04 `)
	for _, l := range strings.Split(strings.TrimSpace(w.String()), "\n") {
		if l != "" && !line.MatchString(l) {
			t.Errorf("status line %q", l)
		}
	}
}
