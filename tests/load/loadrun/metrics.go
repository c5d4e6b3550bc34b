package main

import (
	"bufio"
	"fmt"
	"io"
	"net/http"
	"strconv"
	"strings"
	"time"
)

// sample is one line of the Prometheus text exposition format:
// name{label="value",…} number.
type sample struct {
	name   string
	labels map[string]string
	value  float64
}

// parseExposition reads the samples of a Prometheus text exposition
// (format 0.0.4: '#' lines are comments; label values are quoted with
// backslash escapes). An optional timestamp after the value is ignored.
func parseExposition(r io.Reader) ([]sample, error) {
	var out []sample
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), 1<<20)
	line := 0
	for sc.Scan() {
		line++
		t := strings.TrimSpace(sc.Text())
		if t == "" || strings.HasPrefix(t, "#") {
			continue
		}
		s := sample{labels: map[string]string{}}
		rest := t
		if i := strings.IndexAny(t, "{ "); i >= 0 {
			s.name, rest = t[:i], t[i:]
		} else {
			return nil, fmt.Errorf("metrics:%d: want NAME VALUE, got %q", line, t)
		}
		if strings.HasPrefix(rest, "{") {
			var err error
			rest, err = parseLabels(rest[1:], s.labels)
			if err != nil {
				return nil, fmt.Errorf("metrics:%d: %w", line, err)
			}
		}
		f := strings.Fields(rest)
		if len(f) < 1 {
			return nil, fmt.Errorf("metrics:%d: no value after %q", line, s.name)
		}
		v, err := strconv.ParseFloat(f[0], 64)
		if err != nil {
			return nil, fmt.Errorf("metrics:%d: value of %s: %w", line, s.name, err)
		}
		s.value = v
		out = append(out, s)
	}
	return out, sc.Err()
}

// parseLabels reads `a="x",b="y"}` into m and returns what follows '}'.
func parseLabels(s string, m map[string]string) (string, error) {
	for {
		s = strings.TrimLeft(s, " ,")
		if strings.HasPrefix(s, "}") {
			return s[1:], nil
		}
		eq := strings.IndexByte(s, '=')
		if eq < 0 || len(s) < eq+2 || s[eq+1] != '"' {
			return "", fmt.Errorf("label: want NAME=\"VALUE\", got %q", s)
		}
		key := strings.TrimSpace(s[:eq])
		s = s[eq+2:]
		var b strings.Builder
		i := 0
		for ; i < len(s) && s[i] != '"'; i++ {
			if s[i] == '\\' && i+1 < len(s) {
				i++
				switch s[i] {
				case 'n':
					b.WriteByte('\n')
				default:
					b.WriteByte(s[i])
				}
				continue
			}
			b.WriteByte(s[i])
		}
		if i >= len(s) {
			return "", fmt.Errorf("label %s: unterminated value", key)
		}
		m[key] = b.String()
		s = s[i+1:]
	}
}

// scrape fetches and parses a metrics endpoint on loopback.
func scrape(addr string) ([]sample, error) {
	c := http.Client{Timeout: 2 * time.Second}
	resp, err := c.Get("http://" + addr + "/metrics")
	if err != nil {
		return nil, err
	}
	defer resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		return nil, fmt.Errorf("scraping %s: status %s", addr, resp.Status)
	}
	return parseExposition(resp.Body)
}

// relayOutcomes sums rigwire_relay_datagrams_total by outcome over all
// directions.
func relayOutcomes(ss []sample) map[string]float64 {
	out := map[string]float64{}
	for _, s := range ss {
		if s.name == "rigwire_relay_datagrams_total" {
			out[s.labels["outcome"]] += s.value
		}
	}
	return out
}
