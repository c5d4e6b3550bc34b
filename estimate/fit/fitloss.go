package fit

import (
	"fmt"
	"math"
)

// LossFit compares two models of a sequence of probe fates (lost or not,
// in sending order): i.i.d. loss, and the simplified Gilbert channel — a
// two-state Markov chain on the loss indicator itself, a good state that
// delivers and a bad state that loses (E. N. Gilbert, "Capacity of a
// burst-noise channel", Bell Syst. Tech. J. 39, 1960, with the bad state's
// loss 1 and the good state's 0: the two-parameter model usually called
// simplified Gilbert).
type LossFit struct {
	N, Lost int
	// Loss is the i.i.d. estimate Lost/N, LossSE its standard error
	// √(q(1−q)/N), LogLikIID the log-likelihood.
	Loss, LossSE, LogLikIID float64
	// P = P(loss | previous delivered) = n₀₁/n₀·, R = P(delivered |
	// previous lost) = n₁₀/n₁·, the maximum-likelihood estimates from the
	// transition counts (equivalently from the gap and loss-run lengths:
	// R = 1/mean loss run, P = 1/mean gap, up to the edges of the trace),
	// with their binomial standard errors √(P(1−P)/n₀·), √(R(1−R)/n₁·);
	// LogLikBurst is Σ n_ij ln P_ij, conditional on the first fate.
	P, R, PSE, RSE, LogLikBurst float64
	// LR is the likelihood-ratio statistic 2(LogLikBurst − LogLikIID'),
	// where LogLikIID' is the i.i.d. log-likelihood of the same N−1
	// conditional fates; LRP its p-value against χ² with 1 degree of
	// freedom (Wilks 1938). AICIID and AICBurst are 2K − 2 ln L with K = 1
	// and 2, on those same N−1 fates.
	LR, LRP           float64
	AICIID, AICBurst  float64
	Burst             bool    // the burst channel has the smaller AIC
	MeanBurst         float64 // mean loss-run length in probes: 1 for i.i.d. … 1/R for the burst channel
	LongRunLoss       float64 // P/(P+R) for the burst channel, Loss for i.i.d.
	Runs, Transitions int     // loss runs seen; n₀₁ + n₁₀
}

// Loss fits both models to lost (true: the probe was lost), in sending
// order. It needs at least two fates.
func Loss(lost []bool) (LossFit, error) {
	n := len(lost)
	if n < 2 {
		return LossFit{}, fmt.Errorf("fitting losses: %w: want at least 2 probes, got %d", ErrFewSamples, n)
	}
	var f LossFit
	f.N = n
	var c [2][2]float64 // c[i][j]: transitions from i to j (1 = lost)
	for i, l := range lost {
		if l {
			f.Lost++
			if i == 0 || !lost[i-1] {
				f.Runs++
			}
		}
		if i > 0 {
			c[b2i(lost[i-1])][b2i(l)]++
		}
	}
	f.Loss = float64(f.Lost) / float64(n)
	f.LossSE = math.Sqrt(f.Loss * (1 - f.Loss) / float64(n))
	f.LogLikIID = xlogy(float64(f.Lost), f.Loss) + xlogy(float64(n-f.Lost), 1-f.Loss)
	n0, n1 := c[0][0]+c[0][1], c[1][0]+c[1][1]
	f.Transitions = int(c[0][1] + c[1][0])
	if n0 > 0 {
		f.P = c[0][1] / n0
		f.PSE = math.Sqrt(f.P * (1 - f.P) / n0)
	}
	if n1 > 0 {
		f.R = c[1][0] / n1
		f.RSE = math.Sqrt(f.R * (1 - f.R) / n1)
	} else {
		f.R, f.RSE = 1, math.NaN()
	}
	f.LogLikBurst = xlogy(c[0][0], 1-f.P) + xlogy(c[0][1], f.P) + xlogy(c[1][0], f.R) + xlogy(c[1][1], 1-f.R)
	// the i.i.d. model on the same n−1 conditional fates
	m := n0 + n1
	q := (c[0][1] + c[1][1]) / m
	llIID := xlogy(c[0][1]+c[1][1], q) + xlogy(c[0][0]+c[1][0], 1-q)
	f.LR = math.Max(0, 2*(f.LogLikBurst-llIID))
	f.LRP = math.Erfc(math.Sqrt(f.LR / 2)) // χ²₁ survival function
	f.AICIID = 2 - 2*llIID
	f.AICBurst = 4 - 2*f.LogLikBurst
	f.Burst = f.Lost > 0 && f.Lost < n && f.AICBurst < f.AICIID && f.P+f.R < 1
	if f.Burst {
		f.MeanBurst = 1 / f.R
		f.LongRunLoss = f.P / (f.P + f.R)
	} else {
		f.MeanBurst = 1 / (1 - f.Loss)
		f.LongRunLoss = f.Loss
	}
	return f, nil
}

// Dwell returns the mean dwell times (seconds) of the good and the bad
// state of a continuous-time two-state chain whose transition matrix over
// one probe interval h is exactly the fitted one: with leaving rates a
// (good) and b (bad), P(h) = I + (1 − e^{−(a+b)h})/(a+b) · Q
// (the two-state case of P = e^{Qh}, e.g. J. R. Norris, Markov Chains,
// 1997, §2.1, from memory), so P = a(1 − e^{−(a+b)h})/(a+b), R likewise
// with b, giving a + b = −ln(1 − P − R)/h and a : b = P : R. It needs
// 0 < P, 0 < R and P + R < 1 (positively correlated losses).
func (f LossFit) Dwell(h float64) (good, bad float64, err error) {
	if !(f.P > 0) || !(f.R > 0) || !(f.P+f.R < 1) || !(h > 0) {
		return 0, 0, fmt.Errorf("loss fit: no two-state chain with p = %g, r = %g (want p, r > 0 and p + r < 1)", f.P, f.R)
	}
	sum := -math.Log1p(-(f.P + f.R)) / h
	a := sum * f.P / (f.P + f.R)
	b := sum * f.R / (f.P + f.R)
	return 1 / a, 1 / b, nil
}

// GilbertStep is the inverse of Dwell: the per-interval P and R of a
// two-state chain with mean dwells good and bad (seconds), sampled every
// h seconds.
func GilbertStep(good, bad, h float64) (p, r float64) {
	a, b := 1/good, 1/bad
	e := -math.Expm1(-(a + b) * h)
	return a / (a + b) * e, b / (a + b) * e
}

func b2i(b bool) int {
	if b {
		return 1
	}
	return 0
}

// xlogy is x ln y with 0 ln 0 = 0.
func xlogy(x, y float64) float64 {
	if x == 0 {
		return 0
	}
	return x * math.Log(y)
}
