package links

import (
	"bufio"
	"os"
	"path/filepath"
	"rigwire/emulate/endpoint"
	"strings"
	"testing"
)

// Every file in testdata/bad-links starts with "# want: SUBSTRING", a part
// of the error Load must return for it.
func TestBadLinks(t *testing.T) {
	files, err := filepath.Glob("testdata/bad-links/*.yaml")
	if err != nil || len(files) == 0 {
		t.Fatalf("no fixtures: %v", err)
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			want := fixtureWant(t, f)
			_, err := Load(f)
			if err == nil {
				t.Fatalf("loaded; want an error with %q", want)
			}
			if !strings.Contains(err.Error(), want) {
				t.Errorf("error %q\nwant it to contain %q", err, want)
			}
		})
	}
}

func fixtureWant(t *testing.T, path string) string {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	sc := bufio.NewScanner(fh)
	if !sc.Scan() || !strings.HasPrefix(sc.Text(), "# want: ") {
		t.Fatalf("%s: first line must be \"# want: …\"", path)
	}
	return strings.TrimPrefix(sc.Text(), "# want: ")
}

func TestGoodLinks(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "rigs.yaml")
	data := `metrics: 127.0.0.1:9999
links:
  - name: conveyor
    listen: 127.0.0.1:7001
    controller: 127.0.0.1:7101
    actuator: 127.0.0.1:7201
    tap: 127.0.0.1:7301
    profile: conveyor.yaml
    seed: 11
    record: conveyor.csv
    trip_listen: 127.0.0.1:7401
    on_trip: stop_commands
    trip_from: 127.0.0.2
  - name: pick-arm_2
    listen: 127.0.0.1:7002
    controller: 127.0.0.1:7102
    scenario: /abs/soak.yaml
`
	if err := os.WriteFile(path, []byte(data), 0o644); err != nil {
		t.Fatal(err)
	}
	lf, err := Load(path)
	if err != nil {
		t.Fatal(err)
	}
	if lf.Metrics != "127.0.0.1:9999" || len(lf.Links) != 2 {
		t.Fatalf("got %+v", lf)
	}
	a, b := lf.Links[0], lf.Links[1]
	if a.Name != "conveyor" || a.Listen.String() != "127.0.0.1:7001" || a.Actuator.String() != "127.0.0.1:7201" ||
		a.Tap.String() != "127.0.0.1:7301" || a.ProfilePath != filepath.Join(dir, "conveyor.yaml") ||
		!a.SeedSet || a.Seed != 11 || a.RecordPath != filepath.Join(dir, "conveyor.csv") ||
		a.TripListen.String() != "127.0.0.1:7401" || a.OnTrip.String() != "stop_commands" || a.TripFrom.String() != "127.0.0.2" {
		t.Errorf("first link: %+v", a)
	}
	if b.Name != "pick-arm_2" || b.ScenarioPath != "/abs/soak.yaml" || b.ProfilePath != "" || b.SeedSet || b.TripListen.IsValid() {
		t.Errorf("second link: %+v", b)
	}
	if a.File != path || b.File != path || a.Line != 3 || b.Line != 14 {
		t.Errorf("entries at %s:%d and %s:%d, want %s:3 and :14", a.File, a.Line, b.File, b.Line, path)
	}
}

// FuzzParseLinks: any file is accepted or rejected with a positioned
// error, never a panic.
func FuzzParseLinks(f *testing.F) {
	for _, s := range []string{
		"links:\n  - {name: a, listen: 127.0.0.1:7001, controller: 127.0.0.1:7101, profile: p.yaml}\n",
		"links: [{name: a, listen: 127.0.0.1:7001, controller: 127.0.0.1:7101, scenario: s.yaml, trip_listen: 127.0.0.1:7401, on_trip: clean, trip_from: 127.0.0.1}]\n",
		"metrics: off\nlinks: &x [*x]\n",
	} {
		f.Add([]byte(s))
	}
	endpoint.LookupNames = false
	f.Cleanup(func() { endpoint.LookupNames = true })
	f.Fuzz(func(t *testing.T, data []byte) {
		lf, err := Parse(data, "fuzz.yaml", "/nowhere")
		if err == nil && len(lf.Links) == 0 {
			t.Fatal("accepted a file without links")
		}
		if err != nil && !strings.HasPrefix(err.Error(), "fuzz.yaml") {
			t.Fatalf("error without the file name: %v", err)
		}
	})
}
