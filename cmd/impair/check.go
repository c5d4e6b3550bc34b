package main

import (
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"

	"rigwire/cmd/internal/cli"
	"rigwire/cmd/internal/exitcode"
	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
	"rigwire/profiles/yamlpos"
)

const checkUsage = `usage: impair check [--interval D] PROFILE

Validates a network profile and prints, for each direction and state, the
loss and the delay's mean, median, p99 and p99.9, and for each direction
the share of time in each state, the long-run loss, the mean length of a
run of lost datagrams and the chance that a datagram is lost when the one
before it was, for datagrams sent every D (default 10ms).
`

var checkExits = exitcode.Help([]int{exitcode.OK, exitcode.BadInput}, map[int]string{
	exitcode.OK:       "the profile is valid (its report was printed)",
	exitcode.BadInput: "bad usage, or a profile that does not load or validate (the message names file, line and key)",
})

// maxCheckInterval bounds --interval: loss runs of datagrams sent less
// often than hourly mean nothing for a control loop.
const maxCheckInterval = 3600.0

// cmdCheck is `impair check`: validate a profile and describe it.
func cmdCheck(args []string, stdout, stderr io.Writer) error {
	fs := cli.NewFlags("impair check", checkUsage, checkExits)
	interval := 0.01
	fs.Func("interval", "time between datagrams for loss-run figures (default 10ms)", func(s string) error {
		v, err := yamlpos.ParseDuration(s)
		if err != nil {
			return err
		}
		if v <= 0 || v > maxCheckInterval {
			return fmt.Errorf("want a duration > 0 and ≤ 1h, got %q", s)
		}
		interval = v
		return nil
	})
	// Flags may come before or after the profile.
	paths, err := fs.ParseInterspersed(args)
	if err != nil {
		return err
	}
	if len(paths) != 1 {
		return cli.Usagef("want one profile, got %d", len(paths))
	}
	p, err := profiles.Load(paths[0])
	if err != nil {
		return cli.BadInput(err)
	}
	writeCheck(stdout, p, interval)
	return nil
}

// writeCheck prints the report of a valid profile.
func writeCheck(w io.Writer, p *profiles.Profile, interval float64) {
	name := p.Name
	if name == "" {
		name = "(unnamed)"
	}
	fmt.Fprintf(w, "profile %s  (%s", name, p.File)
	if p.HasSeed {
		fmt.Fprintf(w, ", seed %d", p.Seed)
	}
	fmt.Fprintf(w, ")\nloss runs for one datagram every %s; late: share of delivered datagrams delayed ≥ %s\n", fmtDur(interval), fmtDur(interval))
	for _, d := range []struct {
		name string
		c    *markov.Channel
	}{
		{profiles.SensorToController, p.SensorToController},
		{profiles.ControllerToActuator, p.ControllerToActuator},
	} {
		fmt.Fprintln(w)
		writeChannel(w, d.name, d.c, interval)
	}
	fmt.Fprintln(w, "\nprofile is valid")
}

func writeChannel(w io.Writer, name string, c *markov.Channel, interval float64) {
	n := len(c.States)
	if n == 1 {
		fmt.Fprintf(w, "%s: i.i.d., one state\n", name)
	} else {
		fmt.Fprintf(w, "%s: Markov channel, %d states\n", name, n)
	}
	pi := c.Stationary()
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "  state\tdwell\ttime\tloss\tmean\tmedian\tp99\tp99.9\tlate\t\n")
	for i, s := range c.States {
		d := s.Delay
		late := lateShare(d, interval)
		fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n",
			s.Name, fmtDur(s.MeanDwell), fmtPct(pi[i]), fmtPct(s.Loss),
			fmtMS(d.Mean()), fmtMS(laws.Quantile(d, 0.5)),
			fmtMS(laws.Quantile(d, 0.99)), fmtMS(laws.Quantile(d, 0.999)),
			fmtPct(late))
	}
	tw.Flush()
	for _, s := range c.States {
		fmt.Fprintf(w, "  %s delay: %s\n", s.Name, laws.Describe(s.Delay))
	}
	fmt.Fprintf(w, "  long-run loss %s; mean loss burst %s datagrams; P(lost | previous lost) %s\n",
		fmtPct(c.LongRunLoss()), fmtNum(c.MeanLossBurst(interval)), fmtNum(c.LagOneLoss(interval)))
	if n > 1 {
		var b strings.Builder
		for i, s := range c.States {
			if i > 0 {
				b.WriteString(", ")
			}
			fmt.Fprintf(&b, "%s %s", s.Name, fmtNum(pi[i]))
		}
		fmt.Fprintf(w, "  stationary: %s\n", b.String())
	}
}

// lateShare is P(delay ≥ interval), a datagram late for the next one:
// the complement of laws.ProbBelow, the same function the prediction
// uses for a stale sample, so the two agree on every law.
func lateShare(d laws.Delay, interval float64) float64 {
	return 1 - laws.ProbBelow(d, interval)
}

// fmtMS writes seconds as milliseconds with three significant digits.
func fmtMS(s float64) string {
	v := s * 1e3
	switch {
	case math.IsInf(v, 1):
		return "inf"
	case v < 1:
		return fmt.Sprintf("%.3f ms", v)
	case v < 10:
		return fmt.Sprintf("%.2f ms", v)
	case v < 100:
		return fmt.Sprintf("%.1f ms", v)
	}
	return fmt.Sprintf("%.0f ms", v)
}

// fmtDur writes a time in seconds in the unit that suits it.
func fmtDur(s float64) string {
	switch {
	case math.IsInf(s, 1):
		return "-"
	case s < 1e-3:
		return fmt.Sprintf("%.3g us", s*1e6)
	case s < 1:
		return fmt.Sprintf("%.3g ms", s*1e3)
	}
	return fmt.Sprintf("%.3g s", s)
}

// fmtPct writes a probability as a percentage.
func fmtPct(p float64) string {
	if p == 0 {
		return "0 %"
	}
	return fmt.Sprintf("%.3g %%", 100*p)
}

func fmtNum(x float64) string {
	if math.IsInf(x, 1) {
		return "inf"
	}
	return fmt.Sprintf("%.3g", x)
}
