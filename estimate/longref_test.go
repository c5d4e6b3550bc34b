package estimate

import (
	"bufio"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"

	"rigwire/profiles/laws"
)

// TestConstantWholePeriodDelay: an integrator under a static gain K whose
// every command takes exactly d periods is the loop x_{k+1} = x_k − K
// x_{k−d}, stable exactly while the roots of z^{d+1} − z^d + K lie inside
// the unit circle (classical). Its second-moment operator's radius is the
// square of the largest root modulus. Reference values: SciPy
// (estimate/testdata/reference/delay_boundary.py → delay_boundary.out) and
// GNU Octave (delay_boundary.m → delay_boundary_octave.out), which agree
// with each other and with the closed form K*(d) = 2 sin(π/(2(2d+1))) (from
// memory) to 1e-14. The long-delay chain must give ρ to 1e-9 at 0.5, 0.9
// and 1.1 K*, the verdicts stable, stable, unstable, and lose stability at
// K* to 1e-6.
func TestConstantWholePeriodDelay(t *testing.T) {
	const h = 0.01
	for _, file := range []string{"delay_boundary.out", "delay_boundary_octave.out"} {
		rows := readReferenceRows(t, "testdata/reference/"+file)
		if len(rows) != 5 {
			t.Fatalf("%s: %d rows, want 5", file, len(rows))
		}
		for _, row := range rows {
			d := int(row[0])
			kstar := row[1]
			if closed := 2 * math.Sin(math.Pi/float64(2*(2*d+1))); math.Abs(closed-kstar) > 1e-12 {
				t.Errorf("%s: d = %d: K* %.15g, closed form %.15g", file, d, kstar, closed)
			}
			loopAt := func(K float64) *Model {
				l := scalarIntegrator(K, 0, 0, 0, d+2, profile(nil, iidChannel(0, must(laws.NewConstant(float64(d)*h)))))
				md, err := Build(l, Options{})
				if err != nil {
					t.Fatal(err)
				}
				return md
			}
			for i, f := range []float64{0.5, 0.9, 1.1} {
				want := row[2+i]
				r := loopAt(f * kstar).Radius()
				if math.Abs(r.Value-want*want) > 1e-9 {
					t.Errorf("%s: d = %d, K = %g K*: ρ %.12g, largest root squared %.12g", file, d, f, r.Value, want*want)
				}
				if wantStable := f < 1; (r.Stability == StabilityStable) != wantStable {
					t.Errorf("%s: d = %d, K = %g K*: %s", file, d, f, r.Stability)
				}
			}
			if file != "delay_boundary.out" {
				continue
			}
			lo, hi := 0.9*kstar, 1.1*kstar
			for hi-lo > 1e-7 {
				mid := (lo + hi) / 2
				if loopAt(mid).MeanSquareStable() {
					lo = mid
				} else {
					hi = mid
				}
			}
			if math.Abs(hi-kstar) > 1e-6 {
				t.Errorf("d = %d: stability lost at K = %.9g, want K* = %.9g", d, hi, kstar)
			}
		}
	}
}

// readReferenceRows reads the numbers of a reference file's lines, "#"
// lines skipped.
func readReferenceRows(t *testing.T, path string) [][]float64 {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	var rows [][]float64
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		var row []float64
		for _, w := range strings.Fields(line) {
			v, err := strconv.ParseFloat(w, 64)
			if err != nil {
				t.Fatalf("%s: %q: %v", path, line, err)
			}
			row = append(row, v)
		}
		rows = append(rows, row)
	}
	return rows
}
