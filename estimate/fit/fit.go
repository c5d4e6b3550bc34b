package fit

import (
	"cmp"
	"errors"
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/mathext"

	"rigwire/profiles/laws"
)

// DelayFit is the maximum-likelihood fit of one delay kind to a sample.
type DelayFit struct {
	// Kind is the profile kind ("gamma", …).
	Kind string
	// Names are the parameters as the profile's keys spell them ("shape",
	// "scale", "shift"); Params their estimates (seconds for times) and
	// StdErr their standard errors from the observed Fisher information
	// (NaN where the likelihood is not regular there: a shift at the edge
	// of its range).
	Names  []string
	Params []float64
	StdErr []float64
	// LogLik is the maximised log-likelihood Σ ln f(x_i), f being the
	// profile law's own density; K the number of estimated parameters;
	// AIC = 2K − 2 LogLik.
	LogLik float64
	K      int
	AIC    float64
	// KS is the Kolmogorov–Smirnov statistic of the sample against the
	// fitted law and KSP its p-value by [laws.KSPValue]. The parameters were
	// estimated from the same sample, so the p-value is conservative (too
	// large): the Lilliefors effect (H. W. Lilliefors, JASA 62(318),
	// 1967).
	KS, KSP float64
	// Law is the fitted law, ready for a profile.
	Law laws.Delay
}

// Param returns the estimate and standard error of the named parameter.
func (f *DelayFit) Param(name string) (est, se float64, ok bool) {
	for i, n := range f.Names {
		if n == name {
			return f.Params[i], f.StdErr[i], true
		}
	}
	return math.NaN(), math.NaN(), false
}

// Kinds are the delay kinds Delays tries, in the order it reports
// ties.
var Kinds = []string{"exponential", "gamma", "lognormal", "weibull", "normal"}

// ErrFewSamples is returned when a sample is too small to fit.
var ErrFewSamples = errors.New("too few samples")

// MinFitSamples is the smallest sample Delays accepts.
const MinFitSamples = 10

// Delays fits every kind of Kinds to the delays xs (seconds) by
// maximum likelihood and returns the fits in increasing order of AIC
// (Akaike's information criterion, AIC = 2K − 2 ln L̂: H. Akaike, "A new
// look at the statistical model identification", IEEE TAC 19(6), 1974),
// the first being the one chosen.
//
// Per kind, with y = x − s for a shift s (the kinds that take one):
//
//   - exponential: mean = ȳ.
//   - gamma: k solves ln k − ψ(k) = ln ȳ − mean(ln y) (ψ the digamma
//     function), scale = ȳ/k (T. P. Minka, "Estimating a gamma
//     distribution", 2002, eq. 5–6), solved by bisection in ln k.
//   - lognormal: ln median = mean(ln y), sigma² = mean((ln y − ln median)²).
//   - weibull: k solves Σ yᵏ ln y / Σ yᵏ − 1/k = mean(ln y), scale =
//     (mean yᵏ)^{1/k} (A. C. Cohen, "Maximum likelihood estimation in the
//     Weibull distribution", Technometrics 7(4), 1965, eq. 3–4), by
//     bisection in ln k.
//   - normal: mean = x̄, std² = mean((x − x̄)²), no shift. (The profile's
//     normal is truncated at 0; the fit is the untruncated one, fine when
//     the mean is several std above 0, which is what the loglik then
//     measures with the profile's own density.)
//
// The shift is estimated by profile likelihood: ℓ(s) = max over the other
// parameters of the log-likelihood of x − s, maximised over s ∈ [0, U],
// U = x₍₁₎ − (x̄ − x₍₁₎)/n (just below the smallest delay, by the gap that
// the exponential's unbiased threshold estimator leaves), on a grid of 24
// points refined by golden-section search. Where the likelihood grows
// without bound towards the minimum (shape < 1, the exponential) the
// estimate is U, the minimum-based estimate. Standard errors are the
// square roots of the diagonal of the inverse observed Fisher information
// (the negative Hessian of the log-likelihood by central differences) at
// the estimate; when the shift sits at an end of its range it is left out
// of the Hessian (its standard error is NaN; the others are conditional
// on it).
func Delays(xs []float64) ([]DelayFit, error) {
	if len(xs) < MinFitSamples {
		return nil, fmt.Errorf("fitting delays: %w: want at least %d, got %d", ErrFewSamples, MinFitSamples, len(xs))
	}
	sorted := slices.Clone(xs)
	slices.Sort(sorted)
	if sorted[0] < 0 || math.IsNaN(sorted[0]) || math.IsInf(sorted[len(sorted)-1], 0) {
		return nil, fmt.Errorf("fitting delays: want finite delays ≥ 0, got a value %g", sorted[0])
	}
	if sorted[0] == sorted[len(sorted)-1] {
		return nil, fmt.Errorf("fitting delays: all %d delays equal (%g s): a constant, nothing to fit", len(xs), sorted[0])
	}
	var fits []DelayFit
	for _, kind := range Kinds {
		f, err := fitKind(kind, sorted)
		if err != nil {
			continue // a kind that cannot describe the sample is not a candidate
		}
		fits = append(fits, f)
	}
	if len(fits) == 0 {
		return nil, fmt.Errorf("fitting delays: no kind could be fitted")
	}
	// Every AIC is finite (fitKind drops a kind without a finite
	// likelihood), so cmp.Compare orders them as < does.
	slices.SortStableFunc(fits, func(a, b DelayFit) int { return cmp.Compare(a.AIC, b.AIC) })
	return fits, nil
}

// kindSpec is one kind's closed-form (given the shift) estimator and its
// constructor from a parameter vector.
type kindSpec struct {
	names   []string // without shift
	shifted bool
	fit     func(y []float64) ([]float64, bool)
	law     func(p []float64, shift float64) (laws.Delay, error)
}

var kindSpecs = map[string]kindSpec{
	"exponential": {[]string{"mean"}, true, fitExponential, func(p []float64, s float64) (laws.Delay, error) { return laws.NewExponential(p[0], s) }},
	"gamma":       {[]string{"shape", "scale"}, true, fitGamma, func(p []float64, s float64) (laws.Delay, error) { return laws.NewGamma(p[0], p[1], s) }},
	"lognormal":   {[]string{"median", "sigma"}, true, fitLognormal, func(p []float64, s float64) (laws.Delay, error) { return laws.NewLognormal(p[0], p[1], s) }},
	"weibull":     {[]string{"shape", "scale"}, true, fitWeibull, func(p []float64, s float64) (laws.Delay, error) { return laws.NewWeibull(p[0], p[1], s) }},
	"normal":      {[]string{"mean", "std"}, false, fitNormal, func(p []float64, _ float64) (laws.Delay, error) { return laws.NewNormal(p[0], p[1], 0) }},
}

func fitKind(kind string, sorted []float64) (DelayFit, error) {
	spec := kindSpecs[kind]
	n := len(sorted)
	y := make([]float64, n)
	// profile log-likelihood at shift s
	prof := func(s float64) (float64, []float64) {
		for i, x := range sorted {
			y[i] = x - s
		}
		p, ok := spec.fit(y)
		if !ok {
			return math.Inf(-1), nil
		}
		d, err := spec.law(p, s)
		if err != nil {
			return math.Inf(-1), nil
		}
		return logLik(d, sorted), p
	}
	shift, edge := 0.0, true
	if spec.shifted {
		mean := 0.0
		for _, x := range sorted {
			mean += x
		}
		mean /= float64(n)
		upper := math.Max(0, sorted[0]-(mean-sorted[0])/float64(n))
		shift = maxProfile(prof, 0, upper)
		edge = !(shift > 1e-9*upper && shift < upper*(1-1e-9))
	}
	ll, p := prof(shift)
	if p == nil || math.IsInf(ll, 0) || math.IsNaN(ll) {
		return DelayFit{}, fmt.Errorf("%s: no finite likelihood", kind)
	}
	f := DelayFit{Kind: kind, Names: slices.Clone(spec.names), Params: p}
	if spec.shifted {
		f.Names = append(f.Names, "shift")
		f.Params = append(f.Params, shift)
	}
	f.K = len(f.Params)
	law, _ := spec.law(p, shift)
	f.Law, f.LogLik = law, ll
	f.AIC = 2*float64(f.K) - 2*ll
	f.KS = laws.KSStatistic(sorted, law.CDF)
	f.KSP = laws.KSPValue(f.KS, n)
	f.StdErr = observedStdErr(spec, f.Params, sorted, edge)
	return f, nil
}

// maxProfile maximises g on [lo, hi]: the best of a 24-point grid, then a
// golden-section search on the cells around it.
func maxProfile(g func(float64) (float64, []float64), lo, hi float64) float64 {
	if !(hi > lo) {
		return lo
	}
	const cells = 23
	best, bestV := 0, math.Inf(-1)
	for i := 0; i <= cells; i++ {
		v, _ := g(lo + (hi-lo)*float64(i)/cells)
		if v > bestV {
			best, bestV = i, v
		}
	}
	a := lo + (hi-lo)*float64(max(best-1, 0))/cells
	b := lo + (hi-lo)*float64(min(best+1, cells))/cells
	invPhi := (math.Sqrt(5) - 1) / 2
	c, d := b-invPhi*(b-a), a+invPhi*(b-a)
	vc, _ := g(c)
	vd, _ := g(d)
	for range 60 {
		if vc >= vd {
			b, d, vd = d, c, vc
			c = b - invPhi*(b-a)
			vc, _ = g(c)
		} else {
			a, c, vc = c, d, vd
			d = a + invPhi*(b-a)
			vd, _ = g(d)
		}
	}
	x, v := (a+b)/2, math.Inf(-1)
	v, _ = g(x)
	// the ends of the range are candidates too (unbounded likelihood at hi)
	for _, e := range []float64{lo, hi} {
		if ve, _ := g(e); ve > v {
			x, v = e, ve
		}
	}
	return x
}

func logLik(d laws.Delay, xs []float64) float64 {
	s := 0.0
	for _, x := range xs {
		s += math.Log(d.Density(x))
	}
	if math.IsNaN(s) {
		return math.Inf(-1)
	}
	return s
}

// observedStdErr returns the square roots of the diagonal of the inverse
// of the observed information J = −∇²ℓ(θ̂), ℓ from the profile law's
// density, ∇² by central differences with steps 1e-4 of each parameter
// (limited, for the shift, to a tenth of its distance from the smallest
// sample). A shift at an end of its range is held fixed (NaN).
func observedStdErr(spec kindSpec, theta, sorted []float64, edge bool) []float64 {
	k := len(theta)
	se := make([]float64, k)
	for i := range se {
		se[i] = math.NaN()
	}
	free := make([]int, 0, k)
	steps := make([]float64, k)
	for i := range theta {
		steps[i] = 1e-4 * math.Abs(theta[i])
		if spec.shifted && i == k-1 {
			room := sorted[0] - theta[i]
			spread := sorted[len(sorted)-1] - sorted[0]
			if edge || room <= 0 {
				continue // at an end of the range: held fixed
			}
			steps[i] = math.Min(1e-4*spread, room/10)
		}
		if steps[i] == 0 {
			continue
		}
		free = append(free, i)
	}
	ll := func(th []float64) float64 {
		var d laws.Delay
		var err error
		if spec.shifted {
			d, err = spec.law(th[:k-1], th[k-1])
		} else {
			d, err = spec.law(th, 0)
		}
		if err != nil {
			return math.NaN()
		}
		return logLik(d, sorted)
	}
	m := len(free)
	J := mat.NewSymDense(m, nil)
	th := slices.Clone(theta)
	at := func(i int, di float64, j int, dj float64) float64 {
		copy(th, theta)
		th[i] += di
		th[j] += dj
		return ll(th)
	}
	for a, i := range free {
		for b := a; b < m; b++ {
			j := free[b]
			hi, hj := steps[i], steps[j]
			var d2 float64
			if i == j {
				d2 = (at(i, hi, i, 0) - 2*ll(theta) + at(i, -hi, i, 0)) / (hi * hi)
			} else {
				d2 = (at(i, hi, j, hj) - at(i, hi, j, -hj) - at(i, -hi, j, hj) + at(i, -hi, j, -hj)) / (4 * hi * hj)
			}
			J.SetSym(a, b, -d2)
		}
	}
	var inv mat.Dense
	if err := inv.Inverse(J); err != nil {
		return se
	}
	for a, i := range free {
		if v := inv.At(a, a); v > 0 {
			se[i] = math.Sqrt(v)
		}
	}
	return se
}

func meanOf(y []float64) float64 {
	s := 0.0
	for _, v := range y {
		s += v
	}
	return s / float64(len(y))
}

func meanLog(y []float64) (float64, bool) {
	s := 0.0
	for _, v := range y {
		if !(v > 0) {
			return 0, false
		}
		s += math.Log(v)
	}
	return s / float64(len(y)), true
}

func fitExponential(y []float64) ([]float64, bool) {
	m := meanOf(y)
	return []float64{m}, m > 0
}

func fitGamma(y []float64) ([]float64, bool) {
	m := meanOf(y)
	ml, ok := meanLog(y)
	if !ok || !(m > 0) {
		return nil, false
	}
	s := math.Log(m) - ml // > 0 by Jensen unless all equal
	if !(s > 0) {
		return nil, false
	}
	// ln k − ψ(k) decreases from +∞ to 0 on k > 0
	lo, hi := math.Log(1e-4), math.Log(1e7)
	for range 80 {
		mid := (lo + hi) / 2
		k := math.Exp(mid)
		if math.Log(k)-mathext.Digamma(k) > s {
			lo = mid
		} else {
			hi = mid
		}
	}
	k := math.Exp((lo + hi) / 2)
	return []float64{k, m / k}, true
}

func fitLognormal(y []float64) ([]float64, bool) {
	mu, ok := meanLog(y)
	if !ok {
		return nil, false
	}
	v := 0.0
	for _, x := range y {
		d := math.Log(x) - mu
		v += d * d
	}
	v /= float64(len(y))
	return []float64{math.Exp(mu), math.Sqrt(v)}, v > 0
}

func fitWeibull(y []float64) ([]float64, bool) {
	ml, ok := meanLog(y)
	if !ok {
		return nil, false
	}
	c := math.Exp(ml) // scale the data to geometric mean 1: no overflow in yᵏ
	lz := make([]float64, len(y))
	for i, x := range y {
		lz[i] = math.Log(x / c)
	}
	// g(k) = Σ zᵏ ln z / Σ zᵏ − 1/k (mean ln z = 0) increases in k
	g := func(k float64) float64 {
		var a, b float64
		for _, l := range lz {
			e := math.Exp(k * l)
			a += e * l
			b += e
		}
		return a/b - 1/k
	}
	lo, hi := math.Log(1e-3), math.Log(1e4)
	for range 70 {
		mid := (lo + hi) / 2
		if g(math.Exp(mid)) < 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	k := math.Exp((lo + hi) / 2)
	s := 0.0
	for _, l := range lz {
		s += math.Exp(k * l)
	}
	scale := c * math.Pow(s/float64(len(lz)), 1/k)
	return []float64{k, scale}, scale > 0 && !math.IsInf(scale, 0)
}

func fitNormal(y []float64) ([]float64, bool) {
	m := meanOf(y)
	v := 0.0
	for _, x := range y {
		v += (x - m) * (x - m)
	}
	v /= float64(len(y))
	return []float64{m, math.Sqrt(v)}, v > 0
}
