package estimate

import (
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"rigwire/profiles"
)

// Sweep parameters.
const (
	SweepLoss       = "loss"        // the extra loss q of estimate/model.md §8
	SweepDelayScale = "delay_scale" // a factor on every network delay
)

// SweepPoint is the prediction at one value of a swept parameter.
type SweepPoint struct {
	Value            float64
	MeanSquareStable bool // Stability == StabilityStable
	// Stability is the verdict at this value (StabilityStable,
	// StabilityMarginal, StabilityUnstable); ρ lies within
	// SpectralRadius ± RadiusError.
	Stability      string
	SpectralRadius float64
	RadiusError    float64
	// SecondMoment is the steady E[eᵀe]; NaN when not stable.
	SecondMoment float64
}

// SweepResult is a curve of E[eᵀe] against a parameter.
type SweepResult struct {
	Param  string
	Points []SweepPoint
	// Boundary is the first value, scanning upwards, at which stability is
	// lost, refined by bisection between the grid points that bracket it to
	// 1e-4 (absolute for loss, relative for delay_scale); NaN when the
	// stability does not change on the grid.
	Boundary float64
	// LostFromStart is set when the first grid point is already unstable.
	LostFromStart bool
}

// Sweep predicts the loop at each value of the parameter (SweepLoss or
// SweepDelayScale), the values spread over every core. For loss each
// worker builds one model and only its mode probabilities change (they
// are all the extra loss touches); a delay scale changes the delay laws,
// so each value is a new model.
func Sweep(loop *profiles.Loop, param string, values []float64) (*SweepResult, error) {
	res := &SweepResult{Param: param, Boundary: math.NaN(), Points: make([]SweepPoint, len(values))}
	// at returns the model at v: for loss one model per worker, whose
	// mode probabilities change (all the extra loss touches); a delay
	// scale changes the delay laws, so each value is a new model.
	newAt := func() func(float64) (*Model, error) {
		var base *Model
		return func(v float64) (*Model, error) {
			switch param {
			case SweepLoss:
				if !(v >= 0 && v <= 1) {
					return nil, fmt.Errorf("loss: want values in [0, 1], got %g", v)
				}
				if base == nil {
					var err error
					if base, err = Build(loop, Options{}); err != nil {
						return nil, err
					}
				}
				base.setLoss(v)
				return base, nil
			case SweepDelayScale:
				if !(v > 0) {
					return nil, fmt.Errorf("delay_scale: want values > 0, got %g", v)
				}
				return Build(loop, Options{DelayScale: v})
			}
			return nil, fmt.Errorf("unknown parameter %q: want %s or %s", param, SweepLoss, SweepDelayScale)
		}
	}
	// The values on every core, each worker with its own model.
	var next atomic.Int64
	var wg sync.WaitGroup
	errs := make([]error, len(values))
	for range min(runtime.NumCPU(), len(values)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			at := newAt()
			for {
				k := int(next.Add(1) - 1)
				if k >= len(values) {
					return
				}
				v := values[k]
				md, err := at(v)
				if err != nil {
					errs[k] = err
					continue
				}
				pt := SweepPoint{Value: v}
				var rad Radius
				rad, pt.Stability, pt.MeanSquareStable, pt.SecondMoment = md.radiusAndMoment()
				pt.SpectralRadius, pt.RadiusError = rad.Value, rad.Error
				res.Points[k] = pt
			}
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	at := newAt()
	for i, pt := range res.Points {
		if pt.MeanSquareStable {
			continue
		}
		if i == 0 {
			res.LostFromStart = true
			break
		}
		lo, hi := res.Points[i-1].Value, pt.Value
		tol := 1e-4
		if param == SweepDelayScale {
			tol *= hi
		}
		for hi-lo > tol {
			mid := (lo + hi) / 2
			md, err := at(mid)
			if err != nil {
				return nil, err
			}
			if md.MeanSquareStable() {
				lo = mid
			} else {
				hi = mid
			}
		}
		res.Boundary = hi
		break
	}
	return res, nil
}

// SetExtraLoss changes the model's extra loss q (estimate/model.md §8) in place;
// the modes are kept, only their probabilities change.
func (md *Model) SetExtraLoss(q float64) error {
	if !(q >= 0 && q <= 1) {
		return fmt.Errorf("extra loss: want a probability in [0, 1], got %g", q)
	}
	md.setLoss(q)
	return nil
}
