package estimate

import (
	"fmt"
	"math"
	"math/cmplx"
	"regexp"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
)

// Gain maps (estimate/model.md §17): the prediction over a grid of one or
// two controller gains.

// GainParam is one swept gain: a factor on the whole controller's output
// (Name "scale": Cc and Dc multiplied by it) or one entry of the
// controller's matrices (Name "a[i][j]", "b[i][j]", "c[i][j]",
// "d[i][j]", 0-based), over Values.
type GainParam struct {
	Name   string
	matrix byte // 's', 'a', 'b', 'c', 'd'; 'p' for a PID gain
	i, j   int
	pid    string // kp, ki, kd, filter
	Values []float64
}

// MaxGainPoints bounds a gain map's grid.
const MaxGainPoints = 250000

var gainEntry = regexp.MustCompile(`^([abcd])\[(\d+)\]\[(\d+)\]$`)

// ParseGainParam reads NAME=START:STOP:N (N points, evenly spaced) for
// loop: NAME is scale or a controller entry a[i][j], b[i][j], c[i][j],
// d[i][j] that the loop's controller has.
func ParseGainParam(spec string, loop *profiles.Loop) (GainParam, error) {
	name, rng, ok := strings.Cut(spec, "=")
	if !ok {
		return GainParam{}, fmt.Errorf("want NAME=START:STOP:N (NAME scale or a controller entry such as d[0][0]), got %q", spec)
	}
	p := GainParam{Name: name}
	switch m := gainEntry.FindStringSubmatch(name); {
	case name == "scale":
		p.matrix = 's'
	case name == "kp" || name == "ki" || name == "kd" || name == "filter":
		if loop.Controller.PID == nil {
			return p, fmt.Errorf("%s: the loop's controller is not given as PID gains (controller.pid)", name)
		}
		p.matrix, p.pid = 'p', name
	case m != nil:
		p.matrix = m[1][0]
		p.i, _ = strconv.Atoi(m[2])
		p.j, _ = strconv.Atoi(m[3])
		mx := controllerMatrix(&loop.Controller, p.matrix)
		if mx == nil {
			return p, fmt.Errorf("%s: the loop's controller has no %s (a static controller has d only)", name, m[1])
		}
		if r, c := mx.Dims(); p.i >= r || p.j >= c {
			return p, fmt.Errorf("%s: the controller's %s is %d×%d", name, m[1], r, c)
		}
	default:
		return p, fmt.Errorf("%q: want scale, a controller entry a[i][j], b[i][j], c[i][j], d[i][j], or a PID gain kp, ki, kd, filter", name)
	}
	parts := strings.Split(rng, ":")
	if len(parts) != 3 {
		return p, fmt.Errorf("%s: want START:STOP:N, got %q", name, rng)
	}
	lo, err1 := strconv.ParseFloat(parts[0], 64)
	hi, err2 := strconv.ParseFloat(parts[1], 64)
	n, err3 := strconv.Atoi(parts[2])
	switch {
	case err1 != nil || err2 != nil || math.IsNaN(lo) || math.IsNaN(hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0):
		return p, fmt.Errorf("%s: want finite numbers START and STOP, got %q", name, rng)
	case !(hi > lo):
		return p, fmt.Errorf("%s: want STOP above START, got %q", name, rng)
	case err3 != nil || n < 2 || n > 10000:
		return p, fmt.Errorf("%s: want a number of points N in [2, 10000], got %q", name, parts[2])
	}
	for k := 0; k < n; k++ {
		p.Values = append(p.Values, lo+(hi-lo)*float64(k)/float64(n-1))
	}
	return p, nil
}

func controllerMatrix(c *profiles.Controller, m byte) *mat.Dense {
	switch m {
	case 'a':
		return c.A
	case 'b':
		return c.B
	case 'c':
		return c.C
	case 'd':
		return c.D
	}
	return nil
}

// Nominal is the parameter's value in the loop as written: 1 for scale,
// the entry's own value else.
func (p GainParam) Nominal(loop *profiles.Loop) float64 {
	switch p.matrix {
	case 's':
		return 1
	case 'p':
		return *pidGain(loop.Controller.PID, p.pid)
	}
	return controllerMatrix(&loop.Controller, p.matrix).At(p.i, p.j)
}

func pidGain(pid *profiles.PID, name string) *float64 {
	switch name {
	case "kp":
		return &pid.Kp
	case "ki":
		return &pid.Ki
	case "kd":
		return &pid.Kd
	}
	return &pid.Filter
}

// apply sets the parameter to v in a copy of the loop's controller (a
// PID gain is set in a copy of the gains, discretised again).
func (p GainParam) apply(loop *profiles.Loop, v float64) error {
	c := &loop.Controller
	if p.matrix == 'p' {
		pid := *c.PID
		*pidGain(&pid, p.pid) = v
		a, b, cc, d, err := pid.Discrete(loop.Period)
		if err != nil {
			return fmt.Errorf("%s = %g: %w", p.Name, v, err)
		}
		c.A, c.B, c.C, c.D, c.PID = a, b, cc, d, &pid
		return nil
	}
	cp := func(m *mat.Dense) *mat.Dense {
		if m == nil {
			return nil
		}
		return mat.DenseCopyOf(m)
	}
	c.A, c.B, c.C, c.D = cp(c.A), cp(c.B), cp(c.C), cp(c.D)
	if p.matrix == 's' {
		if c.C != nil {
			c.C.Scale(v, c.C)
		}
		c.D.Scale(v, c.D)
		return nil
	}
	controllerMatrix(c, p.matrix).Set(p.i, p.j, v)
	return nil
}

// GainPoint is the prediction at one grid point.
type GainPoint struct {
	Values           []float64 // one per parameter
	MeanSquareStable bool
	Stability        string
	SpectralRadius   float64
	RadiusError      float64
	SecondMoment     float64 // NaN when not mean-square stable
	// NominalStable: the loop without loss or delay is stable there.
	NominalStable bool
}

// GainMargin is the interval of one parameter around its nominal value
// over which the loop is mean-square stable (Low, High), beside the one of
// the loss-free, delay-free loop, each end refined by bisection to 1e-6
// of the grid's span. An end the grid does not reach is ±Inf; both are
// NaN when the loop is not stable at the nominal value.
type GainMargin struct {
	Nominal                 float64
	Low, High               float64
	NominalLow, NominalHigh float64
}

// GainMap is the prediction over the grid: Points in row-major order
// (the first parameter outermost).
type GainMap struct {
	Params []GainParam
	Points []GainPoint
	// Best is the index of the point with the least E[eᵀe] among the
	// mean-square stable ones, −1 when none is.
	Best int
	// Margin is set for a one-parameter map.
	Margin *GainMargin
}

// GainMapOf predicts the loop at every point of the grid of params (one
// or two), on workers goroutines (0: every core), calling progress (when
// set) after each point, one call at a time.
func GainMapOf(loop *profiles.Loop, params []GainParam, workers int, progress func(done, total int)) (*GainMap, error) {
	if len(params) < 1 || len(params) > 2 {
		return nil, fmt.Errorf("gain map: want one or two parameters, got %d", len(params))
	}
	if len(params) == 2 && params[0].Name == params[1].Name {
		return nil, fmt.Errorf("gain map: %s given twice", params[0].Name)
	}
	total := 1
	for _, p := range params {
		total *= len(p.Values)
	}
	if total > MaxGainPoints {
		return nil, fmt.Errorf("gain map: %d points, at most %d", total, MaxGainPoints)
	}
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	gm := &GainMap{Params: params, Points: make([]GainPoint, total), Best: -1}
	rules := newRuleCache() // the network's τ rules, the same at every point
	var next, done atomic.Int64
	var wg sync.WaitGroup
	var mu, pmu sync.Mutex
	var firstErr error
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				k := int(next.Add(1) - 1)
				if k >= total {
					return
				}
				vals := gm.valuesAt(k)
				pt, err := gainPointWith(loop, params, vals, rules)
				if err != nil {
					mu.Lock()
					if firstErr == nil {
						firstErr = fmt.Errorf("gain map at %s: %w", describeValues(params, vals), err)
					}
					mu.Unlock()
					return
				}
				gm.Points[k] = pt
				if progress != nil {
					pmu.Lock() // one call at a time, in order of completion
					progress(int(done.Add(1)), total)
					pmu.Unlock()
				}
			}
		}()
	}
	wg.Wait()
	if firstErr != nil {
		return nil, firstErr
	}
	for k, pt := range gm.Points {
		if pt.MeanSquareStable && (gm.Best < 0 || pt.SecondMoment < gm.Points[gm.Best].SecondMoment) {
			gm.Best = k
		}
	}
	if len(params) == 1 {
		m, err := gainMargin(loop, params[0])
		if err != nil {
			return nil, err
		}
		gm.Margin = m
	}
	return gm, nil
}

// valuesAt is the parameter values of point k.
func (gm *GainMap) valuesAt(k int) []float64 {
	if len(gm.Params) == 1 {
		return []float64{gm.Params[0].Values[k]}
	}
	n2 := len(gm.Params[1].Values)
	return []float64{gm.Params[0].Values[k/n2], gm.Params[1].Values[k%n2]}
}

func describeValues(params []GainParam, vals []float64) string {
	parts := make([]string, len(params))
	for i, p := range params {
		parts[i] = fmt.Sprintf("%s = %g", p.Name, vals[i])
	}
	return strings.Join(parts, ", ")
}

// withGains is a copy of loop with the parameters set.
func withGains(loop *profiles.Loop, params []GainParam, vals []float64) (*profiles.Loop, error) {
	l := *loop
	for i, p := range params {
		if err := p.apply(&l, vals[i]); err != nil {
			return nil, err
		}
	}
	return &l, nil
}

func gainPoint(loop *profiles.Loop, params []GainParam, vals []float64) (GainPoint, error) {
	return gainPointWith(loop, params, vals, nil)
}

// gainPointWith is gainPoint sharing τ rules through rules (nil: none).
func gainPointWith(loop *profiles.Loop, params []GainParam, vals []float64, rules *ruleCache) (GainPoint, error) {
	pt := GainPoint{Values: vals, SecondMoment: math.NaN()}
	l, err := withGains(loop, params, vals)
	if err != nil {
		return pt, err
	}
	md, err := Build(l, Options{rules: rules})
	if err != nil {
		return pt, err
	}
	pt.NominalStable = md.nominalStable()
	var rad Radius
	rad, pt.Stability, pt.MeanSquareStable, pt.SecondMoment = md.radiusAndMoment()
	pt.SpectralRadius, pt.RadiusError = rad.Value, rad.Error
	return pt, nil
}

// nominalStable: every eigenvalue of the loss-free, delay-free closed
// loop lies inside the unit circle.
func (md *Model) nominalStable() bool {
	A, _ := md.lm.nominalLoop()
	var eig mat.Eigen
	if !eig.Factorize(A, mat.EigenNone) {
		return false
	}
	for _, v := range eig.Values(nil) {
		if !(cmplx.Abs(v) < 1) {
			return false
		}
	}
	return true
}

// gainMargin finds, around p's nominal value, the interval where the
// loop is mean-square stable and the one where the loss-free loop is
// stable, by bisection from the nominal value towards each end of the
// grid.
func gainMargin(loop *profiles.Loop, p GainParam) (*GainMargin, error) {
	x0 := p.Nominal(loop)
	lo, hi := p.Values[0], p.Values[len(p.Values)-1]
	tol := 1e-6 * (hi - lo)
	m := &GainMargin{Nominal: x0, Low: math.NaN(), High: math.NaN(), NominalLow: math.NaN(), NominalHigh: math.NaN()}
	var berr error
	test := func(v float64, nominal bool) bool {
		l, err := withGains(loop, []GainParam{p}, []float64{v})
		if err != nil {
			berr = err
			return false
		}
		md, err := Build(l, Options{})
		if err != nil {
			berr = err
			return false
		}
		if nominal {
			return md.nominalStable()
		}
		return md.MeanSquareStable()
	}
	edge := func(end float64, nominal bool) float64 {
		if test(end, nominal) {
			return math.Copysign(math.Inf(1), end-x0) // stable to the grid's end
		}
		in, out := x0, end
		for math.Abs(out-in) > tol {
			mid := (in + out) / 2
			if test(mid, nominal) {
				in = mid
			} else {
				out = mid
			}
		}
		return (in + out) / 2
	}
	if test(x0, false) {
		m.Low, m.High = edge(math.Min(lo, x0), false), edge(math.Max(hi, x0), false)
	}
	if test(x0, true) {
		m.NominalLow, m.NominalHigh = edge(math.Min(lo, x0), true), edge(math.Max(hi, x0), true)
	}
	if berr != nil {
		return nil, fmt.Errorf("gain margin of %s: %w", p.Name, berr)
	}
	return m, nil
}

// nominalLoop is the loss-free, delay-free closed loop z' = A z + B r of
// the sampled plant and the controller, z = [x; xc].
func (lm *loopMatrices) nominalLoop() (A, B *mat.Dense) {
	n, p, nc := lm.n, lm.p, lm.nc
	k := n + nc
	A = mat.NewDense(k, k, nil)
	B = mat.NewDense(k, p, nil)
	var gdc, gdcC mat.Dense
	gdc.Mul(lm.samp.Gamma, lm.dc)
	gdcC.Mul(&gdc, lm.c)
	setBlock(A, 0, 0, lm.samp.Phi, 1)
	setBlock(A, 0, 0, &gdcC, -1)
	setBlock(B, 0, 0, &gdc, 1)
	if nc > 0 {
		var gcc, bcC mat.Dense
		gcc.Mul(lm.samp.Gamma, lm.cc)
		bcC.Mul(lm.bc, lm.c)
		setBlock(A, 0, n, &gcc, 1)
		setBlock(A, n, 0, &bcC, -1)
		setBlock(A, n, n, lm.ac, 1)
		setBlock(B, n, 0, lm.bc, 1)
	}
	return A, B
}

// radiusAndMoment is what a sweep or a map reports at one point: the
// radius, the stability (marginal when the radius said stable but the
// steady moments cannot be had), and the steady E[eᵀe] (NaN when not
// mean-square stable).
func (md *Model) radiusAndMoment() (rad Radius, stability string, stable bool, second float64) {
	rad = md.Radius()
	stability, second = rad.Stability, math.NaN()
	if rad.Stability == StabilityStable {
		if mo, err := md.Steady(); err == nil {
			return rad, stability, true, md.Error(mo).SecondMoment
		}
		stability = StabilityMarginal
	}
	return rad, stability, false, second
}
