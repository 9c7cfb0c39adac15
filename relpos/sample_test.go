package relpos

import (
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
)

// With a sampling probability of nearly 1, every pair is drawn: the counts must equal
// the naive enumeration's, which checks the mapping of pair indices to (i, j).
func TestSampleAllPairs(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	for iter := range 40 {
		cfg := randomConfig(r)
		cfg.Sample = 1 - 1e-15
		c, err := NewCounter(cfg)
		if err != nil {
			t.Fatal(err)
		}
		tally := c.NewTally()
		tokens := randomWindow(r, 1+r.IntN(60))
		if err := c.Sample(tally, tokens, uint64(iter)); err != nil {
			t.Fatal(err)
		}
		want, err := c.CountNaive(tokens)
		if err != nil {
			t.Fatal(err)
		}
		if got := c.Counts(tally); !reflect.DeepEqual(got, want) {
			t.Fatalf("iter %d: sampled counts differ from naive\n got %+v\nwant %+v", iter, got, want)
		}
	}
}

// The Wilson interval of a sampled share holds the exact share for most seeds, the
// number of sampled pairs is binomial, and a window's draw depends only on seed and key.
func TestSampleIntervals(t *testing.T) {
	tokens := benchWindow(400)
	exact, err := NewCounter(DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	et := exact.NewTally()
	if err := exact.Count(et, tokens); err != nil {
		t.Fatal(err)
	}
	truth := exact.Report(et, "ms").Time.Schemes[0].InsideShare
	P := float64(pairCount(400, Causal))
	misses := 0
	const seeds = 40
	for seed := range uint64(seeds) {
		cfg := DefaultConfig()
		cfg.Sample, cfg.Seed, cfg.Confidence = 0.05, seed, 0.95
		c, err := NewCounter(cfg)
		if err != nil {
			t.Fatal(err)
		}
		tally := c.NewTally()
		if err := c.Sample(tally, tokens, 99); err != nil {
			t.Fatal(err)
		}
		rep := c.Report(tally, "ms")
		n := float64(rep.Time.Pairs)
		if sd := math.Sqrt(P * 0.05 * 0.95); math.Abs(n-0.05*P) > 5*sd {
			t.Errorf("seed %d: %v pairs sampled, want %v ± %v", seed, n, 0.05*P, 5*sd)
		}
		ci := rep.Time.Schemes[0].InsideCI
		if ci == nil || len(rep.Time.Schemes[0].BucketCI) != 32 {
			t.Fatalf("no intervals: %+v", rep.Time.Schemes[0])
		}
		if truth < ci.Low || truth > ci.High {
			misses++
		}
		again := c.NewTally()
		if err := c.Sample(again, tokens, 99); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(c.Counts(again), c.Counts(tally)) {
			t.Fatalf("seed %d: same key, different draw", seed)
		}
	}
	// Pairs within a window are drawn independently, so misses are binomial(40, 0.05):
	// more than 8 has probability below 0.1 %.
	if misses > 8 {
		t.Errorf("the 95 %% interval missed the exact share %d times of %d", misses, seeds)
	}
}
