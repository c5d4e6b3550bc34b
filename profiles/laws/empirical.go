package laws

import (
	"bufio"
	"errors"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"rigwire/profiles/yamlpos"
	"slices"
	"sort"
	"strconv"
	"strings"
)

// Empirical is the law of a delay resampled with replacement from measured
// delays: each of the n samples is drawn with probability 1/n, so the law
// is purely atomic, with an atom of mass c/n at each distinct value seen c
// times. Its mean and variance are those of the samples with divisor n
// (the law of one draw, not an estimate of a parent law). Profile kind
// "empirical" (keys samples or file, shift). Build it with [NewEmpirical].
type Empirical struct {
	sorted []float64 // the samples in increasing order
	atoms  []Atom
	mean   float64
	vari   float64
}

// NewEmpirical returns the resampling law of samples (each finite and
// ≥ 0, at least one), shifted by shift ≥ 0. The slice is copied.
func NewEmpirical(samples []float64, shift float64) (Delay, error) {
	if len(samples) == 0 {
		return nil, fmt.Errorf("empirical delay: want at least one sample")
	}
	s := slices.Clone(samples)
	for i, v := range s {
		if !(v >= 0) || math.IsInf(v, 1) {
			return nil, fmt.Errorf("empirical delay: sample %d: want a delay ≥ 0, got %g", i, v)
		}
	}
	slices.Sort(s)
	e := &Empirical{sorted: s}
	n := float64(len(s))
	for i := 0; i < len(s); {
		j := i
		for j < len(s) && s[j] == s[i] {
			j++
		}
		e.atoms = append(e.atoms, Atom{At: s[i], Mass: float64(j-i) / n})
		i = j
	}
	// Two passes: the mean, then the centred sum of squares
	// (Chan, Golub, LeVeque, "Algorithms for computing the sample
	// variance", Am. Stat. 37(3), 1983, eq. 1.7, without its correction
	// term since the mean is exact to rounding).
	for _, v := range s {
		e.mean += v
	}
	e.mean /= n
	for _, v := range s {
		d := v - e.mean
		e.vari += d * d
	}
	e.vari /= n
	return Shift(e, shift)
}

// MaxSamples bounds the delays of one empirical law, given inline or in a
// file: a file obeys the bound an inline list has (a YAML file holds at
// most MaxNodes values).
const MaxSamples = yamlpos.MaxNodes

// ReadSamples reads delays, one a line, as a duration ("3ms") or plain
// seconds; blank lines and lines starting with # are skipped. Every delay
// obeys the bounds of an inline sample: finite, in [0, MaxDelay], at most
// MaxSamples of them. name is used in messages, which give the line and
// never repeat a line that is not a delay:
// "trace.txt:37: want a delay in [0, 3600] seconds, got 1e+10".
func ReadSamples(name string, r io.Reader) ([]float64, error) {
	var out []float64
	sc := bufio.NewScanner(r)
	const maxLine = 4096
	sc.Buffer(make([]byte, 0, maxLine), maxLine)
	line := 0
	for sc.Scan() {
		line++
		t := strings.TrimSpace(sc.Text())
		if t == "" || strings.HasPrefix(t, "#") {
			continue
		}
		v, err := yamlpos.ParseDuration(t)
		if err != nil {
			return nil, fmt.Errorf("%s:%d: want a delay (seconds, or a duration such as \"3ms\"), got %s", name, line, yamlpos.ShownNumber(t))
		}
		if !(v >= 0) || v > MaxDelay {
			return nil, fmt.Errorf("%s:%d: want a delay in [0, %g] seconds, got %s", name, line, MaxDelay, strconv.FormatFloat(v, 'g', 6, 64))
		}
		if len(out) == MaxSamples {
			return nil, fmt.Errorf("%s:%d: want at most %d delays, got more", name, line, MaxSamples)
		}
		out = append(out, v)
	}
	if err := sc.Err(); err != nil {
		if errors.Is(err, bufio.ErrTooLong) {
			return nil, fmt.Errorf("%s:%d: want one delay a line, got a line longer than %d bytes", name, line+1, maxLine)
		}
		return nil, fmt.Errorf("%s:%d: %w", name, line+1, err)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%s: want at least one delay, got none", name)
	}
	return out, nil
}

func (e *Empirical) Kind() string { return "empirical" }

// Sample picks one of the samples uniformly.
func (e *Empirical) Sample(r *rand.Rand) float64 { return e.sorted[r.IntN(len(e.sorted))] }

// CDF is the fraction of samples ≤ x.
func (e *Empirical) CDF(x float64) float64 {
	k := sort.Search(len(e.sorted), func(i int) bool { return e.sorted[i] > x })
	return float64(k) / float64(len(e.sorted))
}

func (e *Empirical) Density(float64) float64 { return 0 }

// Atoms returns the distinct samples with their frequencies; the slice is
// shared, do not modify it.
func (e *Empirical) Atoms() []Atom     { return e.atoms }
func (e *Empirical) Mean() float64     { return e.mean }
func (e *Empirical) Variance() float64 { return e.vari }
func (e *Empirical) Len() int          { return len(e.sorted) }

func (e *Empirical) Support() (lo, hi float64) { return e.sorted[0], e.sorted[len(e.sorted)-1] }

func (e *Empirical) String() string {
	return fmt.Sprintf("empirical %d samples (%d distinct)", len(e.sorted), len(e.atoms))
}
