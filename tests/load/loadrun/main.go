package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"log/slog"
	"math/rand/v2"
	"os"
	"os/exec"
	"os/signal"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"
)

func main() {
	if err := run(os.Args[1:]); err != nil {
		slog.Error("loadrun", "err", err)
		os.Exit(1)
	}
}

func run(args []string) error {
	fs := flag.NewFlagSet("loadrun", flag.ContinueOnError)
	bin := fs.String("bin", "", "`DIR` holding udpgen, udpsink, naivefwd, batchfwd (required)")
	impair := fs.String("impair", "", "relay binary (default DIR/impair if it exists)")
	work := fs.String("work", "", "`DIR` for the trials' files (default: a new temporary directory, kept)")
	quick := fs.Bool("quick", false, "one repetition, short trials, a coarser search: about a minute")
	reps := fs.Int("reps", 3, "repetitions, the order of the forwarders rotated in each")
	targets := fs.String("targets", "relay,batch,naive,socat", "forwarders to measure beside direct")
	sizes := fs.String("sizes", "64,1200", "datagram sizes of the rate search, bytes")
	rateMin := fs.Float64("rate-min", 10e3, "lowest rate of the search, datagrams/s")
	rateMax := fs.Float64("rate-max", 200e3, "highest rate of the search, datagrams/s")
	steps := fs.Int("steps", 5, "geometric bisection steps of the first search")
	maxLoss := fs.Float64("max-loss", 0.001, "unexplained loss below which a rate is sustained (fraction)")
	trialDur := fs.Duration("trial", time.Second, "length of one trial of the rate search")
	latRate := fs.Float64("lat-rate", 10e3, "rate of the latency trials, datagrams/s")
	latDur := fs.Duration("lat-trial", 2*time.Second, "length of one latency trial")
	lateRates := fs.String("late-rates", "1000,20000", "rates of the lateness trials, datagrams/s")
	lateDur := fs.Duration("late-trial", 3*time.Second, "length of one lateness trial")
	phases := fs.String("phases", "rate,latency,lateness", "what to measure")
	busy := fs.Float64("busy", 0.3, "repeat a trial during which other processes used more than this many cores")
	retries := fs.Int("retries", 2, "at most this many repeats of a busy trial")
	quietBudget := fs.Duration("quiet-wait", 90*time.Second, "wait at most this long in all, between trials, for other processes to go below -busy")
	nice := fs.Int("nice", -10, "niceness of the generator, sink and forwarders, so that other processes disturb them less (0: unchanged; below 0 needs root, else ignored)")
	pin := fs.Bool("pin", false, "pin the forwarder to CPU 1 and generator and sink to CPU 0 (taskset)")
	jsonOut := fs.String("json", "", "write every trial and figure as JSON to `FILE`")
	verbose := fs.Bool("v", false, "print each trial's errors in full")
	if err := fs.Parse(args); err != nil {
		return err
	}
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	if *quick {
		for name, v := range map[string]string{"reps": "1", "steps": "4", "retries": "1", "quiet-wait": "20s", "trial": "500ms", "lat-trial": "1s", "late-trial": "1.5s"} {
			if !set[name] {
				_ = fs.Set(name, v)
			}
		}
	}

	cfg := config{
		reps: *reps, rateMin: *rateMin, rateMax: *rateMax, steps: *steps, maxLoss: *maxLoss,
		rateTrial: *trialDur, latRate: *latRate, latTrial: *latDur, lateTrial: *lateDur,
		phases: map[string]bool{}, searchSpan: 1.3, busy: *busy, retries: *retries, quietBudget: *quietBudget,
	}
	var err error
	if cfg.sizes, err = parseInts(*sizes, "-sizes", 24, 65507); err != nil {
		return err
	}
	if cfg.lateRates, err = parseFloats(*lateRates, "-late-rates", 1, 1e6); err != nil {
		return err
	}
	for _, p := range splitList(*phases) {
		if p != "rate" && p != "latency" && p != "lateness" {
			return fmt.Errorf("-phases: unknown phase %q (want rate, latency, lateness)", p)
		}
		cfg.phases[p] = true
	}
	switch {
	case *bin == "":
		return fmt.Errorf("-bin: required")
	case cfg.reps < 1 || cfg.reps > 50:
		return fmt.Errorf("-reps: want 1 to 50, got %d", cfg.reps)
	case !(cfg.rateMin > 0) || !(cfg.rateMax > cfg.rateMin) || cfg.rateMax > 5e6:
		return fmt.Errorf("-rate-min, -rate-max: want 0 < min < max ≤ 5e6, got %g and %g", cfg.rateMin, cfg.rateMax)
	case cfg.steps < 1 || cfg.steps > 12:
		return fmt.Errorf("-steps: want 1 to 12, got %d", cfg.steps)
	case !(cfg.maxLoss > 0) || cfg.maxLoss >= 1:
		return fmt.Errorf("-max-loss: want a fraction in (0, 1), got %g", cfg.maxLoss)
	case !(cfg.busy >= 0) || cfg.busy > 2:
		return fmt.Errorf("-busy: want 0 to 2 cores, got %g", cfg.busy)
	case cfg.quietBudget < 0 || cfg.quietBudget > time.Hour:
		return fmt.Errorf("-quiet-wait: want 0 to 1h, got %v", cfg.quietBudget)
	case cfg.retries < 0 || cfg.retries > 5:
		return fmt.Errorf("-retries: want 0 to 5, got %d", cfg.retries)
	case !(cfg.latRate > 0) || cfg.latRate > 1e6:
		return fmt.Errorf("-lat-rate: want (0, 1e6], got %g", cfg.latRate)
	}
	for name, d := range map[string]time.Duration{"-trial": cfg.rateTrial, "-lat-trial": cfg.latTrial, "-late-trial": cfg.lateTrial} {
		if d < 100*time.Millisecond || d > 5*time.Minute {
			return fmt.Errorf("%s: want 100ms to 5m, got %v", name, d)
		}
	}

	if *nice < -20 || *nice > 19 {
		return fmt.Errorf("-nice: want -20 to 19, got %d", *nice)
	}
	if *nice < 0 && os.Geteuid() != 0 {
		progress("note: not root; -nice %d ignored\n", *nice)
		*nice = 0
	}
	e := &env{bin: *bin, pin: *pin, nice: *nice, hz: clockTicks(), procs: newProcs(),
		rng: rand.New(rand.NewPCG(uint64(time.Now().UnixNano()), 0)), verbose: *verbose}
	for _, tool := range []string{"udpgen", "udpsink", "naivefwd", "batchfwd"} {
		if _, err := os.Stat(filepath.Join(e.bin, tool)); err != nil {
			return fmt.Errorf("-bin: %w", err)
		}
	}
	e.impair = *impair
	if e.impair == "" {
		if _, err := os.Stat(filepath.Join(e.bin, "impair")); err == nil {
			e.impair = filepath.Join(e.bin, "impair")
		}
	}
	if p, err := exec.LookPath("socat"); err == nil {
		e.socat = p
	}
	if e.pin {
		if _, err := exec.LookPath("taskset"); err != nil {
			return fmt.Errorf("-pin: taskset not found: %w", err)
		}
	}
	for _, t := range splitList(*targets) {
		switch {
		case t != tRelay && t != tBatch && t != tNaive && t != tSocat:
			return fmt.Errorf("-targets: unknown forwarder %q (want relay, batch, naive, socat)", t)
		case t == tRelay && e.impair == "":
			progress("note: no relay binary in %s; measuring the baselines only\n", e.bin)
		case t == tSocat && e.socat == "":
			progress("note: socat not installed (apt-get install socat); leaving it out\n")
		default:
			cfg.targets = append(cfg.targets, t)
		}
	}
	if cfg.phases["rate"] || cfg.phases["latency"] {
		if !contains(cfg.targets, tBatch) {
			return fmt.Errorf("-targets: the batched forwarder (batch) is the reference of the bars; keep it")
		}
	}

	e.work = *work
	if e.work == "" {
		if e.work, err = os.MkdirTemp("", "rigwire-load-"); err != nil {
			return err
		}
	}
	if err := os.MkdirAll(e.work, 0o755); err != nil {
		return err
	}
	if e.profile, err = writeProfiles(e.work); err != nil {
		return err
	}

	// Stop every child on a signal; they also die with this process
	// (Pdeathsig) if it is killed outright.
	sigs := make(chan os.Signal, 1)
	signal.Notify(sigs, syscall.SIGINT, syscall.SIGTERM, syscall.SIGHUP)
	go func() {
		s := <-sigs
		progress("\n%v: stopping the trial's processes\n", s)
		e.procs.killAll(2 * time.Second)
		os.Exit(130)
	}()
	defer e.procs.killAll(2 * time.Second)

	res := newResults(cfg.reps, cfg.targets)
	start := time.Now()
	progress("trials in %s; forwarders: %s; %d repetition(s); children at nice %d\n",
		e.work, strings.Join(cfg.targets, ", "), cfg.reps, e.nice)
	for rep := range cfg.reps {
		if cfg.phases["rate"] {
			e.phaseMaxRate(cfg, res, rep)
		}
		if cfg.phases["latency"] {
			e.phaseLatency(cfg, res, rep)
		}
		if cfg.phases["lateness"] && contains(cfg.targets, tRelay) {
			e.phaseLateness(cfg, res, rep)
		}
	}
	progress("%d trials in %v\n", e.n, time.Since(start).Round(time.Second))

	writeReport(os.Stdout, cfg, res)
	if *jsonOut != "" {
		b, err := json.MarshalIndent(struct {
			*results
			Bars []bar `json:"bars"`
		}{res, bars(cfg, res)}, "", "  ")
		if err != nil {
			return err
		}
		if err := os.WriteFile(*jsonOut, b, 0o644); err != nil {
			return fmt.Errorf("-json: %w", err)
		}
	}
	return nil
}

// writeProfiles writes the two profiles the trials use and returns their
// paths by name.
func writeProfiles(dir string) (map[string]string, error) {
	profiles := map[string]string{
		"zero": "# load script: no delay, no loss\nname: zero\n",
		"delay": "# load script: every sensor datagram held 1–5 ms, uniform\n" +
			"name: load-uniform-1-5ms\n" +
			"sensor_to_controller:\n  delay: {kind: uniform, min: 1ms, max: 5ms}\n",
	}
	out := map[string]string{}
	for name, text := range profiles {
		p := filepath.Join(dir, name+".yaml")
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			return nil, err
		}
		out[name] = p
	}
	return out, nil
}

func splitList(s string) []string {
	var out []string
	for _, f := range strings.Split(s, ",") {
		if f = strings.TrimSpace(f); f != "" {
			out = append(out, f)
		}
	}
	return out
}

func parseInts(s, flagName string, lo, hi int) ([]int, error) {
	var out []int
	for _, f := range splitList(s) {
		v, err := strconv.Atoi(f)
		if err != nil || v < lo || v > hi {
			return nil, fmt.Errorf("%s: want integers %d to %d, got %q", flagName, lo, hi, f)
		}
		out = append(out, v)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%s: empty", flagName)
	}
	return out, nil
}

func parseFloats(s, flagName string, lo, hi float64) ([]float64, error) {
	var out []float64
	for _, f := range splitList(s) {
		v, err := strconv.ParseFloat(f, 64)
		if err != nil || !(v >= lo && v <= hi) {
			return nil, fmt.Errorf("%s: want numbers %g to %g, got %q", flagName, lo, hi, f)
		}
		out = append(out, v)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%s: empty", flagName)
	}
	return out, nil
}
