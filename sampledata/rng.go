package sampledata

import (
	"math/bits"
	"math/rand/v2"
)

// rng draws every random choice of the generator. It uses only the raw output of
// math/rand/v2's PCG source, whose algorithm is fixed by its documentation, and does
// the bounding itself with integer arithmetic, so the same seed gives the same choices
// on every machine and Go release. No floating point is involved anywhere.
type rng struct{ src *rand.PCG }

func newRNG(seed, stream uint64) *rng { return &rng{src: rand.NewPCG(seed, stream)} }

// splitmix64 scrambles a counter into a well-mixed 64-bit value (Steele et al. 2014);
// it derives independent per-file streams from one corpus seed.
func splitmix64(x uint64) uint64 {
	x += 0x9e3779b97f4a7c15
	x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9
	x = (x ^ (x >> 27)) * 0x94d049bb133111eb
	return x ^ (x >> 31)
}

// intn returns a value in [0, n) by multiply-high (Lemire's method without the
// rejection step; the bias is below 2^-50 for the small n used here).
func (r *rng) intn(n int) int {
	if n <= 1 {
		return 0
	}
	hi, _ := bits.Mul64(r.src.Uint64(), uint64(n))
	return int(hi)
}

// between returns a value in [lo, hi].
func (r *rng) between(lo, hi int) int { return lo + r.intn(hi-lo+1) }

// chance reports true with probability pct/100.
func (r *rng) chance(pct int) bool { return r.intn(100) < pct }

// spread returns a bell-shaped integer with standard deviation a: the sum of three
// uniform values in [-a, a] (variance 3·a²/3 = a²), so it never exceeds ±3a.
func (r *rng) spread(a int) int {
	if a <= 0 {
		return 0
	}
	return r.between(-a, a) + r.between(-a, a) + r.between(-a, a)
}

// weighted returns an index into ws with probability proportional to its weight.
func (r *rng) weighted(ws []int) int {
	total := 0
	for _, w := range ws {
		total += w
	}
	x := r.intn(total)
	for i, w := range ws {
		if x < w {
			return i
		}
		x -= w
	}
	return len(ws) - 1
}

func pick[T any](r *rng, xs []T) T { return xs[r.intn(len(xs))] }
