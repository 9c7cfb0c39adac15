package relpos

import (
	"math"
	"reflect"
	"testing"
)

// TestLogRaffel checks the log scheme against the bucket values of the relative
// position bucket function published with Raffel et al. 2020 (T5), num_buckets 32,
// max_distance 128, relative_position = memory position − query position.
func TestLogRaffel(t *testing.T) {
	tests := []struct {
		name string
		dir  Mode
		want map[int64]int
	}{
		{"bidirectional", Bidirectional, map[int64]int{ // Raffel et al. 2020, bidirectional=True
			0: 0, -1: 1, -8: 8, -11: 8, -12: 9, -16: 10, -23: 11, -32: 12, -46: 13, -64: 14,
			-91: 15, -128: 15, 1: 17, 8: 24, 16: 26, 64: 30, 128: 31,
		}},
		{"causal", Causal, map[int64]int{ // Raffel et al. 2020, bidirectional=False
			-16: 16, -32: 21, -64: 26, -128: 31, 1: 0, 5: 0, 1000: 0,
		}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			s, err := Log(32, 128, 0, tt.dir)
			if err != nil {
				t.Fatal(err)
			}
			got := map[int64]int{}
			for d := range tt.want {
				got[d] = s.Bucket(d)
			}
			if !reflect.DeepEqual(got, tt.want) {
				t.Errorf("buckets = %v, want %v", got, tt.want)
			}
		})
	}
}

// TestLogMatchesFormula compares every magnitude up to twice max with the real-valued
// formula of Raffel et al. 2020, away from the exact log edges where float rounding
// decides (those are pinned by TestLogRaffel and by the integer comparison).
func TestLogMatchesFormula(t *testing.T) {
	for _, c := range []struct{ buckets, max int }{{32, 128}, {64, 256}, {16, 1000}, {128, 4096}} {
		for _, dir := range []Mode{Causal, Bidirectional} {
			s, err := Log(c.buckets, c.max, 0, dir)
			if err != nil {
				t.Fatal(err)
			}
			side := c.buckets
			if dir == Bidirectional {
				side /= 2
			}
			me := side / 2
			for d := int64(-2 * int64(c.max)); d <= 2*int64(c.max); d++ {
				n, off := -d, 0
				if dir == Bidirectional {
					if n < 0 {
						off, n = side, -n
					}
				} else if n < 0 {
					n = 0
				}
				want := int(n)
				if n >= int64(me) {
					v := math.Log(float64(n)/float64(me)) / math.Log(float64(c.max)/float64(me)) * float64(side-me)
					if math.Abs(v-math.Round(v)) < 1e-9 {
						continue // on a log edge
					}
					want = min(me+int(v), side-1)
				}
				if got := s.Bucket(d); got != want+off {
					t.Fatalf("%s: bucket(%d) = %d, want %d", s.Name, d, got, want+off)
				}
			}
		}
	}
}

// TestLinearTenTokens: the relative position matrix r_ij = j − i of a 10-token
// sequence clipped at k = 7 (fact of the trade, Shaw et al. 2018 clipping): of the 100
// pairs, exactly 6 have |j − i| > 7 and saturate, so coverage is 94 %.
func TestLinearTenTokens(t *testing.T) {
	s, err := Linear(1, 7)
	if err != nil {
		t.Fatal(err)
	}
	pairs, sat := 0, 0
	for i := int64(0); i < 10; i++ {
		for j := int64(0); j < 10; j++ {
			pairs++
			if s.Saturation(j-i) != SatNone {
				sat++
			}
			if want := int(min(max(j-i, -7), 7) + 7); s.Bucket(j-i) != want {
				t.Errorf("bucket(%d) = %d, want %d", j-i, s.Bucket(j-i), want)
			}
		}
	}
	if pairs != 100 || sat != 6 {
		t.Errorf("pairs %d saturated %d, want 100 and 6", pairs, sat)
	}
}

func TestLinearWidth(t *testing.T) {
	// bucket = clip(trunc(Δ/width), −k, k) + k (Shaw et al. 2018 with a width).
	s, err := Linear(10, 3)
	if err != nil {
		t.Fatal(err)
	}
	for d := int64(-100); d <= 100; d++ {
		q := d / 10 // Go truncates toward zero
		want := int(min(max(q, -3), 3) + 3)
		wantSat := SatNone
		if q < -3 {
			wantSat = SatLow
		} else if q > 3 {
			wantSat = SatHigh
		}
		if got := s.Bucket(d); got != want {
			t.Fatalf("bucket(%d) = %d, want %d", d, got, want)
		}
		if got := s.Saturation(d); got != wantSat {
			t.Fatalf("saturation(%d) = %d, want %d", d, got, wantSat)
		}
	}
}

func TestEdgesScheme(t *testing.T) {
	s, err := EdgesScheme([]int64{-10, -5, 0, 1})
	if err != nil {
		t.Fatal(err)
	}
	got := [][2]int{}
	for _, d := range []int64{-11, -10, -6, -5, -1, 0, 1, 50} {
		got = append(got, [2]int{s.Bucket(d), s.Saturation(d)})
	}
	want := [][2]int{{0, SatLow}, {0, 0}, {0, 0}, {1, 0}, {1, 0}, {2, 0}, {2, SatHigh}, {2, SatHigh}}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("got %v, want %v", got, want)
	}
}

func TestSchemeErrors(t *testing.T) {
	for _, tt := range []struct {
		name string
		f    func() error
	}{
		{"width 0", func() error { _, err := Linear(0, 3); return err }},
		{"clip negative", func() error { _, err := Linear(1, -1); return err }},
		{"log odd bidirectional", func() error { _, err := Log(31, 128, 0, Bidirectional); return err }},
		{"log max too small", func() error { _, err := Log(32, 8, 0, Bidirectional); return err }},
		{"log bad direction", func() error { _, err := Log(32, 128, 0, "both"); return err }},
		{"edges unsorted", func() error { _, err := EdgesScheme([]int64{0, 0}); return err }},
		{"edges one", func() error { _, err := EdgesScheme([]int64{0}); return err }},
	} {
		if tt.f() == nil {
			t.Errorf("%s: no error", tt.name)
		}
	}
}

// Segments must cover every offset exactly once, in order.
func TestSegmentsCover(t *testing.T) {
	var schemes []*Scheme
	for _, f := range []func() (*Scheme, error){
		func() (*Scheme, error) { return Linear(1, 0) },
		func() (*Scheme, error) { return Linear(7, 5) },
		func() (*Scheme, error) { return Log(32, 128, 0, Causal) },
		func() (*Scheme, error) { return Log(32, 128, 0, Bidirectional) },
		func() (*Scheme, error) { return Log(8, 9, 0, Bidirectional) },
		func() (*Scheme, error) { return EdgesScheme([]int64{-3, 7}) },
	} {
		s, err := f()
		if err != nil {
			t.Fatal(err)
		}
		schemes = append(schemes, s)
	}
	for _, s := range schemes {
		segs := s.Segments()
		if segs[0].Lo != math.MinInt64 || segs[len(segs)-1].Hi != math.MaxInt64 {
			t.Errorf("%s: open ends missing", s.Name)
		}
		for i, g := range segs {
			if g.Lo > g.Hi || g.Bucket < 0 || g.Bucket >= s.Buckets() {
				t.Errorf("%s: bad segment %d %+v", s.Name, i, g)
			}
			if i > 0 && g.Lo != segs[i-1].Hi+1 {
				t.Errorf("%s: gap before segment %d", s.Name, i)
			}
		}
	}
}
