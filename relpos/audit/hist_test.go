package audit

import (
	"testing"
)

func TestHistQuantile(t *testing.T) {
	h := newHist(0, 10)
	for _, v := range []int64{1, 2, 2, 3, 9, -4, 15} {
		h.Add(v)
	}
	// The inverse of the empirical distribution function (R type 1, common practice).
	tests := []struct {
		q      float64
		want   int64
		wantOK bool
	}{
		{0, -4, false}, {0.1, -4, false}, {0.2, 1, true}, {0.5, 2, true}, {0.6, 3, true}, {0.8, 9, true}, {0.9, 15, false}, {1, 15, false},
	}
	for _, tc := range tests {
		got, ok := h.Quantile(tc.q)
		if got != tc.want || ok != tc.wantOK {
			t.Errorf("Quantile(%v) = %d, %v; want %d, %v", tc.q, got, ok, tc.want, tc.wantOK)
		}
	}
	if h.N != 7 || h.Under != 1 || h.Over != 1 || h.Min != -4 || h.Max != 15 || h.Sum != 28 {
		t.Errorf("bookkeeping: %+v", *h)
	}
}

func TestBins(t *testing.T) {
	h := newHist(-127, 127)
	for _, v := range []int64{-100, -25, -24, 0, 24, 25, 127} {
		h.Add(v)
	}
	got := pitchBins.Count(h)
	if len(got) != 51 {
		t.Fatalf("%d pitch bins, want 51", len(got))
	}
	want := make([]int64, 51)
	want[0] = 2  // -100, -25
	want[1] = 1  // -24
	want[25] = 1 // 0
	want[49] = 1 // 24
	want[50] = 2 // 25, 127
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("pitch bins = %v, want %v", got, want)
		}
	}
	if e := timeBins.Edges; e[0] != 0 || e[1] != 8 || e[3] != 16 || e[len(e)-1] != 65536 {
		t.Errorf("time bin edges %v", e)
	}
}
