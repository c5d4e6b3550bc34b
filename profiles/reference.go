package profiles

import (
	"math"

	"rigwire/profiles/laws"
	"rigwire/profiles/yamlpos"
)

// ReferenceKind says how the reference r moves.
type ReferenceKind int

const (
	// ReferenceConstant is the constant setpoint (key setpoint).
	ReferenceConstant ReferenceKind = iota
	// ReferenceSine is r = offset + amplitude·sin(2π f t + phase), one
	// frequency for the whole run.
	ReferenceSine
	// ReferenceSweep steps through frequencies, each held for a dwell,
	// r = offset + amplitude·sin(2π f t' + phase) with t' the time since
	// the dwell began; after the last frequency it starts again.
	ReferenceSweep
)

// Reference is the loop's reference as a function of the sample's
// sequence number k: the sample time is t_k = k·h for the rig, the
// controller and the monitor alike, so all three agree on r(t_k) whatever
// the network did to the datagrams (key reference, profiles/formats.md).
// The zero value is the constant setpoint.
type Reference struct {
	Kind ReferenceKind
	// Amplitude and Phase (radians) are per output; the offset is the
	// loop's Setpoint.
	Amplitude, Phase []float64
	// Frequencies in Hz, each in (0, 1/(2h)): one for a sine.
	Frequencies []float64
	// DwellSamples is how many samples each frequency of a sweep lasts (0
	// for a sine: for ever); SettleSamples how many at the start of each
	// dwell (of the run, for a sine) the measurement leaves out while the
	// loop settles onto the new sinusoid.
	DwellSamples, SettleSamples uint64
}

// Sinusoidal reports whether the reference moves.
func (r *Reference) Sinusoidal() bool { return r.Kind != ReferenceConstant }

// Segment says where sample k falls: which frequency (index into
// Frequencies), the sample's phase θ_k = 2π f t' in radians with t' the
// time since the segment began (k·h for a sine), and whether the sample
// is still within the segment's settling time. A constant reference has
// one segment, phase 0, settled.
func (r *Reference) Segment(k uint64, period float64) (seg int, theta float64, settling bool) {
	switch r.Kind {
	case ReferenceSine:
		return 0, cycles(r.Frequencies[0], k, period), k < r.SettleSamples
	case ReferenceSweep:
		j := k % r.DwellSamples
		seg = int((k / r.DwellSamples) % uint64(len(r.Frequencies)))
		return seg, cycles(r.Frequencies[seg], j, period), j < r.SettleSamples
	}
	return 0, 0, false
}

// cycles is 2π·frac(f·j·h), accurate to the rounding of f·h however long
// the run (the product j·f·h itself would lose the fraction).
func cycles(f float64, j uint64, h float64) float64 {
	c := f * h // cycles per sample
	// j·c in two parts so that frac stays accurate for j up to 2⁶⁴.
	hi, lo := j>>32, j&(1<<32-1)
	_, a := math.Modf(float64(hi) * 4294967296 * c)
	_, b := math.Modf(float64(lo) * c)
	_, t := math.Modf(a + b)
	return 2 * math.Pi * t
}

// ReferenceAt writes r(t_k) for sample k into dst (len p) and returns
// where the sample falls, as Segment: the frequency's index, the phase θ_k
// and whether the sample is settling.
func (l *Loop) ReferenceAt(k uint64, dst []float64) (seg int, theta float64, settling bool) {
	copy(dst, l.Setpoint)
	r := &l.Reference
	if !r.Sinusoidal() {
		return 0, 0, false
	}
	seg, theta, settling = r.Segment(k, l.Period)
	for i := range dst {
		if a := r.Amplitude[i]; a != 0 {
			dst[i] += a * math.Sin(theta+r.Phase[i])
		}
	}
	return seg, theta, settling
}

// Phasor returns the complex amplitude R of output i's sinusoid in the
// convention r_i = offset_i + Re(R e^{jθ}): R = −j·A·e^{jφ}.
func (r *Reference) Phasor(i int) complex128 {
	a, ph := r.Amplitude[i], r.Phase[i]
	return complex(a*math.Sin(ph), -a*math.Cos(ph))
}

// MaxReferenceFrequencies bounds a sweep's list.
const MaxReferenceFrequencies = 64

// parseReference reads the reference section (the offset is the loop's
// setpoint, read before).
func parseReference(f yamlpos.Field, l *Loop, p int) error {
	keys, err := f.Mapping("kind", "amplitude", "phase", "frequency", "frequencies", "from", "to", "points", "dwell", "settle")
	if err != nil {
		return err
	}
	if keys["kind"].IsZero() {
		return missing(f, "kind")
	}
	kind, err := keys["kind"].Text()
	if err != nil {
		return err
	}
	r := &l.Reference
	h := l.Period
	nyq := 1 / (2 * h)
	freq := func(fl yamlpos.Field) (float64, error) {
		v, ok := fl.AsFloat()
		if !ok || !(v > 0) || v >= nyq {
			return 0, fl.Errorf("want a frequency in Hz above 0 and below the Nyquist frequency 1/(2h) = %g Hz, got %s", nyq, fl.Got())
		}
		return v, nil
	}
	allowed := map[string]bool{"kind": true, "amplitude": true, "phase": true, "settle": true}
	switch kind {
	case "sine":
		r.Kind = ReferenceSine
		if keys["frequency"].IsZero() {
			return missing(f, "frequency")
		}
		v, err := freq(keys["frequency"])
		if err != nil {
			return err
		}
		r.Frequencies = []float64{v}
		allowed["frequency"] = true
	case "sweep":
		r.Kind = ReferenceSweep
		if err := parseSweep(f, keys, r, freq, h); err != nil {
			return err
		}
		for _, k := range []string{"frequencies", "from", "to", "points", "dwell"} {
			allowed[k] = true
		}
	default:
		return keys["kind"].Errorf("want sine or sweep (a constant reference is the key setpoint), got %s", keys["kind"].Got())
	}
	for k, v := range keys {
		if !v.IsZero() && !allowed[k] {
			return v.Errorf("not a key of a %s reference", kind)
		}
	}
	if keys["amplitude"].IsZero() {
		return missing(f, "amplitude")
	}
	if r.Amplitude, err = keys["amplitude"].Vector(); err != nil {
		return err
	}
	if len(r.Amplitude) != p {
		return keys["amplitude"].Errorf("want %d numbers (one per output of plant.c), got %d", p, len(r.Amplitude))
	}
	any := false
	for i, a := range r.Amplitude {
		if !(a >= 0 && a <= maxReference) {
			return keys["amplitude"].Errorf("want amplitudes in [0, %g], got [%d] = %g", maxReference, i, a)
		}
		any = any || a > 0
	}
	if !any {
		return keys["amplitude"].Errorf("want at least one amplitude > 0 (a constant reference is the key setpoint), got all zero")
	}
	r.Phase = make([]float64, p)
	if ph := keys["phase"]; !ph.IsNull() {
		deg, err := ph.Vector()
		if err != nil {
			return err
		}
		if len(deg) != p {
			return ph.Errorf("want %d phases in degrees (one per output), got %d", p, len(deg))
		}
		for i, d := range deg {
			if math.Abs(d) > 360 {
				return ph.Errorf("want phases in degrees within ±360, got [%d] = %g", i, d)
			}
			r.Phase[i] = d * math.Pi / 180
		}
	}
	for i, o := range l.Setpoint {
		if math.Abs(o)+r.Amplitude[i] > maxReference {
			return f.Errorf("setpoint[%d] ± amplitude[%d] reaches %g: want the reference within ±%g", i, i, math.Abs(o)+r.Amplitude[i], maxReference)
		}
	}
	// Settling: by default a fifth of a dwell, or of the first 1000
	// periods of a sine, and at least 10 periods.
	span := float64(r.DwellSamples) * h
	if r.Kind == ReferenceSine {
		span = 1000 * h
	}
	settle := math.Max(10*h, span/5)
	if s := keys["settle"]; !s.IsNull() {
		hi := math.Inf(1)
		if r.Kind == ReferenceSweep {
			hi = span / 2
		}
		if settle, err = s.DurationIn(0, hi); err != nil {
			return err
		}
	}
	r.SettleSamples = uint64(math.Ceil(settle/h - 1e-9))
	if r.Kind == ReferenceSweep {
		fit := float64(r.DwellSamples-r.SettleSamples) * h
		for i, fr := range r.Frequencies {
			if fr*fit < 2 {
				return f.Errorf("frequency %g Hz (%d of the sweep): want at least two cycles in the %s of each dwell after settling, got %.3g; lengthen dwell",
					fr, i+1, laws.FormatSeconds(fit), fr*fit)
			}
		}
	}
	return nil
}

// maxReference bounds |r|, as decoded outputs are bounded.
const maxReference = 1e50

func parseSweep(f yamlpos.Field, keys map[string]yamlpos.Field, r *Reference, freq func(yamlpos.Field) (float64, error), h float64) error {
	list, from := keys["frequencies"], keys["from"]
	switch {
	case !list.IsZero() && !from.IsZero():
		return list.Errorf("want frequencies or from/to/points, got both")
	case !list.IsZero():
		items, err := list.Seq()
		if err != nil {
			return err
		}
		if len(items) == 0 || len(items) > MaxReferenceFrequencies {
			return list.Errorf("want 1 to %d frequencies, got %d", MaxReferenceFrequencies, len(items))
		}
		for _, it := range items {
			v, err := freq(it)
			if err != nil {
				return err
			}
			r.Frequencies = append(r.Frequencies, v)
		}
	case !from.IsZero():
		for _, k := range []string{"to", "points"} {
			if keys[k].IsZero() {
				return missing(f, k)
			}
		}
		lo, err := freq(from)
		if err != nil {
			return err
		}
		hi, err := freq(keys["to"])
		if err != nil {
			return err
		}
		if hi <= lo {
			return keys["to"].Errorf("want a frequency above from (%g Hz), got %s", lo, keys["to"].Got())
		}
		n, err := keys["points"].Int()
		if err != nil || n < 2 || n > MaxReferenceFrequencies {
			return keys["points"].Errorf("want a whole number of frequencies in [2, %d], got %s", MaxReferenceFrequencies, keys["points"].Got())
		}
		r.Frequencies = LogSpaced(lo, hi, n)
	default:
		return f.Errorf("want frequencies (a list, Hz) or from, to and points (log-spaced), got neither")
	}
	if keys["dwell"].IsZero() {
		return missing(f, "dwell")
	}
	dwell, err := keys["dwell"].DurationIn(20*h, 7*24*3600)
	if err != nil {
		return err
	}
	r.DwellSamples = uint64(math.Round(dwell / h))
	return nil
}

// LogSpaced returns n frequencies from lo to hi, evenly spaced on a log
// scale, the ends exact.
func LogSpaced(lo, hi float64, n int) []float64 {
	out := make([]float64, n)
	for i := range out {
		out[i] = lo * math.Pow(hi/lo, float64(i)/float64(n-1))
	}
	out[0], out[n-1] = lo, hi
	return out
}
