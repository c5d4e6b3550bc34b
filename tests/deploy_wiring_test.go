package tests

import (
	"net"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"syscall"
	"testing"
	"time"

	"gopkg.in/yaml.v3"
)

// metricsDefault is the default of a command's --metrics flag, read from
// its -h.
var metricsDefault = regexp.MustCompile(`(?m)^\s+-metrics HOST:PORT\n[^\n]*\(default "([^"]+)"\)`)

// The shipped scrape configuration has a target at the default metrics
// address of every command that serves metrics, in the job the rules and
// the dashboard expect.
func TestScrapeConfigCoversEveryServeMode(t *testing.T) {
	var cfg struct {
		ScrapeConfigs []struct {
			JobName       string `yaml:"job_name"`
			StaticConfigs []struct {
				Targets []string `yaml:"targets"`
			} `yaml:"static_configs"`
		} `yaml:"scrape_configs"`
	}
	data, err := os.ReadFile(filepath.Join(promDir, "prometheus.yml"))
	if err != nil {
		t.Fatal(err)
	}
	if err := yaml.Unmarshal(data, &cfg); err != nil {
		t.Fatalf("prometheus.yml: %v", err)
	}
	targets := map[string][]string{}
	for _, sc := range cfg.ScrapeConfigs {
		for _, st := range sc.StaticConfigs {
			targets[sc.JobName] = append(targets[sc.JobName], st.Targets...)
		}
	}
	cases := []struct {
		name, bin, sub, job string
	}{
		{"impair run", "impair", "run", "rigwire-relay"},
		{"monitor run", "monitor", "run", "rigwire-monitor"},
		{"monitor serve", "monitor", "serve", "rigwire-monitor"},
		{"monitor soak", "monitor", "soak", "rigwire-soak"},
		{"monitor demo", "monitor", "demo", "rigwire-demo"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			out, _ := exec.Command(buildCmd(t, c.bin), c.sub, "-h").CombinedOutput()
			m := metricsDefault.FindSubmatch(out)
			if m == nil {
				t.Fatalf("%s %s -h shows no --metrics default:\n%s", c.bin, c.sub, out)
			}
			if !slices.Contains(targets[c.job], string(m[1])) {
				t.Errorf("job %s scrapes %v, not %s's default %s", c.job, targets[c.job], c.name, m[1])
			}
		})
	}
}

// envArgs reads the flags of a deploy/systemd environment file's one
// assignment.
func envArgs(t *testing.T, file, key string) []string {
	t.Helper()
	data, err := os.ReadFile(filepath.Join("../deploy/systemd", file))
	if err != nil {
		t.Fatal(err)
	}
	for _, line := range strings.Split(string(data), "\n") {
		if v, ok := strings.CutPrefix(line, key+"="); ok {
			return strings.Fields(v)
		}
	}
	t.Fatalf("%s: no %s=", file, key)
	return nil
}

// flagValue is the value after --name in args, "" when absent.
func flagValue(args []string, name string) string {
	for i, a := range args {
		if a == "--"+name && i+1 < len(args) {
			return args[i+1]
		}
	}
	return ""
}

// The shipped units wire the safety trip: the relay's flags (relay.env)
// pin the sensor node and listen for trip requests where the monitor's
// (monitor.env) send them, and run as given — with only the addresses
// moved to free loopback ports (each address mapped to one port, so the
// tap still reaches the monitor and --trip-to still reaches
// --trip-listen) and the files replaced by test ones — a sample beyond the
// loop's trip bound, arriving through the relay's tap, makes the relay
// forward clean what its profile (loss 1) dropped before.
func TestSystemdEnvWiresTheTrip(t *testing.T) {
	relayArgs := envArgs(t, "relay.env", "RIGWIRE_RELAY_ARGS")
	monArgs := envArgs(t, "monitor.env", "RIGWIRE_MONITOR_ARGS")
	checks := []struct {
		name      string
		got, want string
	}{
		{"the monitor sends trip requests where the relay listens", flagValue(monArgs, "trip-to"), flagValue(relayArgs, "trip-listen")},
		{"the relay's tap reaches the monitor", flagValue(relayArgs, "tap"), flagValue(monArgs, "listen")},
	}
	for _, c := range checks {
		if c.got == "" || c.got != c.want {
			t.Errorf("%s: %q, want %q", c.name, c.got, c.want)
		}
	}
	for _, f := range []string{"sensor", "on-trip", "trip-listen"} {
		if flagValue(relayArgs, f) == "" {
			t.Errorf("relay.env: no --%s", f)
		}
	}

	dir := t.TempDir()
	block, loop := tripFiles(t, dir)
	ctl := udpLoopback(t)

	moved := map[string]string{}
	move := func(addr, network string) string {
		if moved[addr] == "" {
			moved[addr] = freePort(t, network)
		}
		return moved[addr]
	}
	rewrite := func(args []string) []string {
		out := slices.Clone(args)
		for i := 0; i+1 < len(out); i++ {
			v := &out[i+1]
			switch out[i] {
			case "--profile":
				*v = block
			case "--loop":
				*v = loop
			case "--summary":
				*v = filepath.Join(dir, "summary.json")
			case "--sensor":
				*v = "127.0.0.1"
			case "--controller":
				*v = ctl.LocalAddr().String()
			case "--metrics":
				*v = move(*v, "tcp")
			case "--listen", "--tap", "--trip-listen", "--trip-to":
				*v = move(*v, "udp")
			}
		}
		return out
	}
	relayArgs, monArgs = rewrite(relayArgs), rewrite(monArgs)
	relay := start(t, buildCmd(t, "impair"), append([]string{"run"}, relayArgs...)...)
	relayURL := "http://" + flagValue(relayArgs, "metrics") + "/metrics"
	waitHTTP(t, relayURL, relay)
	mon := start(t, buildCmd(t, "monitor"), append(append([]string{"run"}, monArgs...), "--progress", "0", "--no-margin")...)
	waitHTTP(t, "http://"+flagValue(monArgs, "metrics")+"/metrics", mon)

	sensor := udpLoopback(t)
	relayAddr, err := net.ResolveUDPAddr("udp4", flagValue(relayArgs, "listen"))
	if err != nil {
		t.Fatal(err)
	}
	tripSamples(t, sensor, relayAddr, 0, 5)
	deadline := time.Now().Add(20 * time.Second)
	for scrape(t, relayURL)["rigwire_relay_tripped"][""] != 1 {
		if time.Now().After(deadline) {
			t.Fatalf("the relay never tripped; trip requests %v; monitor log:\n%s",
				scrape(t, relayURL)["rigwire_relay_trip_requests_total"], mon.out.String())
		}
		time.Sleep(20 * time.Millisecond)
	}
	if s := scrape(t, relayURL)["rigwire_relay_sensor_source_info"]; len(s) != 1 {
		t.Errorf("sensor source %v, want the pinned node only", s)
	}
	tripSamples(t, sensor, relayAddr, 5, 10)
	if got := arrivals(ctl, 10, 3*time.Second); got != 10 {
		t.Errorf("after the trip (--on-trip %s) the controller got %d of 10", flagValue(relayArgs, "on-trip"), got)
	}
	mon.signal(t, syscall.SIGTERM)
	if code := mon.wait(t, 20*time.Second); code != 8 {
		t.Errorf("monitor exit status %d, want 8 (tripped)", code)
	}
	relay.signal(t, syscall.SIGTERM)
	if code := relay.wait(t, 20*time.Second); code != 0 {
		t.Errorf("relay exit status %d", code)
	}
}
