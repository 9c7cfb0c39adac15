package relpos

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/relshard/relshard/tokenize"
)

func plainTokens(n int) []tokenize.Token {
	tokens := make([]tokenize.Token, n)
	for i := range tokens {
		tokens[i] = tokenize.Token{Time: int32(i), Pitch: -1, Inst: -1}
	}
	return tokens
}

// TestReportTenTokens: the relative position matrix r_ij = j − i of a 10-token sequence
// clipped at k = 7, bidirectional (fact of the trade, Shaw et al. 2018 clipping): 100
// pairs, |j − i| > 7 for exactly 6, coverage 94 %.
func TestReportTenTokens(t *testing.T) {
	cfg := DefaultConfig()
	cfg.Pairs = Bidirectional
	cfg.Distance = []SchemeSpec{{Scheme: TypeLinear, Width: 1, Clip: clipPtr(7)}}
	c, err := NewCounter(cfg)
	if err != nil {
		t.Fatal(err)
	}
	tally := c.NewTally()
	if err := c.Count(tally, plainTokens(10)); err != nil {
		t.Fatal(err)
	}
	s := c.Report(tally, "ms").Distance.Schemes[0]
	got := [5]float64{float64(s.Pairs), float64(s.Inside), float64(s.SatLow + s.SatHigh), s.InsideShare, float64(len(s.Buckets))}
	if want := [5]float64{100, 94, 6, 0.94, 15}; got != want {
		t.Errorf("pairs, inside, saturated, share, buckets = %v, want %v", got, want)
	}
	// Bucket 0 (offset −7 and below) holds Δ = −7 (3 pairs), −8 (2), −9 (1).
	if s.Buckets[0] != 6 || s.Buckets[7] != 10 || s.Buckets[14] != 6 {
		t.Errorf("buckets = %v", s.Buckets)
	}
}

// exactQuantile is the p-quantile of the values by sorting (the definition).
func exactQuantile(v []int64, p float64) int64 {
	s := slices.Clone(v)
	slices.Sort(s)
	return s[rank(p, int64(len(s)))-1]
}

// TestQuantilesMatchSorting compares the reported |Δ| quantiles with sorting all |Δ| of
// a naive enumeration: exact for distance and pitch, bracketed for time.
func TestQuantilesMatchSorting(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for iter := range 60 {
		cfg := DefaultConfig()
		if iter%2 == 1 {
			cfg.Pairs = Bidirectional
		}
		cfg.ExactUpTo = []int{1, 32, 200, 5000}[iter%4]
		c, err := NewCounter(cfg)
		if err != nil {
			t.Fatal(err)
		}
		tally := c.NewTally()
		var abs [numKinds][]int64
		for range 1 + r.IntN(3) {
			tokens := randomWindow(r, 1+r.IntN(120))
			if err := c.Count(tally, tokens); err != nil {
				t.Fatal(err)
			}
			for i, q := range tokens {
				for j, k := range tokens {
					if cfg.Pairs == Causal && j > i {
						break
					}
					abs[Distance] = append(abs[Distance], int64(max(i-j, j-i)))
					abs[Time] = append(abs[Time], int64(max(q.Time-k.Time, k.Time-q.Time)))
					if q.Pitch >= 0 && k.Pitch >= 0 {
						abs[Pitch] = append(abs[Pitch], int64(max(q.Pitch-k.Pitch, k.Pitch-q.Pitch)))
					}
				}
			}
		}
		rep := c.Report(tally, "ms")
		for _, k := range Kinds {
			if len(abs[k]) == 0 {
				continue
			}
			kr := rep.Kind(k)
			if want := slices.Max(abs[k]); kr.Max != want {
				t.Errorf("iter %d %s: max %d, want %d", iter, k, kr.Max, want)
			}
			for _, q := range kr.Quantiles {
				want := exactQuantile(abs[k], q.P)
				if q.Exact && q.Value != want || !q.Exact && (want < q.Low || want > q.Value) {
					t.Errorf("iter %d %s p%v: got %+v, want %d", iter, k, q.P, q, want)
				}
				if k != Time && !q.Exact {
					t.Errorf("iter %d %s p%v: not exact", iter, k, q.P)
				}
				if k == Time && want <= int64(cfg.ExactUpTo) && q.Value != want {
					t.Errorf("iter %d time p%v: %+v, want exact %d", iter, q.P, q, want)
				}
				if !q.Exact && float64(q.Value-q.Low) > float64(q.Value)/12+1 {
					t.Errorf("iter %d %s p%v: bracket %+v wider than 1/12", iter, k, q.P, q)
				}
			}
		}
	}
}

// TestWilson checks the Wilson score interval against the worked examples of
// Newcombe 1998 ("Two-sided confidence intervals for the single proportion", Stat.
// Med. 17:857, Table II, method 3, 95 %): 81/263, 15/148, 0/20, 1/29 (from memory).
func TestWilson(t *testing.T) {
	for _, tt := range []struct {
		x, n     int64
		lo, high float64
	}{
		{81, 263, 0.2553, 0.3662},
		{15, 148, 0.0624, 0.1605},
		{0, 20, 0, 0.1611},
		{1, 29, 0.0061, 0.1718},
	} {
		got := wilson(tt.x, tt.n, 0.95)
		if math.Abs(got.Low-tt.lo) > 5e-5 || math.Abs(got.High-tt.high) > 5e-5 {
			t.Errorf("wilson(%d, %d) = %+v, want [%.4f, %.4f]", tt.x, tt.n, got, tt.lo, tt.high)
		}
	}
	// 1.959964 is the 97.5 % standard normal quantile (common practice).
	if z := normalQuantile(0.975); math.Abs(z-1.959964) > 1e-6 {
		t.Errorf("z = %v", z)
	}
}

func TestRecommendAndBudget(t *testing.T) {
	cfg := DefaultConfig()
	cfg.Distance = []SchemeSpec{{Scheme: TypeLinear, Width: 2, Clip: clipPtr(3)}}
	cfg.Budget = 4 // causal: clip 3, offsets −3..0
	cfg.BudgetWidths.Distance = []int{1, 2}
	c, err := NewCounter(cfg)
	if err != nil {
		t.Fatal(err)
	}
	tally := c.NewTally()
	if err := c.Count(tally, plainTokens(10)); err != nil {
		t.Fatal(err)
	}
	kr := c.Report(tally, "ms").Distance
	// 55 causal pairs; n − a pairs at distance a: 10, 9, 8, ... The 95 % rank is 53 and
	// the 99 % rank 55: |Δ| ≤ 7 holds 52 pairs, ≤ 8 holds 54, ≤ 9 all 55.
	want := []Recommendation{
		{Width: 2, Target: 0.95, Clip: 4, ClipHigh: 4, Rows: 5, Exact: true}, // q95 = 8, k = 8/2
		{Width: 2, Target: 0.99, Clip: 4, ClipHigh: 4, Rows: 5, Exact: true}, // q99 = 9, k = 9/2
	}
	if !slices.Equal(kr.Recommend, want) {
		t.Errorf("recommend = %+v, want %+v", kr.Recommend, want)
	}
	// width 1, clip 3: |Δ| ≤ 3 holds 10+9+8+7 = 34 of 55; width 2: |Δ| ≤ 7 holds 52.
	if len(kr.Budget) != 2 || kr.Budget[0].Inside != 34.0/55 || kr.Budget[1].Inside != 52.0/55 || kr.Budget[0].Rows != 4 {
		t.Errorf("budget = %+v", kr.Budget)
	}
}
