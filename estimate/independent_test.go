package estimate

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"rigwire/profiles"
	"rigwire/profiles/laws"
)

// TestAgainstIndependentOctave compares the prediction with an
// independent implementation of estimate/model.md §3–§4 in GNU Octave
// (estimate/testdata/reference/jump_moments.m; command in its header): vec/kron
// operators, c2d for Γ0(τ), Octave's adaptive integral of the trapezoid
// density of the sum of two uniform delays, the Gilbert–Elliott chain by
// Octave's expm. The bar is 1e-6 relative on smooth cases.
func TestAgainstIndependentOctave(t *testing.T) {
	const indepTol = 1e-6
	want := map[string]float64{}
	f, err := os.Open("testdata/reference/jump_moments.out")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		fs := strings.Fields(sc.Text())
		if len(fs) == 4 {
			want[fs[0]], _ = strconv.ParseFloat(fs[3], 64)
		}
	}
	un1 := must(laws.NewUniform(1*ms, 3*ms))
	un2 := must(laws.NewUniform(0.5*ms, 4*ms))
	trap := servo(profile(iidChannel(0.08, un1), iidChannel(0.05, un2)), 0.5*ms)
	trap.Period = 6 * ms
	markov := servo(profile(iidChannel(0.02, laws.Constant{Value: 1 * ms}),
		twoState(0.5, 0.01, laws.Constant{Value: 1 * ms}, 0.1, 0.6, laws.Constant{Value: 6 * ms})), 0.5*ms)
	for name, l := range map[string]*profiles.Loop{"iid_trapezoid": trap, "markov_atoms": markov} {
		t.Run(name, func(t *testing.T) {
			pr, err := Predict(l, PredictOptions{SkipMargin: true})
			if err != nil {
				t.Fatal(err)
			}
			if !pr.MeanSquareStable {
				t.Fatal("not stable")
			}
			for _, c := range []struct {
				key string
				got float64
			}{
				{"error_second_moment", pr.Error.SecondMoment},
				{"rho", pr.SpectralRadius},
			} {
				w, ok := want[name+"."+c.key]
				if !ok {
					t.Fatalf("%s.%s not in jump_moments.out", name, c.key)
				}
				if rel := math.Abs(c.got-w) / math.Abs(w); rel > indepTol {
					t.Errorf("%s: Go %.15g, Octave %.15g, relative %.2g", c.key, c.got, w, rel)
				} else {
					t.Logf("%s: Go %.15g, Octave %.15g, relative %.2g", c.key, c.got, w, rel)
				}
			}
		})
	}
}
