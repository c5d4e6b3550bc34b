package main

import (
	"bytes"
	"context"
	"math/rand/v2"
	"net/http/httptest"
	"strings"
	"testing"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/promhttp"

	"rigwire/cmd/internal/cli"
	"rigwire/emulate"
	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// TestRelayTurnaround: monitor run's --relay-metrics reads the relay's own
// turnaround histogram (emulate.NewMetrics, served by promhttp as the
// relay serves it, once as one relay and once as two links of a links
// file) and compares it with the loop's compute law: draws of the law
// agree (Kolmogorov–Smirnov at α = 0.001 at the buckets' bounds, whose
// gap never exceeds the exact statistic), a loop that says a constant
// 1 ms differs; a relay without the histogram, an unknown link and a
// links relay without --relay-link are errors that say what to do.
func TestRelayTurnaround(t *testing.T) {
	law, err := laws.NewGamma(2, 0.002, 0.001) // the jittery rig controller of tests/calibrate_e2e_test.go
	if err != nil {
		t.Fatal(err)
	}
	r := rand.New(rand.NewPCG(7, 8))
	single := prometheus.NewRegistry()
	one := emulate.NewMetrics(single)
	links := prometheus.NewRegistry()
	a := emulate.NewMetrics(prometheus.WrapRegistererWith(prometheus.Labels{"link": "arm"}, links))
	b := emulate.NewMetrics(prometheus.WrapRegistererWith(prometheus.Labels{"link": "pump"}, links))
	for range 4000 {
		x := law.Sample(r)
		one.Turnaround.Observe(x)
		a.Turnaround.Observe(x)
		b.Turnaround.Observe(x + 0.004)
	}
	srv := func(reg *prometheus.Registry) string {
		s := httptest.NewServer(promhttp.HandlerFor(reg, promhttp.HandlerOpts{}))
		t.Cleanup(s.Close)
		return s.URL
	}
	oneURL, linksURL, emptyURL := srv(single), srv(links), srv(prometheus.NewRegistry())
	loop := &profiles.Loop{Period: 0.01, Compute: law}
	flat := &profiles.Loop{Period: 0.01, Compute: laws.Constant{Value: 0.001}}
	ctx := context.Background()

	for _, c := range []struct {
		name, url, link string
		loop            *profiles.Loop
		agree           bool
	}{
		{"one relay, the law", oneURL, "", loop, true},
		{"one relay, a constant 1 ms", oneURL, "", flat, false},
		{"link arm, the law", linksURL, "arm", loop, true},
		{"link pump, 4 ms late", linksURL, "pump", loop, false},
	} {
		rep, err := relayTurnaround(ctx, c.url, c.link, c.loop)
		if err != nil || rep == nil {
			t.Fatalf("%s: %v, %v", c.name, rep, err)
		}
		if rep.Agree != c.agree || !rep.Binned || rep.Commands != 4000 {
			t.Errorf("%s: %s", c.name, rep)
		}
	}
	for _, c := range []struct{ name, url, link, want string }{
		{"no histogram", emptyURL, "", "is the relay run with --loop"},
		{"links, no --relay-link", linksURL, "", "say which with --relay-link"},
		{"unknown link", linksURL, "conveyor", `no link "conveyor" (the relay's links: arm, pump)`},
	} {
		_, err := relayTurnaround(ctx, c.url, c.link, loop)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want …%s…", c.name, err, c.want)
		}
	}
}

// TestRelayMetricsFlag: --relay-metrics takes a URL or HOST:PORT and
// refuses anything else; --relay-link needs it.
func TestRelayMetricsFlag(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"--relay-metrics", "ftp://x/metrics"}, "relay-metrics"},
		{[]string{"--relay-metrics", "http://"}, "relay-metrics"},
		{[]string{"--relay-link", "arm"}, "--relay-link: needs --relay-metrics"},
	} {
		var out, errb bytes.Buffer
		err := cmdRun(append([]string{"--loop", "x.yaml", "--listen", "127.0.0.1:0"}, c.args...), &out, &errb)
		if err == nil || !strings.Contains(err.Error()+errb.String(), c.want) {
			t.Errorf("%v: %v %s, want …%s…", c.args, err, errb.String(), c.want)
		}
	}
	var f relayMetricsFlag
	fs := cli.NewFlags("test", "", "")
	f.register(fs)
	if err := fs.Parse([]string{"--relay-metrics", "127.0.0.1:9470"}); err != nil || f.url != "http://127.0.0.1:9470/metrics" {
		t.Errorf("HOST:PORT: %q, %v", f.url, err)
	}
}
