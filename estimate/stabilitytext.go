// The words of the prediction's mean-square stability verdict
// for the commands: the verdict itself, and the spectral radius ρ of the
// second-moment operator with its error, printed with as many digits as
// the error makes meaningful and never on the wrong side of 1 (no
// "1 < 1" or "0.999 ≥ 1").

package estimate

import (
	"math"
	"strconv"
)

// VerdictOf is the prediction's verdict: StabilityStable,
// StabilityMarginal or StabilityUnstable. A prediction without one (an
// older computation) is stable when MeanSquareStable, else unstable.
func VerdictOf(pr *Prediction) string {
	switch pr.Stability {
	case StabilityStable, StabilityMarginal, StabilityUnstable:
		return pr.Stability
	}
	if pr.MeanSquareStable {
		return StabilityStable
	}
	return StabilityUnstable
}

// shownDigits is how many significant digits ρ gets when its error
// allows more: enough to compare loops, few enough to read.
const shownDigits = 5

// RadiusText writes ρ and its error as "0.99899 ± 2e-09". The digits of ρ
// stop at the decade of its error (digits below it are noise), and at
// shownDigits significant digits unless more are needed to show on which
// side of 1 ρ lies (a stable ρ of 0.9999999 is not printed as 1). A
// marginal ρ gets every digit its error allows. An error that is zero or
// not finite is left out.
func RadiusText(rho, rhoErr float64, verdict string) string {
	if math.IsNaN(rho) || math.IsInf(rho, 0) {
		return strconv.FormatFloat(rho, 'g', -1, 64)
	}
	haveErr := rhoErr > 0 && !math.IsInf(rhoErr, 0)
	maxDigits := 17
	if haveErr && rho != 0 {
		maxDigits = int(math.Floor(math.Log10(math.Abs(rho)))) - int(math.Floor(math.Log10(rhoErr))) + 1
		maxDigits = min(max(maxDigits, 1), 17)
	}
	digits := min(shownDigits, maxDigits)
	if verdict == StabilityMarginal {
		digits = maxDigits
	}
	s := strconv.FormatFloat(rho, 'g', digits, 64)
	for digits < maxDigits && !sameSide(s, rho) {
		digits++
		s = strconv.FormatFloat(rho, 'g', digits, 64)
	}
	if haveErr {
		s += " ± " + strconv.FormatFloat(rhoErr, 'g', 1, 64)
	}
	return s
}

// RhoText writes ρ with at least digits significant digits, and more when
// needed to show on which side of 1 it lies (for tables and CSV, where no
// error is printed beside it).
func RhoText(rho float64, digits int) string {
	s := strconv.FormatFloat(rho, 'g', digits, 64)
	for digits < 17 && !sameSide(s, rho) {
		digits++
		s = strconv.FormatFloat(rho, 'g', digits, 64)
	}
	return s
}

// sameSide tells whether the printed value s compares with 1 as rho does.
func sameSide(s string, rho float64) bool {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		return false
	}
	sign := func(x float64) int {
		switch {
		case x < 1:
			return -1
		case x > 1:
			return 1
		}
		return 0
	}
	return sign(v) == sign(rho)
}

// DescribeStability is the verdict in words with ρ:
//
//	mean-square stable (spectral radius 0.99899 ± 2e-09, below 1)
//	NOT mean-square stable (spectral radius 1.0213 ± 1e-09, at or above 1)
//	MARGINAL: the spectral radius 1 ± 1e-06 cannot be told apart from 1 at the
//	accuracy of the computation; treated as not stable (no steady moments)
//
// A Monte Carlo prediction (estimate/model.md §13) has no spectral radius:
// its verdict says that it was judged by simulation and is not certified.
func DescribeStability(pr *Prediction) string {
	v := VerdictOf(pr)
	if pr.Timing != nil && pr.Timing.Method == MethodMonteCarlo {
		switch v {
		case StabilityStable:
			return "mean-square stable by simulation (not certified: " + pr.Timing.Reason + ")"
		case StabilityMarginal:
			return "UNDECIDED by simulation: the second moment did not settle within the runs (not certified: " + pr.Timing.Reason + "); treated as not stable"
		}
		return "NOT mean-square stable by simulation: the second moment grows (" + pr.Timing.Reason + ")"
	}
	r := RadiusText(pr.SpectralRadius, pr.RadiusError, v)
	switch v {
	case StabilityStable:
		return "mean-square stable (spectral radius " + r + ", below 1)"
	case StabilityMarginal:
		return "MARGINAL: the spectral radius " + r + " cannot be told apart from 1 at the accuracy of the computation; treated as not stable (no steady moments)"
	}
	return "NOT mean-square stable (spectral radius " + r + ", at or above 1)"
}
