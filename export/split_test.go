package export

import (
	"fmt"
	"math"
	"testing"
)

func TestSplitRatios(t *testing.T) {
	const n = 100000
	tests := []struct {
		name   string
		ratios Ratios
		want   map[string]float64
	}{
		{"default", DefaultRatios, map[string]float64{SplitTrain: 0.9, SplitValidation: 0.05, SplitTest: 0.05}},
		{"unnormalized", Ratios{Train: 8, Validation: 1, Test: 1}, map[string]float64{SplitTrain: 0.8, SplitValidation: 0.1, SplitTest: 0.1}},
		{"no test", Ratios{Train: 0.5, Validation: 0.5}, map[string]float64{SplitTrain: 0.5, SplitValidation: 0.5, SplitTest: 0}},
		{"all train", Ratios{Train: 1}, map[string]float64{SplitTrain: 1, SplitValidation: 0, SplitTest: 0}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := map[string]float64{}
			for i := range n {
				got[SplitOf(fmt.Sprintf("%016x", i), tc.ratios)]++
			}
			for s, want := range tc.want {
				share := got[s] / n
				// Binomial standard error at n = 100000 is at most 0.0016; allow 4 of them.
				if math.Abs(share-want) > 0.0065 {
					t.Errorf("%s share %.4f, want %.4f", s, share, want)
				}
				if want == 0 && got[s] != 0 {
					t.Errorf("%s got %v rows with a zero share", s, got[s])
				}
			}
		})
	}
}

func TestPartsPartitionPieces(t *testing.T) {
	for _, n := range []int{1, 2, 3, 7} {
		counts := make([]int, n+1)
		for i := range 30000 {
			h := fmt.Sprintf("%x", i*7919)
			owners := 0
			for k := 1; k <= n; k++ {
				if (Part{Index: k, Count: n}).Has(h) {
					owners++
					counts[k]++
				}
			}
			if owners != 1 {
				t.Fatalf("n=%d: hash %s in %d parts", n, h, owners)
			}
		}
		for k := 1; k <= n; k++ {
			if share := float64(counts[k]) / 30000; math.Abs(share-1/float64(n)) > 0.02 {
				t.Errorf("n=%d: part %d holds %.3f of the pieces", n, k, share)
			}
		}
	}
	// The part does not predict the split: both come from the hash, salted apart.
	var inTest, testAndPart1 int
	for i := range 30000 {
		h := fmt.Sprintf("%x", i)
		if SplitOf(h, DefaultRatios) == SplitTest {
			inTest++
			if PartOf(h, 2) == 1 {
				testAndPart1++
			}
		}
	}
	if share := float64(testAndPart1) / float64(inTest); math.Abs(share-0.5) > 0.05 {
		t.Errorf("part 1 of 2 holds %.3f of the test split, want about 0.5", share)
	}
}

func TestPartValidate(t *testing.T) {
	for _, p := range []Part{{0, 0}, {1, 1}, {3, 3}} {
		if err := p.Validate(); err != nil {
			t.Errorf("%v: %v", p, err)
		}
	}
	for _, p := range []Part{{0, 3}, {4, 3}, {1, 0}, {-1, 2}} {
		if err := p.Validate(); err == nil {
			t.Errorf("%v accepted", p)
		}
	}
}
