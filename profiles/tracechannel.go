package profiles

import (
	"math"
	"rigwire/profiles/markov"
	"rigwire/profiles/trace"
	"rigwire/profiles/yamlpos"
	"slices"
	"strings"
)

// parseTraceChannel reads `trace: {file, column, at_end}` (f is the trace
// key's value); others are the direction's other keys, which must be
// absent.
func parseTraceChannel(f yamlpos.Field, others map[string]yamlpos.Field, dir string) (*markov.Channel, error) {
	for _, k := range []string{"loss", "delay", "states"} {
		if g, ok := others[k]; ok {
			return nil, g.Errorf("want either trace or %s, got both", k)
		}
	}
	keys, err := f.Mapping("file", "column", "at_end")
	if err != nil {
		return nil, err
	}
	ff, ok := keys["file"]
	if !ok {
		return nil, f.Errorf("missing file (a probe trace, as written by impair probe)")
	}
	name, err := ff.Text()
	if err != nil {
		return nil, err
	}
	if name == "" {
		return nil, ff.Errorf("want a file name, got nothing")
	}
	column := "one_way_s"
	if g, ok := keys["column"]; ok {
		if column, err = g.Text(); err != nil {
			return nil, err
		}
		if !slices.Contains(trace.TraceDelayColumns, column) {
			return nil, g.Errorf("want one of %s, got %s", strings.Join(trace.TraceDelayColumns, ", "), g.Got())
		}
	}
	atEnd := trace.AtEndLoop
	if g, ok := keys["at_end"]; ok {
		if atEnd, err = g.Text(); err != nil {
			return nil, err
		}
		if atEnd != trace.AtEndLoop && atEnd != trace.AtEndStop && atEnd != trace.AtEndClean {
			return nil, g.Errorf("want loop, stop or clean, got %s", g.Got())
		}
	}
	fh, err := openRelative(ff, name, dir, "trace", yamlpos.MaxTraceBytes)
	if err != nil {
		return nil, err
	}
	defer fh.Close()
	tr, err := trace.ReadTrace(fh, name)
	if err != nil {
		return nil, ff.Errorf("%v", err)
	}
	delays, lost, err := tr.Fates(column)
	if err != nil {
		return nil, ff.Errorf("%v", err)
	}
	rp, err := trace.NewReplay(name, column, atEnd, delays, lost)
	if err != nil {
		return nil, f.Errorf("%v", err)
	}
	return &markov.Channel{States: []markov.State{{Name: "trace", MeanDwell: math.Inf(1), Loss: rp.LossRate, Delay: rp}}, Replay: rp}, nil
}
