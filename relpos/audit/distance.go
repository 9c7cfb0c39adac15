package audit

import (
	"math"

	"gonum.org/v1/gonum/stat"
)

// JensenShannon is the Jensen–Shannon divergence, in nats, between two count
// vectors over the same bins, each normalized to a distribution first (gonum's
// stat.JensenShannon). It lies between 0 (same distribution) and ln 2 (disjoint
// support). It is NaN when either side is empty or the lengths differ.
func JensenShannon(p, q []int64) float64 {
	if len(p) != len(q) {
		return math.NaN()
	}
	pn, qn := normalize(p), normalize(q)
	if pn == nil || qn == nil {
		return math.NaN()
	}
	return stat.JensenShannon(pn, qn)
}

// Wasserstein is the 1-D Wasserstein (earth mover's) distance between two weighted
// samples, in the unit of the values (gonum's stat.WassersteinDistance). It is NaN
// when either side is empty or has no positive weight.
func Wasserstein(xs, xw, ys, yw []float64) float64 {
	if len(xs) == 0 || len(ys) == 0 || len(xs) != len(xw) || len(ys) != len(yw) || !positive(xw) || !positive(yw) {
		return math.NaN()
	}
	// gonum normalizes the weight slices in place; hand it copies.
	return stat.WassersteinDistance(xs, ys, append([]float64(nil), xw...), append([]float64(nil), yw...))
}

func positive(w []float64) bool {
	var s float64
	for _, v := range w {
		if v < 0 {
			return false
		}
		s += v
	}
	return s > 0
}

// maxSupport bounds the points handed to the Wasserstein distance: gonum's 1-D
// implementation costs O(points²), and 1,024 points keep a comparison in the
// millisecond range.
const maxSupport = 1024

// histWasserstein is the Wasserstein distance between two histograms, with the
// width of the merged counters used (1 is exact). Tails sit at their extremes.
func histWasserstein(a, b *Hist) (d float64, resolution int64) {
	xs, xw, wa := a.support(maxSupport)
	ys, yw, wb := b.support(maxSupport)
	return Wasserstein(xs, xw, ys, yw), max(wa, wb)
}
