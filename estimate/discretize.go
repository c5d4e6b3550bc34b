package estimate

import (
	"gonum.org/v1/gonum/mat"

	"rigwire/profiles"
)

// Sampled is the zero-order-hold sampling of dx = (A x + B u) dt + dw,
// E[dw dwᵀ] = W dt, over one period h (estimate/model.md §3):
//
//	Φ = e^{Ah},  Γ = ∫₀ʰ e^{As} ds B,  W_d = ∫₀ʰ e^{As} W e^{Aᵀs} ds.
type Sampled struct {
	H     float64
	A, B  *mat.Dense
	Phi   *mat.Dense // n×n
	Gamma *mat.Dense // n×m
	Wd    *mat.Dense // n×n, symmetric
}

// Discretize samples the plant with period h by Van Loan's method
// (C. F. Van Loan, "Computing integrals involving the matrix exponential",
// IEEE TAC 23(3), 1978, §2–§4), with gonum's matrix exponential:
//
//	exp([[A, B], [0, 0]] h) = [[Φ, Γ], [0, I]]
//	exp([[−A, W], [0, Aᵀ]] h) = [[·, G], [0, Φᵀ]],   W_d = Φ G
//
// (the second is Van Loan's Theorem 1 with the block triangular matrix
// built from −A and Aᵀ). W_d is symmetrised to remove rounding asymmetry.
// A nil W means no process noise.
func Discretize(a, b, w *mat.Dense, h float64) *Sampled {
	n, _ := b.Dims()
	phi, gamma := zohPair(a, b, h)
	wd := mat.NewDense(n, n, nil)
	if w != nil && !isZero(w) {
		wd = profiles.SampledNoise(a, w, h)
		symmetrize(wd)
	}
	return &Sampled{H: h, A: a, B: b, Phi: phi, Gamma: gamma, Wd: wd}
}

// zohPair returns e^{At} and ∫₀ᵗ e^{As} ds B from one exponential of the
// block matrix [[A, B], [0, 0]] t (Van Loan 1978, §2; Åström–Wittenmark,
// Computer-Controlled Systems, 3rd ed., §2.3). t = 0 gives (I, 0).
func zohPair(a, b *mat.Dense, t float64) (phi, gamma *mat.Dense) { return profiles.SampleHeld(a, b, t) }

// Split returns the two parts of Γ for an input that changes at τ into the
// period (0 ≤ τ ≤ h): the new input acts over the last h − τ, the old one
// over the first τ (Åström–Wittenmark, Computer-Controlled Systems, 3rd
// ed., §2.3, sampling with a fractional input delay; estimate/model.md §3):
//
//	Γ0(τ) = ∫₀^{h−τ} e^{As} ds B,   Γ1(τ) = e^{A(h−τ)} ∫₀^τ e^{As} ds B = Γ − Γ0(τ).
//
// Γ0 comes from one exponential over h − τ; Γ1 from Γ0 + Γ1 = Γ (the
// integral over [0, h] split at h − τ).
func (s *Sampled) Split(tau float64) (g0, g1 *mat.Dense) {
	_, g0 = zohPair(s.A, s.B, s.H-tau)
	g1 = mat.NewDense(g0.RawMatrix().Rows, g0.RawMatrix().Cols, nil)
	g1.Sub(s.Gamma, g0)
	return g0, g1
}

func isZero(a mat.Matrix) bool {
	r, c := a.Dims()
	for i := 0; i < r; i++ {
		for j := 0; j < c; j++ {
			if a.At(i, j) != 0 {
				return false
			}
		}
	}
	return true
}

func symmetrize(a *mat.Dense) {
	n, _ := a.Dims()
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			v := (a.At(i, j) + a.At(j, i)) / 2
			a.Set(i, j, v)
			a.Set(j, i, v)
		}
	}
}
