package loadkit

import (
	"math"
	"sort"
)

// QuantileSorted is the p-quantile (0 < p ≤ 1) of ascending data by the
// nearest-rank rule: the smallest value x such that at least a fraction p
// of the data is ≤ x, that is x[⌈p·n⌉ − 1]. It is the inverse of the
// empirical distribution function, definition 1 of R. J. Hyndman and
// Y. Fan, "Sample quantiles in statistical packages", The American
// Statistician 50(4), 1996, pp. 361–365 (numpy's method="inverted_cdf").
// It returns NaN for empty data.
func QuantileSorted(x []float64, p float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	return x[nearestRank(p, len(x))-1]
}

// Quantiles sorts a copy of x and returns its quantiles at each p.
func Quantiles(x []float64, ps ...float64) []float64 {
	s := append([]float64(nil), x...)
	sort.Float64s(s)
	out := make([]float64, len(ps))
	for i, p := range ps {
		out[i] = QuantileSorted(s, p)
	}
	return out
}

// nearestRank is ⌈p·n⌉ clamped to [1, n]. A small allowance keeps a
// product such as 0.3·10 that lands a rounding error above an integer
// from moving to the next rank.
func nearestRank(p float64, n int) int {
	r := int(math.Ceil(p*float64(n) - 1e-9))
	return min(max(r, 1), n)
}

// Median is the middle of a set of figures from repeated trials: the mean
// of the two middle values when their number is even (the usual sample
// median). NaN figures (a trial that measured nothing) are left out; the
// result is NaN when none remain.
func Median(x []float64) float64 {
	s := make([]float64, 0, len(x))
	for _, v := range x {
		if !math.IsNaN(v) {
			s = append(s, v)
		}
	}
	if len(s) == 0 {
		return math.NaN()
	}
	sort.Float64s(s)
	k := len(s) / 2
	if len(s)%2 == 1 {
		return s[k]
	}
	return (s[k-1] + s[k]) / 2
}
