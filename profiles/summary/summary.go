package summary

import (
	"fmt"
	"io"
	"strings"
	"text/tabwriter"

	"rigwire/profiles"
	"rigwire/profiles/laws"
	"rigwire/profiles/markov"
)

// Write writes the summary of a valid profile for datagrams sent every
// interval seconds (loss runs are counted in datagrams at that rate, and
// a datagram delayed by interval or more is late for the next one).
func Write(w io.Writer, p *profiles.Profile, interval float64) {
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
		late := LateShare(d, interval)
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

// LateShare is P(delay ≥ interval), a datagram late for the next one:
// the complement of laws.ProbBelow, the same function the prediction
// uses for a stale sample, so the two agree on every law.
func LateShare(d laws.Delay, interval float64) float64 {
	return 1 - laws.ProbBelow(d, interval)
}
