package trace

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
	"slices"
	"strconv"
	"strings"
)

// A probe trace is the CSV that `impair probe` writes: one line per probe,
// in sending order, after comment lines starting with '#' (free text,
// and "# key: value" lines of metadata) and one header line naming the
// columns. Times are in seconds.
//
//	# rigwire probe trace v1
//	# interval_s: 0.002
//	# size_bytes: 64
//	# clocks_synced: true
//	seq,send_s,status,rtt_s,one_way_s,back_s,copies,reordered
//	0,0.000012,delivered,0.004113,0.003010,0.001103,1,0
//	1,0.002013,lost,,,,0,0
//
// Columns (any order; seq, send_s and status are required, the others
// optional, an unknown one is an error):
//
//	seq        the probe's sequence number, increasing from line to line
//	send_s     when it was sent, seconds since the probe run started
//	status     delivered (a reply came back) or lost (none did)
//	rtt_s      round trip, seconds (empty when lost)
//	one_way_s  outbound one-way delay, seconds (empty when lost or when
//	           the clocks were not declared synchronised)
//	back_s     return one-way delay, seconds (likewise)
//	copies     replies received for this probe: 0 lost, 1, more when duplicated
//	reordered  1 when the first reply came after the reply to a later probe
//
// Metadata read back: interval_s (the probe interval, seconds) and
// clocks_synced (true/false); others are kept as text in Trace.Meta.
const TraceHeaderComment = "# rigwire probe trace v1"

// TraceColumns are the columns a trace may have, in the order the prober
// writes them.
var TraceColumns = []string{"seq", "send_s", "status", "rtt_s", "one_way_s", "back_s", "copies", "reordered"}

// TraceDelayColumns are the columns that hold delays.
var TraceDelayColumns = []string{"rtt_s", "one_way_s", "back_s"}

// Trace is a probe trace read from a file.
type Trace struct {
	File         string
	Interval     float64 // seconds; 0 when the file does not say
	ClocksSynced bool
	Meta         map[string]string
	Columns      []string // as in the header
	Probes       []Probe
}

// Probe is one line of a trace. Delays not measured are NaN.
type Probe struct {
	Line      int
	Seq       int64
	Send      float64
	Lost      bool
	RTT       float64
	OneWay    float64
	Back      float64
	Copies    int
	Reordered bool
}

// MaxTraceProbes bounds the probe lines of a trace: the most `impair
// probe` sends in one run.
const MaxTraceProbes = 10_000_000

// ErrEmptyTrace is returned for a trace without probe lines.
var ErrEmptyTrace = errors.New("empty trace: no probe lines")

// LoadTrace reads the trace file at path.
func LoadTrace(path string) (*Trace, error) {
	f, _, err := yamlpos.OpenInputFile(path, "trace", yamlpos.MaxTraceBytes)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	return ReadTrace(yamlpos.LimitedReader(f, path, "trace", yamlpos.MaxTraceBytes), path)
}

// ReadTrace reads a trace from r; file names it in messages, which give
// the line: `wifi.csv:12: rtt_s: want a delay ≥ 0 in seconds, got "x"`.
func ReadTrace(r io.Reader, file string) (*Trace, error) {
	t := &Trace{File: file, Meta: map[string]string{}}
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 0, 4096), 1<<20)
	line := 0
	col := map[string]int{}
	errAt := func(format string, args ...any) error {
		return &yamlpos.Error{File: file, Line: line, Msg: fmt.Sprintf(format, args...)}
	}
	var lastSeq int64 = math.MinInt64
	for sc.Scan() {
		line++
		text := strings.TrimRight(sc.Text(), "\r")
		if strings.TrimSpace(text) == "" {
			continue
		}
		if strings.HasPrefix(text, "#") {
			if t.Columns == nil {
				if k, v, ok := strings.Cut(strings.TrimSpace(text[1:]), ":"); ok && !strings.Contains(k, " ") {
					if err := t.meta(strings.TrimSpace(k), strings.TrimSpace(v)); err != nil {
						return nil, errAt("%s", err)
					}
				}
			}
			continue
		}
		fields := strings.Split(text, ",")
		if t.Columns == nil {
			for i, name := range fields {
				name = strings.TrimSpace(name)
				if !slices.Contains(TraceColumns, name) {
					if w := yamlpos.ShownWord(name); strings.HasPrefix(w, `"`) {
						return nil, errAt("unknown column %s in the header; want some of %s", w, strings.Join(TraceColumns, ","))
					}
					return nil, errAt("want a header line of column names (some of %s), got other text", strings.Join(TraceColumns, ","))
				}
				if _, dup := col[name]; dup {
					return nil, errAt("column %s given twice", yamlpos.Token(name))
				}
				col[name] = i
				t.Columns = append(t.Columns, name)
			}
			for _, need := range []string{"seq", "send_s", "status"} {
				if _, ok := col[need]; !ok {
					return nil, errAt("header: missing column %q", need)
				}
			}
			continue
		}
		if len(fields) != len(t.Columns) {
			return nil, errAt("want %d fields, got %d (a truncated line?)", len(t.Columns), len(fields))
		}
		p := Probe{Line: line, RTT: math.NaN(), OneWay: math.NaN(), Back: math.NaN(), Copies: -1}
		for name, i := range col {
			v := strings.TrimSpace(fields[i])
			var err error
			switch name {
			case "seq":
				p.Seq, err = strconv.ParseInt(v, 10, 64)
				if err != nil || p.Seq < 0 {
					return nil, errAt("seq: want an integer ≥ 0, got %s", yamlpos.ShownNumber(v))
				}
			case "send_s":
				p.Send, err = strconv.ParseFloat(v, 64)
				if err != nil || !(p.Send >= 0) || math.IsInf(p.Send, 1) {
					return nil, errAt("send_s: want a time ≥ 0 in seconds, got %s", yamlpos.ShownNumber(v))
				}
			case "status":
				switch v {
				case "delivered":
				case "lost":
					p.Lost = true
				default:
					return nil, errAt("status: want delivered or lost, got %s", yamlpos.ShownWord(v))
				}
			case "rtt_s", "one_way_s", "back_s":
				if v == "" {
					continue
				}
				x, err := strconv.ParseFloat(v, 64)
				if err != nil || !(x >= 0) || x > laws.MaxDelay {
					return nil, errAt("%s: want a delay in [0, %g] seconds or nothing, got %s", name, laws.MaxDelay, yamlpos.ShownNumber(v))
				}
				switch name {
				case "rtt_s":
					p.RTT = x
				case "one_way_s":
					p.OneWay = x
				default:
					p.Back = x
				}
			case "copies":
				p.Copies, err = strconv.Atoi(v)
				if err != nil || p.Copies < 0 {
					return nil, errAt("copies: want an integer ≥ 0, got %s", yamlpos.ShownNumber(v))
				}
			case "reordered":
				switch v {
				case "0":
				case "1":
					p.Reordered = true
				default:
					return nil, errAt("reordered: want 0 or 1, got %s", yamlpos.ShownNumber(v))
				}
			}
		}
		if p.Lost && !(math.IsNaN(p.RTT) && math.IsNaN(p.OneWay) && math.IsNaN(p.Back)) {
			return nil, errAt("status lost but a delay is given")
		}
		if p.Seq <= lastSeq {
			return nil, errAt("seq: want increasing sequence numbers, got %d after %d", p.Seq, lastSeq)
		}
		lastSeq = p.Seq
		if len(t.Probes) == MaxTraceProbes {
			return nil, errAt("want at most %d probes, got more", MaxTraceProbes)
		}
		t.Probes = append(t.Probes, p)
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s:%d: reading trace: %w", file, line+1, err)
	}
	if t.Columns == nil {
		return nil, fmt.Errorf("%s: %w (and no header line)", file, ErrEmptyTrace)
	}
	if len(t.Probes) == 0 {
		return nil, fmt.Errorf("%s: %w", file, ErrEmptyTrace)
	}
	return t, nil
}

func (t *Trace) meta(k, v string) error {
	t.Meta[k] = v
	switch k {
	case "interval_s":
		x, err := strconv.ParseFloat(v, 64)
		if err != nil || !(x > 0) || x > laws.MaxDelay {
			return fmt.Errorf("interval_s: want a time in (0, %g] seconds, got %s", laws.MaxDelay, yamlpos.ShownNumber(v))
		}
		t.Interval = x
	case "clocks_synced":
		b, err := strconv.ParseBool(v)
		if err != nil {
			return fmt.Errorf("clocks_synced: want true or false, got %s", yamlpos.ShownWord(v))
		}
		t.ClocksSynced = b
	}
	return nil
}

// Fates returns, for the delay column (one of TraceDelayColumns), each
// probe's fate in order: lost[i], and delays[i] its delay (0 when lost).
// A delivered probe without a value in that column is an error naming
// its line.
func (t *Trace) Fates(column string) (delays []float64, lost []bool, err error) {
	if !slices.Contains(TraceDelayColumns, column) {
		return nil, nil, fmt.Errorf("%s: column %q: want one of %s", t.File, column, strings.Join(TraceDelayColumns, ", "))
	}
	if !slices.Contains(t.Columns, column) {
		return nil, nil, fmt.Errorf("%s: no column %q in the header", t.File, column)
	}
	delays = make([]float64, len(t.Probes))
	lost = make([]bool, len(t.Probes))
	for i, p := range t.Probes {
		if p.Lost {
			lost[i] = true
			continue
		}
		var x float64
		switch column {
		case "rtt_s":
			x = p.RTT
		case "one_way_s":
			x = p.OneWay
		default:
			x = p.Back
		}
		if math.IsNaN(x) {
			return nil, nil, fmt.Errorf("%s:%d: %s: delivered but no delay given", t.File, p.Line, column)
		}
		delays[i] = x
	}
	return delays, lost, nil
}

// ProbeInterval is the trace's probe interval: its interval_s metadata,
// else the median gap between consecutive send times.
func (t *Trace) ProbeInterval() float64 {
	if t.Interval > 0 {
		return t.Interval
	}
	if len(t.Probes) < 2 {
		return 0
	}
	gaps := make([]float64, 0, len(t.Probes)-1)
	for i := 1; i < len(t.Probes); i++ {
		gaps = append(gaps, t.Probes[i].Send-t.Probes[i-1].Send)
	}
	slices.Sort(gaps)
	return gaps[len(gaps)/2]
}
