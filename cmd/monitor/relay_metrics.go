package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/url"
	"strings"
	"sync"
	"time"

	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"

	"rigwire/cmd/internal/cli"
	"rigwire/estimate/engine"
	"rigwire/profiles"
)

// turnaroundMetric is the relay's histogram of the controller's
// turnaround (emulate/metrics.go).
const turnaroundMetric = "rigwire_relay_controller_turnaround_seconds"

// relayMetricsFlag is monitor run's --relay-metrics: the relay's metrics
// page, read for its turnaround histogram.
type relayMetricsFlag struct {
	url  string // "" when not given
	link string // --relay-link: the links file's link, "" for a single relay
}

func (f *relayMetricsFlag) register(fs *cli.Flags) {
	fs.Func("relay-metrics", "read the controller's turnaround from the relay's metrics page at `URL` (http://HOST:PORT/metrics, or HOST:PORT; impair run --loop --metrics) and compare it with the loop's compute_delay", func(s string) error {
		if !strings.Contains(s, "://") {
			s = "http://" + s + "/metrics"
		}
		u, err := url.Parse(s)
		if err != nil || (u.Scheme != "http" && u.Scheme != "https") || u.Host == "" {
			return fmt.Errorf("want http://HOST:PORT/PATH or HOST:PORT, got %q", s)
		}
		f.url = u.String()
		return nil
	})
	fs.StringVar(&f.link, "relay-link", "", "with --relay-metrics of a relay serving several links (impair run --links): the link `NAME` whose turnaround to read")
}

// watch reads the relay's page every 10 s until ctx ends, and once more
// then; the result is the latest page read (nil without --relay-metrics,
// or when the relay measured no turnaround), and a page that cannot be
// read or compared is logged, never fatal: the run's summary does not
// depend on it.
func (f *relayMetricsFlag) watch(ctx context.Context, loop *profiles.Loop, log *slog.Logger) func() *engine.Turnaround {
	if f.url == "" {
		return func() *engine.Turnaround { return nil }
	}
	var (
		mu     sync.Mutex
		latest *engine.Turnaround
		warned string
	)
	read := func() {
		rctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		r, err := relayTurnaround(rctx, f.url, f.link, loop)
		mu.Lock()
		defer mu.Unlock()
		switch {
		case err != nil && err.Error() != warned:
			warned = err.Error()
			log.Warn("--relay-metrics: the controller's turnaround", "err", err)
		case err == nil && r != nil:
			latest = r
		}
	}
	done := make(chan struct{})
	go func() {
		defer close(done)
		t := time.NewTicker(10 * time.Second)
		defer t.Stop()
		for {
			read()
			select {
			case <-ctx.Done():
				read()
				return
			case <-t.C:
			}
		}
	}()
	return func() *engine.Turnaround {
		<-done
		mu.Lock()
		defer mu.Unlock()
		return latest
	}
}

// errNoTurnaround: the page has no turnaround histogram.
var errNoTurnaround = errors.New("the page has no " + turnaroundMetric + " (is the relay run with --loop, and does the loop have a command_decode section?)")

// relayTurnaround reads the relay's metrics page at u and compares its
// turnaround histogram (of the link named link, or the only one) with
// the loop's compute law; nil when it has counted nothing yet.
func relayTurnaround(ctx context.Context, u, link string, loop *profiles.Loop) (*engine.Turnaround, error) {
	req, err := http.NewRequestWithContext(ctx, http.MethodGet, u, nil)
	if err != nil {
		return nil, err
	}
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		return nil, err
	}
	defer resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		return nil, fmt.Errorf("%s: %s", u, resp.Status)
	}
	dec := expfmt.NewDecoder(resp.Body, expfmt.ResponseFormat(resp.Header))
	for {
		var mf dto.MetricFamily
		if err := dec.Decode(&mf); err != nil {
			if errors.Is(err, io.EOF) {
				return nil, fmt.Errorf("%s: %w", u, errNoTurnaround)
			}
			return nil, fmt.Errorf("%s: %w", u, err)
		}
		if mf.GetName() != turnaroundMetric {
			continue
		}
		h, err := pickLink(mf.GetMetric(), link)
		if err != nil {
			return nil, fmt.Errorf("%s: %s: %w", u, turnaroundMetric, err)
		}
		bs := make([]engine.Bucket, 0, len(h.GetBucket()))
		for _, b := range h.GetBucket() {
			bs = append(bs, engine.Bucket{Upper: b.GetUpperBound(), Count: b.GetCumulativeCount()})
		}
		r, err := engine.CompareTurnaroundHistogram(loop, bs, h.GetSampleCount(), h.GetSampleSum())
		if err != nil {
			return nil, fmt.Errorf("%s: %s: %w", u, turnaroundMetric, err)
		}
		return r, nil
	}
}

// pickLink is the histogram of the link named link ("": the only one).
func pickLink(ms []*dto.Metric, link string) (*dto.Histogram, error) {
	var names []string
	for _, m := range ms {
		name := ""
		for _, l := range m.GetLabel() {
			if l.GetName() == "link" {
				name = l.GetValue()
			}
		}
		if m.GetHistogram() == nil {
			return nil, errors.New("not a histogram")
		}
		if name == link || (link == "" && len(ms) == 1) {
			return m.GetHistogram(), nil
		}
		names = append(names, name)
	}
	if link == "" {
		return nil, fmt.Errorf("the relay serves links %s: say which with --relay-link", strings.Join(names, ", "))
	}
	return nil, fmt.Errorf("no link %q (the relay's links: %s)", link, strings.Join(names, ", "))
}
