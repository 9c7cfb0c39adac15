package audit

import (
	"math"
	"testing"
)

func TestJensenShannon(t *testing.T) {
	tests := []struct {
		name string
		p, q []int64
		want float64
	}{
		// Disjoint supports reach the upper bound ln 2 (in nats) of the divergence
		// (Lin 1991, "Divergence measures based on the Shannon entropy"; common practice).
		{name: "disjoint", p: []int64{5, 0, 0}, q: []int64{0, 3, 4}, want: math.Ln2},
		// Identical distributions: 0, whatever the scale of the counts (common practice).
		{name: "identical", p: []int64{1, 2, 3}, q: []int64{10, 20, 30}, want: 0},
		// Worked from the definition: p = (1/2, 1/2), q = (1, 0), m = (3/4, 1/4);
		// KL(p‖m) = ½ ln(4/3), KL(q‖m) = ln(4/3), JSD = ½(½ + 1) ln(4/3) = ¾ ln(4/3).
		{name: "half and point", p: []int64{1, 1}, q: []int64{7, 0}, want: 0.75 * math.Log(4.0/3.0)},
		{name: "empty side", p: []int64{0, 0}, q: []int64{1, 1}, want: math.NaN()},
		{name: "length mismatch", p: []int64{1}, q: []int64{1, 1}, want: math.NaN()},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := JensenShannon(tc.p, tc.q)
			if !near(got, tc.want, 1e-12) {
				t.Errorf("JensenShannon(%v, %v) = %v, want %v", tc.p, tc.q, got, tc.want)
			}
			if back := JensenShannon(tc.q, tc.p); !near(back, got, 1e-12) {
				t.Errorf("not symmetric: %v vs %v", got, back)
			}
		})
	}
}

func TestWasserstein(t *testing.T) {
	tests := []struct {
		name           string
		xs, xw, ys, yw []float64
		want           float64
	}{
		// Between point masses the distance is the distance of the points (common practice).
		{name: "point masses", xs: []float64{2}, xw: []float64{1}, ys: []float64{9.5}, yw: []float64{3}, want: 7.5},
		// Half the mass moves by 1 (common practice: W1 = ∫|F − G|).
		{name: "split", xs: []float64{0, 1}, xw: []float64{1, 1}, ys: []float64{0}, yw: []float64{1}, want: 0.5},
		// The examples of scipy.stats.wasserstein_distance's documentation.
		{name: "scipy 1", xs: []float64{0, 1, 3}, xw: []float64{1, 1, 1}, ys: []float64{5, 6, 8}, yw: []float64{1, 1, 1}, want: 5},
		{name: "scipy 2", xs: []float64{0, 1}, xw: []float64{3, 1}, ys: []float64{0, 1}, yw: []float64{2, 2}, want: 0.25},
		{name: "scipy 3", xs: []float64{3.4, 3.9, 7.5, 7.8}, xw: []float64{1.4, 0.9, 3.1, 7.2},
			ys: []float64{4.5, 1.4}, yw: []float64{3.2, 3.5}, want: 4.0781331438047861},
		{name: "empty", xs: nil, xw: nil, ys: []float64{1}, yw: []float64{1}, want: math.NaN()},
		{name: "zero weight", xs: []float64{1}, xw: []float64{0}, ys: []float64{1}, yw: []float64{1}, want: math.NaN()},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			xw := append([]float64(nil), tc.xw...)
			got := Wasserstein(tc.xs, tc.xw, tc.ys, tc.yw)
			if !near(got, tc.want, 1e-9) {
				t.Errorf("Wasserstein = %v, want %v", got, tc.want)
			}
			for i := range xw {
				if xw[i] != tc.xw[i] {
					t.Fatalf("weights modified: %v, were %v", tc.xw, xw)
				}
			}
		})
	}
}

func TestHistWasserstein(t *testing.T) {
	// Shifting a distribution by k moves every unit of mass by k: W1 = k (common practice).
	a, b := newHist(0, 1000), newHist(0, 1000)
	for v, n := range map[int64]int64{10: 3, 40: 1, 41: 7, 300: 2} {
		a.AddN(v, n)
		b.AddN(v+25, n)
	}
	got, res := histWasserstein(a, b)
	if res != 1 || !near(got, 25, 1e-9) {
		t.Errorf("histWasserstein = %v at resolution %d, want 25 at 1", got, res)
	}
	// Many distinct values are merged; the shift is still recovered to within the
	// merged width.
	c, d := newHist(0, 60000), newHist(0, 60000)
	for v := int64(0); v < 20000; v += 3 {
		c.Add(v)
		d.Add(v + 100)
	}
	got, res = histWasserstein(c, d)
	if res <= 1 || math.Abs(got-100) > float64(res) {
		t.Errorf("merged histWasserstein = %v at resolution %d, want 100 ± resolution", got, res)
	}
}

func near(a, b, tol float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Abs(a-b) <= tol
}
