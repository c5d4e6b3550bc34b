package loadkit

import (
	"math"
	"testing"
)

// Reference values from numpy 1.24 (Debian python3-numpy), nearest rank
// being numpy's method="inverted_cdf":
//
//	python3 -c "import numpy as np; x=[15,20,35,40,50]; \
//	  print([float(np.percentile(x,p,method='inverted_cdf')) for p in (5,30,40,50,100)])"
//	[15.0, 20.0, 20.0, 35.0, 50.0]
//	python3 -c "import numpy as np; y=[3,6,7,8,8,10,13,15,16,20]; \
//	  print([float(np.percentile(y,p,method='inverted_cdf')) for p in (25,50,75,100)])"
//	[7.0, 8.0, 15.0, 20.0]
//	python3 -c "import numpy as np; print(np.median([3,6,7,8,8,10,13,15,16,20]), np.median([3,1,2]))"
//	9.0 2.0
func TestQuantileSorted(t *testing.T) {
	cases := []struct {
		name string
		x    []float64
		p    []float64
		want []float64
	}{
		{"five", []float64{15, 20, 35, 40, 50}, []float64{0.05, 0.30, 0.40, 0.50, 1}, []float64{15, 20, 20, 35, 50}},
		{"ten with a tie", []float64{3, 6, 7, 8, 8, 10, 13, 15, 16, 20}, []float64{0.25, 0.5, 0.75, 1}, []float64{7, 8, 15, 20}},
		{"one", []float64{4}, []float64{0.01, 0.5, 1}, []float64{4, 4, 4}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			for i, p := range c.p {
				if got := QuantileSorted(c.x, p); got != c.want[i] {
					t.Errorf("p=%g: got %g, want %g", p, got, c.want[i])
				}
			}
			got := Quantiles(c.x, c.p...)
			for i := range got {
				if got[i] != c.want[i] {
					t.Errorf("Quantiles p=%g: got %g, want %g", c.p[i], got[i], c.want[i])
				}
			}
		})
	}
	if !math.IsNaN(QuantileSorted(nil, 0.5)) {
		t.Error("empty data: want NaN")
	}
}

func TestMedian(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		name string
		x    []float64
		want float64
	}{
		{"even (numpy 9.0)", []float64{20, 3, 6, 7, 8, 8, 10, 13, 15, 16}, 9},
		{"odd (numpy 2.0)", []float64{3, 1, 2}, 2},
		{"NaN left out", []float64{nan, 5, nan}, 5},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if got := Median(c.x); got != c.want {
				t.Errorf("got %g, want %g", got, c.want)
			}
		})
	}
	if !math.IsNaN(Median([]float64{nan})) {
		t.Error("all NaN: want NaN")
	}
}
