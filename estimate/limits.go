package estimate

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// MaxOperatorSide (estimate/model.md §11) is the largest second-moment operator the prediction
// builds: N·nz(nz+1)/2, for nz loop states (plant states, held inputs and
// controller states) and N joint network states (the product of the two
// directions' state counts). The operator is a dense square matrix of
// that side; its factorisations take O(side³) time and a few times side²
// numbers of memory, so the limit keeps a prediction within seconds and
// about a hundred megabytes. Larger loops are refused before anything is
// allocated (checkSize), with the sizes named.
//
// Examples within the limit: a 40-state plant with one input and no
// controller state under i.i.d. channels (nz = 41, side 861); a 3-state
// loop under two 12-state channels (144 joint states, side 864).
const MaxOperatorSide = 1500

// checkSize refuses a loop whose second-moment operator would exceed
// MaxOperatorSide.
func checkSize(loop *profiles.Loop) error {
	n, m, _, nc := loop.Dims()
	nz := n + m + nc
	nsc := len(loop.Profile.SensorToController.States)
	nca := len(loop.Profile.ControllerToActuator.States)
	N := nsc * nca
	side := float64(N) * float64(nz) * float64(nz+1) / 2
	if side > MaxOperatorSide {
		return fmt.Errorf("loop too large to predict: %d loop states (plant %d, inputs %d, controller %d) × %d joint network states (%d × %d) "+
			"make a second-moment operator of side N·nz(nz+1)/2 = %.0f, above the limit of %d",
			nz, n, m, nc, N, nsc, nca, side, MaxOperatorSide)
	}
	return nil
}

// checkFinite refuses a sampled plant that overflowed: e^{Ah} beyond the
// largest float64 means the plant's fastest mode grows by more than
// e^709 over one period.
func (s *Sampled) checkFinite() error {
	if allFinite(s.Phi) && allFinite(s.Gamma) && allFinite(s.Wd) {
		return nil
	}
	return fmt.Errorf("plant: sampling over one %s period overflows: e^{A·h} or its integrals exceed %.3g "+
		"(a mode of A grows by more than e^709 per period); shorten the period or check plant.a",
		laws.FormatSeconds(s.H), math.MaxFloat64)
}

// checkFinite refuses a mode whose matrices overflowed (controller gains
// or plant entries too large for float64).
func (mo mode) checkFinite() error {
	if allFinite(mo.F) && allFinite(mo.G) && allFinite(mo.HXH) {
		return nil
	}
	return fmt.Errorf("the closed loop's matrices overflow (entries beyond %.3g): the controller gains or the plant are too large",
		math.MaxFloat64)
}

// allFinite reports whether every entry of a is finite.
func allFinite(a mat.Matrix) bool {
	r, c := a.Dims()
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if v := a.At(i, j); math.IsNaN(v) || math.IsInf(v, 0) {
				return false
			}
		}
	}
	return true
}
