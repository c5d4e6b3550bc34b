package main

import (
	"encoding/json"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"syscall"
	"time"

	"rigwire/tests/load/loadkit"
)

// The forwarders the script measures, and "direct" (no forwarder).
const (
	tRelay  = "relay"
	tBatch  = "batch"
	tNaive  = "naive"
	tSocat  = "socat"
	tDirect = "direct"
)

// env is what every trial shares.
type env struct {
	bin     string // directory of udpgen, udpsink, naivefwd, batchfwd[, impair]
	impair  string // path of the relay binary, "" if absent
	socat   string // path of socat, "" if absent
	work    string // trial directories go here
	pin     bool   // forwarder on CPU 1, generator and sink on CPU 0
	nice    int    // niceness of every child, 0 to leave it
	hz      float64
	procs   *procs
	rng     *rand.Rand
	profile map[string]string // profile name → file
	n       int               // trials so far
	verbose bool

	quietSpent time.Duration // waitQuiet's time so far
	waiting    bool          // waitQuiet has said so
}

// trialSpec says what one trial runs.
type trialSpec struct {
	Target   string        `json:"target"`
	Size     int           `json:"size"`
	Rate     float64       `json:"rate"`
	Duration time.Duration `json:"duration_ns"`
	Profile  string        `json:"profile,omitempty"` // relay only: "zero" or "delay"
	Record   bool          `json:"record,omitempty"`  // relay only
	Drain    time.Duration `json:"drain_ns"`
}

// trialResult is what one trial measured.
type trialResult struct {
	Spec         trialSpec          `json:"spec"`
	Dir          string             `json:"dir"`
	Err          string             `json:"error,omitempty"`
	Attempt      int                `json:"attempt"` // 1, or more when a busy trial was repeated
	Gen          genReport          `json:"generator"`
	Sink         sinkReport         `json:"sink"`
	Lost         uint64             `json:"lost"`
	Explained    uint64             `json:"explained"` // relay: dropped by the profile's decision
	Unexplained  float64            `json:"unexplained_loss"`
	CPUShare     float64            `json:"forwarder_cpu_share"` // of one core, over the send
	Foreign      float64            `json:"foreign_cores"`       // others' CPU use over the send, cores
	Steal        float64            `json:"steal_cores"`         // hypervisor steal over the send, cores
	Outcomes     map[string]float64 `json:"relay_outcomes,omitempty"`
	FwdDrops     uint64             `json:"forwarder_socket_drops"` // /proc/net/udp
	SinkDrops    uint64             `json:"sink_socket_drops"`
	RecordRows   int                `json:"record_rows,omitempty"`
	LateN        int                `json:"lateness_count,omitempty"`
	LateP50      float64            `json:"lateness_p50_s,omitempty"`
	LateP99      float64            `json:"lateness_p99_s,omitempty"`
	LateMax      float64            `json:"lateness_max_s,omitempty"`
	LateNegative int                `json:"lateness_negative,omitempty"`
}

type genReport struct {
	Sent         uint64  `json:"sent"`
	SendErrors   uint64  `json:"send_errors"`
	RateAchieved float64 `json:"rate_achieved"`
	MaxLagS      float64 `json:"max_lag_s"`
	Truncated    bool    `json:"truncated"`
	ElapsedS     float64 `json:"elapsed_s"`
}

type sinkReport struct {
	Received   uint64 `json:"received"`
	Duplicates uint64 `json:"duplicates"`
	Reordered  uint64 `json:"reordered"`
	Foreign    uint64 `json:"foreign"`
	Malformed  uint64 `json:"malformed"`
	Latency    struct {
		Count uint64  `json:"count"`
		P50   float64 `json:"p50"`
		P99   float64 `json:"p99"`
		Max   float64 `json:"max"`
	} `json:"latency_s"`
}

// ok reports whether the trial sustained its rate: it ran, the generator
// kept within 3 % of the rate asked for, and unexplained loss stayed below
// maxLoss.
func (r *trialResult) ok(maxLoss float64) bool {
	return r.Err == "" && !r.Gen.Truncated &&
		r.Gen.RateAchieved >= 0.97*r.Spec.Rate && r.Unexplained < maxLoss
}

// pinned prefixes argv with nice when a priority is set, and with taskset
// when pinning is on; both are inherited by every thread the child starts.
func (e *env) pinned(cpu int, argv []string) []string {
	if e.pin {
		argv = append([]string{"taskset", "-c", strconv.Itoa(cpu)}, argv...)
	}
	if e.nice != 0 {
		argv = append([]string{"nice", "-n", strconv.Itoa(e.nice)}, argv...)
	}
	return argv
}

// fwdRcvbuf is the receive buffer the baselines ask for: what the relay
// asks for on its own sockets (emulate sets 4 MiB), so that the comparison
// is of the forwarding loops, not of buffer sizes.
const fwdRcvbuf = 4 << 20

// forwarderArgv is the command line of the forwarder of target t.
func (e *env) forwarderArgv(t string, listen, sink, metrics int, spec trialSpec, record string) ([]string, error) {
	l := fmt.Sprintf("127.0.0.1:%d", listen)
	s := fmt.Sprintf("127.0.0.1:%d", sink)
	switch t {
	case tRelay:
		if e.impair == "" {
			return nil, fmt.Errorf("relay binary not built")
		}
		argv := []string{e.impair, "run", "--profile", e.profile[spec.Profile],
			"--listen", l, "--controller", s,
			"--metrics", fmt.Sprintf("127.0.0.1:%d", metrics), "--seed", "1"}
		if record != "" {
			argv = append(argv, "--record", record)
		}
		return argv, nil
	case tBatch:
		return []string{filepath.Join(e.bin, "batchfwd"), "-listen", l, "-to", s, "-rcvbuf", strconv.Itoa(fwdRcvbuf)}, nil
	case tNaive:
		return []string{filepath.Join(e.bin, "naivefwd"), "-listen", l, "-to", s, "-rcvbuf", strconv.Itoa(fwdRcvbuf)}, nil
	case tSocat:
		if e.socat == "" {
			return nil, fmt.Errorf("socat not installed")
		}
		return []string{e.socat, "-u", "-b", "65536",
			fmt.Sprintf("UDP4-RECV:%d,bind=127.0.0.1,rcvbuf=%d", listen, fwdRcvbuf),
			fmt.Sprintf("UDP4-SENDTO:127.0.0.1:%d", sink)}, nil
	}
	return nil, fmt.Errorf("unknown target %q", t)
}

// trial runs one measurement: sink, forwarder (unless direct), generator;
// then drain, stop the forwarder, stop the sink, and read what they wrote.
// Every wait is bounded; every child is stopped before it returns.
func (e *env) trial(spec trialSpec) (res trialResult) {
	e.n++
	res.Spec = spec
	res.Dir = filepath.Join(e.work, fmt.Sprintf("t%04d-%s-%dB-%.0f", e.n, spec.Target, spec.Size, spec.Rate))
	fail := func(err error) trialResult {
		res.Err = err.Error()
		return res
	}
	if err := os.MkdirAll(res.Dir, 0o755); err != nil {
		return fail(err)
	}
	run := e.rng.Uint32()
	sinkPort, err := freeUDPPort()
	if err != nil {
		return fail(err)
	}
	sinkJSON := filepath.Join(res.Dir, "sink.json")
	sink, err := e.procs.start(res.Dir, "sink", e.pinned(0, []string{filepath.Join(e.bin, "udpsink"),
		"-listen", fmt.Sprintf("127.0.0.1:%d", sinkPort), "-run", strconv.FormatUint(uint64(run), 10),
		"-json", sinkJSON, "-max-duration", (spec.Duration + time.Minute).String()}))
	if err != nil {
		return fail(err)
	}
	defer sink.stop(3 * time.Second)
	if err := waitUDPBound(sinkPort, sink, 3*time.Second); err != nil {
		return fail(err)
	}

	to := sinkPort
	var fwd *proc
	var metricsAddr, record string
	if spec.Target != tDirect {
		listen, err := freeUDPPort()
		if err != nil {
			return fail(err)
		}
		mport, err := freeTCPPort()
		if err != nil {
			return fail(err)
		}
		metricsAddr = fmt.Sprintf("127.0.0.1:%d", mport)
		if spec.Record {
			record = filepath.Join(res.Dir, "record.csv")
		}
		argv, err := e.forwarderArgv(spec.Target, listen, sinkPort, mport, spec, record)
		if err != nil {
			return fail(err)
		}
		fwd, err = e.procs.start(res.Dir, spec.Target, e.pinned(1, argv))
		if err != nil {
			return fail(err)
		}
		defer fwd.stop(5 * time.Second)
		if err := waitUDPBound(listen, fwd, 5*time.Second); err != nil {
			return fail(err)
		}
		time.Sleep(50 * time.Millisecond) // let it reach its receive loop
		to = listen
	}

	// CPU accounting over the send: the forwarder's share, and what the
	// rest of the machine used (others' work skews every figure, so it is
	// measured and reported, and a busy trial can be repeated).
	var cpu0, sink0, self0 uint64
	if fwd != nil {
		cpu0, _ = cpuTicks(fwd.pid())
	}
	sink0, _ = cpuTicks(sink.pid())
	self0, _ = cpuTicks(os.Getpid())
	tot0, _ := readCPUTotals()
	t0 := time.Now()
	genJSON := filepath.Join(res.Dir, "gen.json")
	gen, err := e.procs.start(res.Dir, "gen", e.pinned(0, []string{filepath.Join(e.bin, "udpgen"),
		"-to", fmt.Sprintf("127.0.0.1:%d", to), "-size", strconv.Itoa(spec.Size),
		"-rate", strconv.FormatFloat(spec.Rate, 'f', -1, 64), "-duration", spec.Duration.String(),
		"-run", strconv.FormatUint(uint64(run), 10), "-json", genJSON}))
	if err != nil {
		return fail(err)
	}
	if err := gen.wait(3*spec.Duration + 5*time.Second); err != nil {
		return fail(fmt.Errorf("generator: %w: %s", err, tail(gen.stderr)))
	}
	wall := time.Since(t0).Seconds()
	tot1, _ := readCPUTotals()
	var ours float64 // seconds
	if fwd != nil {
		if cpu1, err := cpuTicks(fwd.pid()); err == nil && wall > 0 {
			res.CPUShare = float64(cpu1-cpu0) / e.hz / wall
			ours += float64(cpu1-cpu0) / e.hz
		}
	}
	if sink1, err := cpuTicks(sink.pid()); err == nil {
		ours += float64(sink1-sink0) / e.hz
	}
	if self1, err := cpuTicks(os.Getpid()); err == nil {
		ours += float64(self1-self0) / e.hz
	}
	if ru, ok := gen.cmd.ProcessState.SysUsage().(*syscall.Rusage); ok {
		ours += time.Duration(ru.Utime.Nano() + ru.Stime.Nano()).Seconds()
	}
	if wall > 0 && tot1.busy >= tot0.busy {
		res.Foreign = max(0, (float64(tot1.busy-tot0.busy)/e.hz-ours)/wall)
		res.Steal = float64(tot1.steal-tot0.steal) / e.hz / wall
	}
	time.Sleep(spec.Drain)

	if spec.Target == tRelay {
		if ss, err := scrape(metricsAddr); err == nil {
			res.Outcomes = relayOutcomes(ss)
		} else if e.verbose {
			fmt.Fprintf(os.Stderr, "  (metrics: %v)\n", err)
		}
	}
	if fwd != nil {
		res.FwdDrops = udpDrops(to)
	}
	res.SinkDrops = udpDrops(sinkPort)
	if fwd != nil {
		if err := fwd.stop(5 * time.Second); err != nil {
			return fail(fmt.Errorf("%s: %w: %s", spec.Target, err, tail(fwd.stderr)))
		}
	}
	time.Sleep(20 * time.Millisecond)
	if err := sink.stop(3 * time.Second); err != nil {
		return fail(fmt.Errorf("sink: %w: %s", err, tail(sink.stderr)))
	}

	if err := readJSON(genJSON, &res.Gen); err != nil {
		return fail(err)
	}
	if err := readJSON(sinkJSON, &res.Sink); err != nil {
		return fail(err)
	}
	if res.Sink.Received < res.Gen.Sent {
		res.Lost = res.Gen.Sent - res.Sink.Received
	}
	// Loss the relay decided by its profile is explained; with the zero
	// profile there is none, so all loss counts.
	if d := uint64(res.Outcomes["dropped"]); d <= res.Lost {
		res.Explained = d
	}
	if res.Gen.Sent > 0 {
		res.Unexplained = float64(res.Lost-res.Explained) / float64(res.Gen.Sent)
	}
	if record != "" {
		rs, err := readRecord(record)
		if err != nil {
			return fail(err)
		}
		res.RecordRows = rs.Rows
		res.LateN = len(rs.Lateness)
		for _, l := range rs.Lateness {
			if l < 0 {
				res.LateNegative++
			}
		}
		if len(rs.Lateness) > 0 {
			q := loadkit.Quantiles(rs.Lateness, 0.5, 0.99, 1)
			res.LateP50, res.LateP99, res.LateMax = q[0], q[1], q[2]
		}
	}
	return res
}

func readJSON(path string, v any) error {
	b, err := os.ReadFile(path)
	if err != nil {
		return err
	}
	if err := json.Unmarshal(b, v); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}
