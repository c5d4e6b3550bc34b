package profiles

import (
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
	"slices"
	"sort"
	"strconv"
	"strings"

	"gopkg.in/yaml.v3"
)

// delayKind describes one `kind` of the profile format: its keys and how
// to build the law from them.
type delayKind struct {
	keys     []string // the kind's own keys, besides kind and shift
	required []string
	shift    bool // whether `shift` is allowed
	build    func(k map[string]yamlpos.Field, dir string, depth int) (laws.Delay, error)
}

// lawKeys are the keys a law of the kind takes besides kind: its own,
// then shift where allowed.
func (k delayKind) lawKeys() []string {
	if k.shift {
		return append(slices.Clip(k.keys), "shift")
	}
	return k.keys
}

// maxMixtureDepth bounds mixtures of mixtures (and so what aliases can
// make of a small file).
const maxMixtureDepth = 4

var delayKinds map[string]delayKind

func init() {
	delayKinds = map[string]delayKind{
		"constant": {keys: []string{"value"}, required: []string{"value"}, build: buildConstant},
		"uniform":  {keys: []string{"min", "max"}, required: []string{"min", "max"}, build: buildUniform},
		"normal":   {keys: []string{"mean", "std"}, required: []string{"mean", "std"}, shift: true, build: buildNormal},
		"exponential": {keys: []string{"mean"}, required: []string{"mean"}, shift: true, build: func(k map[string]yamlpos.Field, _ string, _ int) (laws.Delay, error) {
			m, err := k["mean"].PositiveDurationMax(laws.MaxDelay)
			if err != nil {
				return nil, err
			}
			return laws.NewExponential(m, 0)
		}},
		"gamma": {keys: []string{"shape", "scale"}, required: []string{"shape", "scale"}, shift: true, build: func(k map[string]yamlpos.Field, _ string, _ int) (laws.Delay, error) {
			a, s, err := shapeScale(k)
			if err != nil {
				return nil, err
			}
			return laws.NewGamma(a, s, 0)
		}},
		"lognormal": {keys: []string{"median", "sigma"}, required: []string{"median", "sigma"}, shift: true, build: func(k map[string]yamlpos.Field, _ string, _ int) (laws.Delay, error) {
			m, err := k["median"].PositiveDurationMax(laws.MaxDelay)
			if err != nil {
				return nil, err
			}
			s, err := k["sigma"].Positive()
			if err == nil && s > MaxSigma {
				err = k["sigma"].Errorf("want a number in (0, %g], got %s", MaxSigma, k["sigma"].Got())
			}
			if err != nil {
				return nil, err
			}
			return laws.NewLognormal(m, s, 0)
		}},
		"weibull": {keys: []string{"shape", "scale"}, required: []string{"shape", "scale"}, shift: true, build: func(k map[string]yamlpos.Field, _ string, _ int) (laws.Delay, error) {
			a, s, err := shapeScale(k)
			if err != nil {
				return nil, err
			}
			return laws.NewWeibull(a, s, 0)
		}},
		"pareto": {keys: []string{"shape", "scale"}, required: []string{"shape", "scale"}, build: func(k map[string]yamlpos.Field, _ string, _ int) (laws.Delay, error) {
			a, s, err := shapeScale(k)
			if err != nil {
				return nil, err
			}
			return laws.NewPareto(a, s)
		}},
		"empirical": {keys: []string{"samples", "file"}, shift: true, build: buildEmpirical},
		"mixture":   {keys: []string{"parts"}, required: []string{"parts"}, shift: true, build: buildMixture},
	}
}

// DelayKinds lists the profile format's delay kinds, sorted.
func DelayKinds() []string {
	out := make([]string, 0, len(delayKinds))
	for k := range delayKinds {
		out = append(out, k)
	}
	sort.Strings(out)
	return out
}

// ParseDelay reads a delay law from a field holding a `delay` mapping
// ({kind: lognormal, median: 3ms, sigma: 0.4}) or a lone duration (a
// constant). dir resolves an empirical file's relative path.
func ParseDelay(f yamlpos.Field, dir string) (laws.Delay, error) {
	return parseDelay(f, dir, 0)
}

// ParseDelayText reads a delay law written on one line, in the profile
// format's YAML ("4ms", "{kind: gamma, shape: 4, scale: 0.5ms}"), as a
// command-line flag gives it: what names the flag in errors, dir resolves
// an empirical file's relative path.
func ParseDelayText(text, what, dir string) (laws.Delay, error) {
	root, err := yamlpos.Document(what, []byte(text))
	if err != nil {
		return nil, err
	}
	return ParseDelay(root, dir)
}

func parseDelay(f yamlpos.Field, dir string, depth int) (laws.Delay, error) {
	d, _, err := parseDelayExtra(f, dir, depth)
	return d, err
}

// parseDelayExtra parses a law whose mapping may also hold the keys in
// extra (a mixture part's weight), returned by name.
func parseDelayExtra(f yamlpos.Field, dir string, depth int, extra ...string) (laws.Delay, map[string]yamlpos.Field, error) {
	if f.Node != nil && f.Node.Kind == yaml.ScalarNode && len(extra) == 0 && !f.IsNull() {
		v, err := f.DurationIn(0, laws.MaxDelay)
		if err != nil {
			return nil, nil, f.Errorf("want a delay law ({kind: …}) or a duration ≥ 0, got %s", f.Got())
		}
		return laws.Constant{Value: v}, nil, nil
	}
	if f.IsNull() {
		return nil, nil, f.Errorf("want a delay law ({kind: …}), got %s", f.Got())
	}
	all := append([]string{"kind", "shift"}, extra...)
	for _, k := range DelayKinds() {
		all = append(all, delayKinds[k].keys...)
	}
	// First pass: find the kind, accepting any known key.
	keys, err := f.Mapping(uniq(all)...)
	if err != nil {
		return nil, nil, err
	}
	kf, ok := keys["kind"]
	if !ok {
		return nil, nil, f.Errorf("missing kind (one of %s)", strings.Join(DelayKinds(), ", "))
	}
	name, err := kf.Text()
	if err != nil {
		return nil, nil, err
	}
	kind, ok := delayKinds[name]
	if !ok {
		return nil, nil, kf.Errorf("unknown kind %s (want one of %s)", yamlpos.Token(name), strings.Join(DelayKinds(), ", "))
	}
	// Second pass: only the kind's keys.
	allowed := append(append([]string{"kind"}, kind.lawKeys()...), extra...)
	if _, err := f.Mapping(allowed...); err != nil {
		var pe *yamlpos.Error
		if e, ok := err.(*yamlpos.Error); ok {
			pe = e
			if k := keys["shift"]; !kind.shift && k.Node != nil && strings.Contains(pe.Msg, `"shift"`) {
				pe.Msg = fmt.Sprintf("kind %s takes no shift", name)
			} else {
				// Before the list of keys accepted (Mapping's message):
				// `unknown key "sigma" for kind normal (want one of: …)`.
				head, list, _ := strings.Cut(pe.Msg, " (want")
				pe.Msg = head + " for kind " + name
				if list != "" {
					pe.Msg += " (want" + list
				}
			}
		}
		return nil, nil, err
	}
	for _, r := range kind.required {
		if _, ok := keys[r]; !ok {
			return nil, nil, f.Errorf("missing %s for kind %s", r, name)
		}
	}
	d, err := kind.build(keys, dir, depth)
	if err != nil {
		return nil, nil, wrapLawError(f, err)
	}
	if g, ok := keys["shift"]; ok {
		s, err := g.DurationIn(0, laws.MaxDelay)
		if err != nil {
			return nil, nil, err
		}
		if d, err = laws.Shift(d, s); err != nil {
			return nil, nil, wrapLawError(f, err)
		}
	}
	out := make(map[string]yamlpos.Field, len(extra))
	for _, e := range extra {
		if g, ok := keys[e]; ok {
			out[e] = g
		}
	}
	return d, out, nil
}

// wrapLawError positions an error from a constructor (checks the fields
// did not already make) at the law's mapping.
func wrapLawError(f yamlpos.Field, err error) error {
	if _, ok := err.(*yamlpos.Error); ok {
		return err
	}
	return f.Errorf("%v", err)
}

func uniq(s []string) []string {
	seen := map[string]bool{}
	out := s[:0:0]
	for _, x := range s {
		if !seen[x] {
			seen[x] = true
			out = append(out, x)
		}
	}
	return out
}

func shapeScale(k map[string]yamlpos.Field) (shape, scale float64, err error) {
	if shape, err = k["shape"].FloatIn(MinShape, MaxShape); err != nil {
		return 0, 0, err
	}
	if scale, err = k["scale"].PositiveDurationMax(laws.MaxDelay); err != nil {
		return 0, 0, err
	}
	return shape, scale, nil
}

func buildConstant(k map[string]yamlpos.Field, _ string, _ int) (laws.Delay, error) {
	v, err := k["value"].DurationIn(0, laws.MaxDelay)
	if err != nil {
		return nil, err
	}
	return laws.Constant{Value: v}, nil
}

func buildUniform(k map[string]yamlpos.Field, _ string, _ int) (laws.Delay, error) {
	lo, err := k["min"].DurationIn(0, laws.MaxDelay)
	if err != nil {
		return nil, err
	}
	hi, err := k["max"].DurationIn(0, laws.MaxDelay)
	if err != nil {
		return nil, err
	}
	if hi < lo {
		return nil, k["max"].Errorf("want a duration ≥ min (%s), got %s", laws.FormatSeconds(lo), k["max"].Got())
	}
	return laws.NewUniform(lo, hi)
}

func buildNormal(k map[string]yamlpos.Field, _ string, _ int) (laws.Delay, error) {
	m, err := k["mean"].DurationIn(-laws.MaxDelay, laws.MaxDelay)
	if err != nil {
		return nil, err
	}
	s, err := k["std"].PositiveDurationMax(laws.MaxDelay)
	if err != nil {
		return nil, err
	}
	if -m/s > laws.MaxNormalAlpha {
		return nil, k["mean"].Errorf("want a mean ≥ −%d·std (%s), got %s", laws.MaxNormalAlpha, laws.FormatSeconds(-laws.MaxNormalAlpha*s), k["mean"].Got())
	}
	return laws.NewNormal(m, s, 0)
}

func buildEmpirical(k map[string]yamlpos.Field, dir string, _ int) (laws.Delay, error) {
	sf, hasSamples := k["samples"]
	ff, hasFile := k["file"]
	var samples []float64
	switch {
	case hasSamples && hasFile:
		return nil, ff.Errorf("want samples or file, got both")
	case hasSamples:
		items, err := sf.Seq()
		if err != nil {
			return nil, sf.Errorf("want a list of delays, got %s", sf.Got())
		}
		if len(items) == 0 {
			return nil, sf.Errorf("want at least one delay, got none")
		}
		if len(items) > laws.MaxSamples {
			return nil, sf.Errorf("want at most %d delays, got %d", laws.MaxSamples, len(items))
		}
		for _, it := range items {
			v, err := it.DurationIn(0, laws.MaxDelay)
			if err != nil {
				return nil, err
			}
			samples = append(samples, v)
		}
	case hasFile:
		name, err := ff.Text()
		if err != nil {
			return nil, err
		}
		fh, err := openRelative(ff, name, dir, "samples file", yamlpos.MaxSamplesBytes)
		if err != nil {
			return nil, err
		}
		defer fh.Close()
		if samples, err = laws.ReadSamples(name, fh); err != nil {
			return nil, ff.Errorf("%v", err)
		}
	default:
		return nil, fmt.Errorf("missing samples or file for kind empirical")
	}
	return laws.NewEmpirical(samples, 0)
}

func buildMixture(k map[string]yamlpos.Field, dir string, depth int) (laws.Delay, error) {
	pf := k["parts"]
	if depth >= maxMixtureDepth {
		return nil, pf.Errorf("mixtures nested deeper than %d", maxMixtureDepth)
	}
	items, err := pf.Seq()
	if err != nil {
		return nil, err
	}
	if len(items) == 0 {
		return nil, pf.Errorf("want at least one part, got none")
	}
	weights := make([]float64, len(items))
	parts := make([]laws.Delay, len(items))
	total := 0.0
	for i, it := range items {
		d, extra, err := parseDelayExtra(it, dir, depth+1, "weight")
		if err != nil {
			return nil, err
		}
		wf, ok := extra["weight"]
		if !ok {
			return nil, it.Errorf("missing weight (a number ≥ 0)")
		}
		if weights[i], err = wf.FloatIn(0, math.Inf(1)); err != nil {
			return nil, err
		}
		parts[i] = d
		total += weights[i]
	}
	if !(total > 0) {
		return nil, pf.Errorf("want weights ≥ 0, not all 0")
	}
	return laws.NewMixture(weights, parts)
}

// openRelative opens the file a profile key names, its path relative to
// the profile's directory dir, when it is a regular file of at most limit
// bytes (see OpenInputFile); an error is positioned at the key. The
// reader it returns fails should the file grow past limit while read.
func openRelative(ff yamlpos.Field, name, dir, what string, limit int64) (io.ReadCloser, error) {
	path := name
	if !filepath.IsAbs(path) && dir != "" {
		path = filepath.Join(dir, path)
	}
	fh, _, err := yamlpos.OpenInputFile(path, what, limit)
	if err != nil {
		shown := yamlpos.Token(name)
		if len(name) <= 256 {
			shown = strconv.Quote(name) // a path of our own file: shown whole
		}
		var fe *yamlpos.FileError
		if errors.As(err, &fe) && fe.Msg == "" {
			return nil, ff.Errorf("cannot open %s: %s", shown, fe.Reason())
		}
		if errors.As(err, &fe) {
			return nil, ff.Errorf("%s: %s", shown, fe.Reason())
		}
		return nil, ff.Errorf("cannot open %s: %v", shown, err)
	}
	return struct {
		io.Reader
		io.Closer
	}{yamlpos.LimitedReader(fh, name, what, limit), fh}, nil
}
