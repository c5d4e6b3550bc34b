package main

import (
	"fmt"
	"math"
	"os"
	"strconv"
	"time"
)

// config is the whole run, from the flags.
type config struct {
	reps        int
	targets     []string // forwarders measured besides direct
	sizes       []int
	rateMin     float64
	rateMax     float64
	steps       int
	maxLoss     float64
	rateTrial   time.Duration
	latRate     float64
	latTrial    time.Duration
	lateRates   []float64
	lateTrial   time.Duration
	phases      map[string]bool
	searchSpan  float64
	busy        float64       // others' CPU use, cores, above which a trial is repeated
	retries     int           // at most this many repeats of a busy trial
	quietBudget time.Duration // waiting for a quieter machine, over the whole run
}

// results holds every figure by phase, target and repetition.
type results struct {
	Reps    int                        `json:"reps"`
	Targets []string                   `json:"targets"`
	MaxRate map[int]map[string]figures `json:"max_rate"`      // size → target → per rep, datagrams/s
	LatP50  map[string]figures         `json:"latency_p50_s"` // target → per rep
	LatCPU  map[string]figures         `json:"latency_cpu_share"`
	Late    map[int]map[string]figures `json:"lateness"` // rate → p50/p99/max/cpu/n → per rep
	Trials  []trialResult              `json:"trials"`
}

// figures are one figure's values, one per repetition; NaN (nothing
// measured) is written as null in JSON.
type figures []float64

func (f figures) MarshalJSON() ([]byte, error) {
	b := []byte{'['}
	for i, v := range f {
		if i > 0 {
			b = append(b, ',')
		}
		if math.IsNaN(v) || math.IsInf(v, 0) {
			b = append(b, "null"...)
		} else {
			b = strconv.AppendFloat(b, v, 'g', -1, 64)
		}
	}
	return append(b, ']'), nil
}

func newResults(reps int, targets []string) *results {
	return &results{
		Reps: reps, Targets: targets,
		MaxRate: map[int]map[string]figures{},
		LatP50:  map[string]figures{}, LatCPU: map[string]figures{},
		Late: map[int]map[string]figures{},
	}
}

// rotate is xs started at index r mod len(xs): repetition r measures the
// targets in a different order, so that drift of a shared machine over the
// run does not always favour the same one.
func rotate[T any](xs []T, r int) []T {
	n := len(xs)
	out := make([]T, 0, n)
	for i := range n {
		out = append(out, xs[(i+r)%n])
	}
	return out
}

func progress(format string, a ...any) { fmt.Fprintf(os.Stderr, format, a...) }

// lossPct formats a loss fraction for the progress lines.
func lossPct(r trialResult) string {
	switch {
	case r.Err != "":
		return "error"
	case r.Gen.RateAchieved < 0.97*r.Spec.Rate || r.Gen.Truncated:
		return fmt.Sprintf("gen-limited %.0f/s", r.Gen.RateAchieved)
	}
	return fmt.Sprintf("%.3f%%", 100*r.Unexplained)
}

// maxRate finds the highest rate between cfg.rateMin and cfg.rateMax that
// target sustains below cfg.maxLoss: it tries rateMin, and if that passes
// bisects the interval geometrically cfg.steps times, keeping the highest
// rate that passed. A target that fails at rateMin scores 0; one that never
// fails scores the highest rate tried (the table marks it "≥").
func (e *env) maxRate(cfg config, res *results, target string, size int, hint float64) float64 {
	lo, hi := cfg.rateMin, cfg.rateMax
	steps := cfg.steps
	if hint > 0 {
		// A later repetition searches a bracket around the first one's
		// result, with only the steps that reach the same precision.
		lo = math.Max(cfg.rateMin, hint/cfg.searchSpan)
		hi = math.Min(cfg.rateMax, hint*cfg.searchSpan)
		steps = stepsFor(hi/lo, cfg.precision())
	}
	try := func(rate float64) bool {
		rate = math.Round(rate/100) * 100
		r := e.measure(cfg, res, trialSpec{Target: target, Size: size, Rate: rate, Duration: cfg.rateTrial,
			Profile: "zero", Drain: 150 * time.Millisecond},
			func(r trialResult) bool { return !r.ok(cfg.maxLoss) })
		pass := r.ok(cfg.maxLoss)
		mark := "ok"
		if !pass {
			mark = "FAIL"
		}
		progress(" %.1fk:%s(%s)", rate/1000, mark, lossPct(r))
		if r.Err != "" && e.verbose {
			progress("\n    %s\n", r.Err)
		}
		return pass
	}
	if !try(lo) {
		if lo <= cfg.rateMin {
			return 0
		}
		// The bracket from the hint was too high: fall back to the full one.
		lo, hi = cfg.rateMin, lo
		steps = stepsFor(hi/lo, cfg.precision())
		if !try(lo) {
			return 0
		}
	}
	best := lo
	for range steps {
		mid := math.Sqrt(lo * hi)
		if try(mid) {
			lo, best = mid, math.Round(mid/100)*100
		} else {
			hi = mid
		}
	}
	return best
}

// measure runs a trial and repeats it, at most cfg.retries times, while
// the rest of the machine used more than cfg.busy cores during it and
// redo(result) holds; it keeps the least disturbed result. Every run is
// kept in res.Trials.
func (e *env) measure(cfg config, res *results, spec trialSpec, redo func(trialResult) bool) trialResult {
	var best trialResult
	for i := range 1 + cfg.retries {
		e.waitQuiet(cfg)
		r := e.trial(spec)
		r.Attempt = i + 1
		res.Trials = append(res.Trials, r)
		if i == 0 || r.Err == "" && (best.Err != "" || r.Foreign < best.Foreign) {
			best = r
		}
		if r.Err != "" || r.Foreign <= cfg.busy || !redo(r) {
			break
		}
		progress("[busy %.2f cores, again]", r.Foreign)
		time.Sleep(300 * time.Millisecond)
	}
	return best
}

func always(trialResult) bool { return true }

// waitQuiet waits, between trials, while the rest of the machine keeps
// more than cfg.busy cores busy: it samples /proc/stat over 200 ms windows,
// for at most 3 s per call and cfg.quietBudget over the whole run, so a
// machine that stays busy costs bounded time (its trials then carry the
// load they ran under).
func (e *env) waitQuiet(cfg config) {
	const window = 200 * time.Millisecond
	deadline := time.Now().Add(3 * time.Second)
	for time.Now().Before(deadline) && e.quietSpent < cfg.quietBudget {
		a, err := readCPUTotals()
		self0, _ := cpuTicks(os.Getpid())
		if err != nil {
			return
		}
		time.Sleep(window)
		e.quietSpent += window
		b, _ := readCPUTotals()
		self1, _ := cpuTicks(os.Getpid())
		busy := (float64(b.busy-a.busy) - float64(self1-self0)) / e.hz / window.Seconds()
		if busy <= cfg.busy {
			return
		}
		if !e.waiting {
			progress("[waiting: others use %.2f cores]", busy)
			e.waiting = true
		}
	}
	e.waiting = false
}

// precision is the ratio hi/lo that the full search narrows its bracket
// to: (rateMax/rateMin)^(1/2^steps).
func (c config) precision() float64 {
	return math.Pow(c.rateMax/c.rateMin, 1/math.Pow(2, float64(c.steps)))
}

// stepsFor is the number of geometric bisections that narrow a bracket of
// ratio r to at most prec: ⌈log₂(ln r / ln prec)⌉, at least 1.
func stepsFor(r, prec float64) int {
	if r <= prec {
		return 1
	}
	return max(1, int(math.Ceil(math.Log2(math.Log(r)/math.Log(prec))-1e-9)))
}

func (e *env) phaseMaxRate(cfg config, res *results, rep int) {
	for _, size := range cfg.sizes {
		if res.MaxRate[size] == nil {
			res.MaxRate[size] = map[string]figures{}
		}
		for _, t := range rotate(append([]string{tDirect}, cfg.targets...), rep) {
			progress("[rep %d/%d] max rate %4d B %-6s", rep+1, cfg.reps, size, t)
			var hint float64
			if prev := res.MaxRate[size][t]; len(prev) > 0 && prev[0] > 0 {
				hint = prev[0]
			}
			best := e.maxRate(cfg, res, t, size, hint)
			res.MaxRate[size][t] = append(res.MaxRate[size][t], best)
			progress("  → %.1fk/s\n", best/1000)
		}
	}
}

func (e *env) phaseLatency(cfg config, res *results, rep int) {
	for _, t := range rotate(append([]string{tDirect}, cfg.targets...), rep) {
		r := e.measure(cfg, res, trialSpec{Target: t, Size: 64, Rate: cfg.latRate, Duration: cfg.latTrial,
			Profile: "zero", Drain: 150 * time.Millisecond}, always)
		p50, cpu := math.NaN(), math.NaN()
		if r.Err == "" && r.Sink.Latency.Count > 0 {
			p50 = r.Sink.Latency.P50
			if t != tDirect {
				cpu = r.CPUShare
			}
		}
		res.LatP50[t] = append(res.LatP50[t], p50)
		res.LatCPU[t] = append(res.LatCPU[t], cpu)
		progress("[rep %d/%d] latency %.0fk/s %-6s p50 %6.1f µs  p99 %7.1f µs  loss %s  cpu %4.1f%%  others %.2f cores\n",
			rep+1, cfg.reps, cfg.latRate/1000, t, 1e6*p50, 1e6*r.Sink.Latency.P99, lossPct(r), 100*cpu, r.Foreign)
		if r.Err != "" {
			progress("    %s\n", r.Err)
		}
	}
}

// lateness keys.
const (
	kP50 = "p50"
	kP99 = "p99"
	kMax = "max"
	kCPU = "cpu"
	kN   = "n"
)

func (e *env) phaseLateness(cfg config, res *results, rep int) {
	for _, rate := range rotate(cfg.lateRates, rep) {
		r := e.measure(cfg, res, trialSpec{Target: tRelay, Size: 64, Rate: rate, Duration: cfg.lateTrial,
			Profile: "delay", Record: true, Drain: 300 * time.Millisecond}, always)
		m := res.Late[int(rate)]
		if m == nil {
			m = map[string]figures{}
			res.Late[int(rate)] = m
		}
		vals := map[string]float64{kP50: math.NaN(), kP99: math.NaN(), kMax: math.NaN(), kCPU: math.NaN(), kN: 0}
		if r.Err == "" && r.LateN > 0 {
			vals = map[string]float64{kP50: r.LateP50, kP99: r.LateP99, kMax: r.LateMax, kCPU: r.CPUShare, kN: float64(r.LateN)}
		}
		for k, v := range vals {
			m[k] = append(m[k], v)
		}
		progress("[rep %d/%d] lateness %5.0f/s  n %6d  p50 %7.1f µs  p99 %7.1f µs  max %7.1f µs  loss %s  relay cpu %4.1f%%  others %.2f cores\n",
			rep+1, cfg.reps, rate, r.LateN, 1e6*vals[kP50], 1e6*vals[kP99], 1e6*vals[kMax], lossPct(r), 100*vals[kCPU], r.Foreign)
		if r.Err != "" {
			progress("    %s\n", r.Err)
		}
	}
}
