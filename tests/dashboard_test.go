package tests

import (
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"gopkg.in/yaml.v3"

	"rigwire/estimate/engine"
	"rigwire/estimate/report"
	"rigwire/profiles"
)

var metricName = regexp.MustCompile(`\brigwire_[a-z0-9_]+`)

const dashboardFile = "../deploy/dashboard/rigwire-bench.json"

// readDashboard returns the shipped dashboard's JSON.
func readDashboard(t *testing.T) any {
	t.Helper()
	data, err := os.ReadFile(dashboardFile)
	if err != nil {
		t.Fatal(err)
	}
	var dash any
	if err := json.Unmarshal(data, &dash); err != nil {
		t.Fatalf("%s: %v", filepath.Base(dashboardFile), err)
	}
	return dash
}

// stringsAt collects, anywhere in a JSON value, the strings held by the
// given keys.
func stringsAt(v any, keys ...string) []string {
	var out []string
	var walk func(v any)
	walk = func(v any) {
		switch v := v.(type) {
		case map[string]any:
			for k, x := range v {
				if s, ok := x.(string); ok && slices.Contains(keys, k) {
					out = append(out, s)
				}
				walk(x)
			}
		case []any:
			for _, x := range v {
				walk(x)
			}
		}
	}
	walk(v)
	return out
}

// queryStrings is the PromQL of a dashboard: every "expr" of a panel
// target and every "query" of a template variable.
func queryStrings(dash any) []string { return stringsAt(dash, "expr", "query") }

// beltLoop is a small loop of our own (a belt's speed, first order, under
// proportional control) with a decode section, for the monitor's metrics.
const beltLoop = `period: 10ms
plant: {a: [[-1]], b: [[1]], c: [[1]], process_noise: [[0.01]]}
controller: {d: [[2]]}
setpoint: [0.5]
profile: {name: belt, sensor_to_controller: {loss: 0.05}}
decode: {format: text, outputs: [{field: 1}], sequence: {field: 0}}
`

// servedNames returns the metric family names the relay serves, from live
// scrapes of the built impair binary after traffic crossed it (on a
// profile with a trip socket, and playing a scenario, whose phase series
// exist only then),
// and those the monitor serves, gathered from its engine's collector (the
// one `monitor run`, serve, soak and the demo serve) on a small loop in a
// soak phase with enough samples for the phase's interval.
func servedNames(t *testing.T) map[string]bool {
	t.Helper()
	names := map[string]bool{}
	rig := startRelay(t, "name: d\nsensor_to_controller: {loss: 0.2, delay: 1ms}\ncontroller_to_actuator: {delay: 1ms}\n",
		"--trip-listen", freePort(t, "udp"))
	for range 50 {
		rig.sensor.WriteToUDPAddrPort([]byte("x"), rig.listen)
	}
	time.Sleep(100 * time.Millisecond)
	for name := range scrape(t, rig.metrics) {
		names[name] = true
	}
	dir := t.TempDir()
	scen := filepath.Join(dir, "belt-soak.yaml")
	if err := os.WriteFile(scen, []byte("name: belt-soak\nprofile: {name: belt, sensor_to_controller: {loss: 0.1}}\n"+
		"phases:\n  - {name: steady, duration: 1m}\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	metrics := freePort(t, "tcp")
	ctl := udpLoopback(t)
	relay := start(t, buildCmd(t, "impair"), "run", "--scenario", scen, "--listen", freePort(t, "udp"),
		"--controller", apOf(ctl).String(), "--metrics", metrics)
	waitHTTP(t, "http://"+metrics+"/metrics", relay)
	for name := range scrape(t, "http://"+metrics+"/metrics") {
		names[name] = true
	}
	loopFile := filepath.Join(t.TempDir(), "belt.yaml")
	if err := os.WriteFile(loopFile, []byte(beltLoop), 0o644); err != nil {
		t.Fatal(err)
	}
	loop, err := profiles.LoadLoop(loopFile)
	if err != nil {
		t.Fatal(err)
	}
	m, err := engine.New(loop, nil, engine.Options{})
	if err != nil {
		t.Fatal(err)
	}
	reg := prometheus.NewPedanticRegistry()
	if err := m.RegisterMetrics(reg); err != nil {
		t.Fatal(err)
	}
	// A closed phase without a criterion (passes: its verdict series),
	// then a running one with a tolerance check and enough samples for
	// its interval.
	rng := rand.New(rand.NewPCG(5, 5))
	at := time.Now() // a phase judges samples from its start on
	feed := func(from, n int) {
		for k := from; k < from+n; k++ {
			m.Feed([]byte(fmt.Sprintf("%d,%g", k, 0.5+0.1*rng.NormFloat64())), at)
			at = at.Add(10 * time.Millisecond)
		}
	}
	tol := 0.2
	m.StartPhase(0, "calm", nil, 0, profiles.Check{})
	feed(0, 100)
	m.StartPhase(1, "steady", nil, 0, profiles.Check{Tolerance: &tol})
	feed(100, 2000)
	fams, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range fams {
		names[f.GetName()] = true
	}
	return names
}

// known reports whether a name used in a query is served: itself, or a
// histogram's _bucket, _sum or _count series.
func known(served map[string]bool, name string) bool {
	if served[name] {
		return true
	}
	for _, suffix := range []string{"_bucket", "_sum", "_count"} {
		if base, ok := strings.CutSuffix(name, suffix); ok && served[base] {
			return true
		}
	}
	return false
}

// The dashboard and the alert rules use only metric names the relay and
// the monitor really export (the files in deploy/).
func TestDeployedQueriesUseServedMetrics(t *testing.T) {
	served := servedNames(t)

	dashQueries := queryStrings(readDashboard(t))

	var rules struct {
		Groups []struct {
			Rules []struct {
				Alert string `yaml:"alert"`
				Expr  string `yaml:"expr"`
			} `yaml:"rules"`
		} `yaml:"groups"`
	}
	data, err := os.ReadFile(promDir + "/rigwire.rules.yml")
	if err != nil {
		t.Fatal(err)
	}
	if err := yaml.Unmarshal(data, &rules); err != nil {
		t.Fatalf("rigwire.rules.yml: %v", err)
	}
	var ruleQueries []string
	for _, g := range rules.Groups {
		for _, r := range g.Rules {
			ruleQueries = append(ruleQueries, r.Expr)
		}
	}

	cases := []struct {
		name    string
		queries []string
	}{
		{"dashboard", dashQueries},
		{"alert rules", ruleQueries},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if len(c.queries) == 0 {
				t.Fatal("no queries found")
			}
			used := map[string]bool{}
			for _, q := range c.queries {
				for _, n := range metricName.FindAllString(q, -1) {
					used[n] = true
				}
			}
			var names []string
			for n := range used {
				names = append(names, n)
			}
			sort.Strings(names)
			for _, n := range names {
				if !known(served, n) {
					t.Errorf("%s uses %s, which neither the relay nor the monitor exports", c.name, n)
				}
			}
			t.Logf("%d metric names checked", len(names))
		})
	}
}

// dashboardVars stand for the dashboard's template variables when its
// queries are checked: what Grafana substitutes with "All" selected.
var dashboardVars = strings.NewReplacer(`$relay_job`, `.*`, `$monitor_job`, `.*`, `$window`, `.*`, `$link`, `.*`,
	`$__range`, `1h`, `$__rate_interval`, `1m`)

// Every query of the dashboard is valid PromQL: each, its variables
// substituted, is a recording rule that promtool check rules accepts.
func TestDashboardQueriesParse(t *testing.T) {
	promtool := needTool(t, "promtool", "prometheus")
	queries := queryStrings(readDashboard(t))
	type rule struct {
		Record string `yaml:"record"`
		Expr   string `yaml:"expr"`
	}
	var rules []rule
	for i, q := range queries {
		if strings.HasPrefix(q, "label_values(") || q == "prometheus" {
			continue // template variables: Grafana's own functions
		}
		rules = append(rules, rule{Record: fmt.Sprintf("dashboard_query_%d", i), Expr: dashboardVars.Replace(q)})
	}
	out, err := yaml.Marshal(map[string]any{"groups": []any{map[string]any{"name": "dashboard", "rules": rules}}})
	if err != nil {
		t.Fatal(err)
	}
	file := filepath.Join(t.TempDir(), "dashboard.rules.yml")
	if err := os.WriteFile(file, out, 0o644); err != nil {
		t.Fatal(err)
	}
	if msg, err := exec.Command(promtool, "check", "rules", file).CombinedOutput(); err != nil {
		t.Fatalf("promtool check rules on the dashboard's %d queries: %v\n%s", len(rules), err, msg)
	}
	t.Logf("%d queries parse", len(rules))
}

// The colours the dashboard sets are the project's own palette (the one
// the soak report and the prediction plots draw with), never a plotting
// library's default cycle.
func TestDashboardColoursFromPalette(t *testing.T) {
	ours := map[string]bool{}
	for _, c := range append(slices.Clone(report.Palette), report.Ink, report.Mist) {
		ours[fmt.Sprintf("#%02x%02x%02x", c.R, c.G, c.B)] = true
	}
	// Every colour the dashboard sets: "fixedColor" and the "color" of a
	// value mapping.
	colours := stringsAt(readDashboard(t), "fixedColor", "color")
	if len(colours) == 0 {
		t.Fatal("the dashboard sets no colour")
	}
	for _, c := range colours {
		if !ours[strings.ToLower(c)] {
			t.Errorf("dashboard colour %q is not in the palette of estimate/report", c)
		}
	}
	t.Logf("%d colours checked", len(colours))
}
