package tests

// The README's soak recipe, run as written from the repository's root
// (time-scaled further so the test takes seconds), and the report's
// provenance checked against the inputs it names.

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// readmeRecipe returns the command between the README's soak-recipe
// markers, with its line continuations joined, split into words.
func readmeRecipe(t *testing.T) []string {
	t.Helper()
	b, err := os.ReadFile("../README.md")
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile(`(?s)<!-- soak-recipe -->(.*?)<!-- /soak-recipe -->`).FindSubmatch(b)
	if m == nil {
		t.Fatal("README.md has no soak-recipe section")
	}
	cmd := strings.ReplaceAll(string(m[1]), "\\\n", " ")
	return strings.Fields(cmd)
}

func TestReadmeSoakRecipe(t *testing.T) {
	words := readmeRecipe(t)
	if len(words) < 4 || strings.Join(words[:3], " ") != "go run ./cmd/monitor" || words[3] != "soak" {
		t.Fatalf("the recipe is not a `go run ./cmd/monitor soak …` command: %q", words)
	}
	monitor := buildCmd(t, "monitor")
	dir := t.TempDir()
	report := filepath.Join(dir, "report")
	summary := filepath.Join(dir, "summary.json")
	// As written, then: a shorter time scale, the report and summary in
	// the test's directory, no metrics endpoint (later flags win).
	args := append(append([]string(nil), words[3:]...),
		"--time-scale", "0.02", "--report", report, "--summary", summary, "--metrics", "off", "--progress", "0")
	cmd := exec.Command(monitor, args...)
	cmd.Dir = ".." // the repository's root, where the recipe runs
	out, err := cmd.CombinedOutput()
	code := 0
	if ee, ok := err.(*exec.ExitError); ok {
		code = ee.ExitCode()
	} else if err != nil {
		t.Fatal(err)
	}
	// 0: every phase passed; 5: some too short to judge at this scale.
	// Never a failure, a trip or an error.
	if code != 0 && code != 5 {
		t.Fatalf("exit status %d:\n%s", code, out)
	}
	html, err := os.ReadFile(filepath.Join(report, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	for _, id := range []string{"provenance", "prov-version", "prov-revision", "prov-go", "prov-command-line",
		"prov-time-scale", "prov-started", "prov-ended", "prov-seed"} {
		if !strings.Contains(string(html), `id="`+id+`"`) {
			t.Errorf("report.html has no element %q", id)
		}
	}
	var s struct {
		Provenance struct {
			Version     string   `json:"version"`
			CommandLine []string `json:"command_line"`
			TimeScale   float64  `json:"time_scale"`
			Started     string   `json:"started"`
			Ended       string   `json:"ended"`
			Inputs      []struct {
				Role   string `json:"role"`
				Path   string `json:"path"`
				SHA256 string `json:"sha256"`
			} `json:"inputs"`
		} `json:"provenance"`
	}
	b, err := os.ReadFile(summary)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &s); err != nil {
		t.Fatal(err)
	}
	p := s.Provenance
	if p.Version == "" || p.TimeScale != 0.02 || p.Started == "" || p.Ended == "" || len(p.CommandLine) != len(args)+1 {
		t.Errorf("provenance: %+v", p)
	}
	roles := map[string]bool{}
	for _, in := range p.Inputs {
		roles[in.Role] = true
		path := in.Path
		if !filepath.IsAbs(path) {
			path = filepath.Join("..", path)
		}
		data, err := os.ReadFile(path)
		if err != nil {
			t.Errorf("input %s %s: %v", in.Role, in.Path, err)
			continue
		}
		sum := sha256.Sum256(data)
		if got := hex.EncodeToString(sum[:]); got != in.SHA256 {
			t.Errorf("input %s %s: sha256 %s in the provenance, %s on disk", in.Role, in.Path, in.SHA256, got)
		}
		if !strings.Contains(string(html), in.SHA256) {
			t.Errorf("report.html lacks the sha256 of %s", in.Path)
		}
	}
	for _, r := range []string{"loop", "scenario"} {
		if !roles[r] {
			t.Errorf("no %s among the provenance's inputs: %v", r, roles)
		}
	}
}
