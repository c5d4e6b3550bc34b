package main

import (
	"fmt"
	"io"
	"strings"
	"time"

	"rigwire/cmd/internal/cli"
	"rigwire/estimate"
	"rigwire/estimate/report"
	"rigwire/profiles"
)

// gainFlags collects repeated --gain flags.
type gainFlags []string

func (g *gainFlags) String() string { return strings.Join(*g, " ") }

func (g *gainFlags) Set(s string) error {
	*g = append(*g, s)
	return nil
}

// predictGains prints the gain map's CSV, its margins and best point
// (estimate/model.md §17), with a progress line on a long grid.
func predictGains(loop *profiles.Loop, specs []string, plotFile string, stdout, stderr io.Writer) error {
	var params []estimate.GainParam
	for _, s := range specs {
		p, err := estimate.ParseGainParam(s, loop)
		if err != nil {
			return cli.Usagef("--gain: %v", err)
		}
		params = append(params, p)
	}
	start := time.Now()
	last := start
	gm, err := estimate.GainMapOf(loop, params, 0, func(done, total int) {
		// One call at a time: a line every progressEvery once the map
		// has run progressAfter.
		now := time.Now()
		if now.Sub(start) < progressAfter || now.Sub(last) < progressEvery || done == total {
			return
		}
		last = now
		fmt.Fprintf(stderr, "monitor predict: gain map: %d of %d points (%.0f %%), %s so far\n", done, total, 100*float64(done)/float64(total), now.Sub(start).Round(time.Second))
	})
	if err != nil {
		return cli.BadInput(fmt.Errorf("%s: %w", loop.File, err))
	}
	report.WriteGainMapCSV(stdout, gm)
	for _, l := range report.GainMapLines(gm) {
		fmt.Fprintln(stderr, "monitor predict: "+l)
	}
	if plotFile != "" {
		return report.WriteGainMapPlot(gm, plotFile)
	}
	return nil
}
