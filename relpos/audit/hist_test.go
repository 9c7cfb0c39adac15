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

func TestWideHistLayout(t *testing.T) {
	h := newWideHist(0, 3_600_000, 4096)
	// Counters tile the values without gap or overlap, and above the exact range each
	// is at most 1/64 of its smallest value wide.
	prev := int64(-1)
	for i := range int64(len(h.Counts)) {
		lo, hi := h.lower(i), h.upper(i)
		if lo != prev+1 || hi < lo {
			t.Fatalf("counter %d holds [%d, %d] after %d", i, lo, hi, prev)
		}
		if w := hi - lo + 1; (i < 4096 && w != 1) || (i >= 4096 && w*64 > lo) {
			t.Fatalf("counter %d [%d, %d] too wide", i, lo, hi)
		}
		for _, v := range []int64{lo, hi, lo + (hi-lo)/2} {
			if h.index(v) != i {
				t.Fatalf("index(%d) = %d, want %d", v, h.index(v), i)
			}
		}
		prev = hi
	}
	if h.Hi() < 3_600_000 || len(h.Counts) > 5000 {
		t.Errorf("Hi %d with %d counters", h.Hi(), len(h.Counts))
	}
	// A quantile in a wide counter is within its width (1/64) of the true value.
	for _, v := range []int64{10_000, 123_456, 2_999_999} {
		g := newWideHist(0, 3_600_000, 4096)
		g.Add(v)
		g.Add(v + 1)
		q, exact := g.Quantile(0.5)
		if exact || q < v-v/64 || q > v+v/64 {
			t.Errorf("Quantile of {%d, %d} = %d (exact %v)", v, v+1, q, exact)
		}
	}
	h.Add(5)
	h.Add(4_000_000)
	h.Add(-3)
	if h.Counts[5] != 1 || h.Over != 1 || h.Under != 1 || h.N != 3 {
		t.Errorf("bookkeeping %+v", summary(h))
	}
}
