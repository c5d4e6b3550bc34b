package laws

import "math"

// KSStatistic returns the one-sample Kolmogorov–Smirnov statistic
// D = sup_x |F_n(x) − F(x)| of the sample sorted (increasing) against the
// CDF cdf. With x₁ ≤ … ≤ x_n,
//
//	D = max_i max( i/n − F(x_i), F(x_i−) − (i−1)/n ),
//
// (A. N. Kolmogorov, "Sulla determinazione empirica di una legge di
// distribuzione", Giorn. Ist. Ital. Attuari 4, 1933; the max over order
// statistics as in F. J. Massey, "The Kolmogorov-Smirnov test for goodness
// of fit", JASA 46(253), 1951). F(x−), the left limit, is taken as F at
// the next float below x, so that a law with atoms gets its exact
// supremum, tied samples included; for a continuous F it equals F(x).
// It returns NaN for an empty sample.
func KSStatistic(sorted []float64, cdf func(float64) float64) float64 {
	n := len(sorted)
	if n == 0 {
		return math.NaN()
	}
	fn := float64(n)
	d := 0.0
	for i, x := range sorted {
		f := cdf(x)
		fl := cdf(math.Nextafter(x, math.Inf(-1)))
		d = math.Max(d, math.Max(float64(i+1)/fn-f, fl-float64(i)/fn))
	}
	return d
}

// KSPValue returns the approximate p-value P(D_n ≥ d) of the one-sample
// Kolmogorov–Smirnov statistic for a sample of size n from a continuous
// law, from Stephens' modified statistic
//
//	t = d (√n + 0.12 + 0.11/√n),   p = Q_K(t)
//
// (M. A. Stephens, "Use of the Kolmogorov–Smirnov, Cramér–von Mises and
// related statistics without extensive tables", JRSS B 32(1), 1970,
// 115–122, Table 1A), Q_K being the survival function of Kolmogorov's
// limiting distribution ([KolmogorovSurvival]). The approximation is good
// in the upper tail, where tests are decided, from n ≈ 5 on. For a law
// with atoms the test is conservative (the p-value is too large).
func KSPValue(d float64, n int) float64 {
	if n <= 0 || math.IsNaN(d) {
		return math.NaN()
	}
	if d <= 0 {
		return 1
	}
	if d >= 1 {
		return 0
	}
	sn := math.Sqrt(float64(n))
	return KolmogorovSurvival(d * (sn + 0.12 + 0.11/sn))
}

// KolmogorovSurvival returns Q_K(t) = P(K > t) for Kolmogorov's limiting
// distribution K = sup |B(s)| of the Brownian bridge:
//
//	Q_K(t) = 2 Σ_{k≥1} (−1)^{k−1} e^{−2k²t²}                    (t ≥ 1)
//	1 − Q_K(t) = (√(2π)/t) Σ_{k≥1} e^{−(2k−1)²π²/(8t²)}          (t < 1)
//
// (Kolmogorov 1933; the second form by the Jacobi theta transformation, as
// in W. H. Press et al., Numerical Recipes, 3rd ed., 2007, §6.14, eqs.
// 6.14.56–57 — equation numbers from memory). Each series is summed until
// its terms stop mattering; both converge fast on their side of t = 1.
func KolmogorovSurvival(t float64) float64 {
	switch {
	case math.IsNaN(t):
		return math.NaN()
	case t <= 0:
		return 1
	case t < 1:
		// For very small t the sum underflows: P(K ≤ t) → 0.
		s := 0.0
		c := math.Pi * math.Pi / (8 * t * t)
		for k := 1; k <= 50; k++ {
			m := float64(2*k - 1)
			term := math.Exp(-m * m * c)
			s += term
			if term < 1e-17*s {
				break
			}
		}
		return 1 - math.Sqrt(2*math.Pi)/t*s
	}
	s := 0.0
	sign := 1.0
	for k := 1; k <= 100; k++ {
		fk := float64(k)
		term := math.Exp(-2 * fk * fk * t * t)
		s += sign * term
		if term < 1e-17*math.Abs(s) || term == 0 {
			break
		}
		sign = -sign
	}
	return math.Max(0, math.Min(1, 2*s))
}
