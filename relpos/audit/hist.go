package audit

import (
	"math"
	"math/bits"
	"sort"
)

// Hist counts integer values: one counter per value for offsets v − Lo below Exact,
// and above it 64 counters per octave (each at most 1/64 of its values wide, as in a
// high-dynamic-range histogram), so that a range of hours in ms costs a few thousand
// counters. Values outside [Lo, Hi()] are counted in Under and Over. Min and Max are
// those of every value added. Counts and sums are integers, so merging histograms in
// any order gives the same result. Exact 0 means one counter per value throughout.
type Hist struct {
	Lo     int64
	Exact  int64 // a power of two ≥ 64, or 0
	Counts []int64
	Under  int64 // values below Lo
	Over   int64 // values above Hi()
	N      int64 // all values
	Sum    int64 // sum of all values
	Min    int64
	Max    int64

	e int64 // log2(Exact)
}

// subBits gives 2^subBits counters per octave above the exact range.
const subBits = 6

// newHist returns a histogram with one counter per value in [lo, hi].
func newHist(lo, hi int64) *Hist {
	return &Hist{Lo: lo, Counts: make([]int64, hi-lo+1), Min: math.MaxInt64, Max: math.MinInt64}
}

// newWideHist returns a histogram over [lo, at least hi] with exact counters for the
// first exact values (a power of two ≥ 64) and 64 per octave beyond.
func newWideHist(lo, hi, exact int64) *Hist {
	h := &Hist{Lo: lo, Exact: exact, Min: math.MaxInt64, Max: math.MinInt64, e: int64(bits.Len64(uint64(exact))) - 1}
	h.Counts = make([]int64, h.index(hi)+1)
	return h
}

// index is the counter of value v ≥ Lo (no bounds check at the top).
func (h *Hist) index(v int64) int64 {
	off := v - h.Lo
	if h.Exact == 0 || off < h.Exact {
		return off
	}
	o := int64(bits.Len64(uint64(off))) - 1 // octave: 2^o ≤ off < 2^(o+1)
	return h.Exact + (o-h.e)<<subBits + (off>>(o-subBits))&(1<<subBits-1)
}

// lower is the smallest value of counter i.
func (h *Hist) lower(i int64) int64 {
	if h.Exact == 0 || i < h.Exact {
		return h.Lo + i
	}
	j := i - h.Exact
	o := h.e + j>>subBits
	return h.Lo + 1<<o + (j&(1<<subBits-1))<<(o-subBits)
}

// upper is the largest value of counter i.
func (h *Hist) upper(i int64) int64 { return h.lower(i+1) - 1 }

// Hi is the largest value counted inside the range.
func (h *Hist) Hi() int64 { return h.upper(int64(len(h.Counts)) - 1) }

// span returns the counters that can be non-zero: those between Min and Max.
func (h *Hist) span() (lo, hi int64) {
	if h.N == 0 {
		return 0, -1
	}
	lo, hi = 0, int64(len(h.Counts))-1
	if h.Min > h.Lo {
		lo = min(h.index(h.Min), hi)
	}
	if h.Max < h.Hi() {
		hi = h.index(max(h.Max, h.Lo))
	}
	return lo, hi
}

// Add counts the value v once.
func (h *Hist) Add(v int64) { h.AddN(v, 1) }

// AddN counts the value v n times.
func (h *Hist) AddN(v, n int64) {
	if n <= 0 {
		return
	}
	switch {
	case v < h.Lo:
		h.Under += n
	case v-h.Lo < h.Exact || h.Exact == 0 && v-h.Lo < int64(len(h.Counts)):
		h.Counts[v-h.Lo] += n
	case v > h.Hi():
		h.Over += n
	default:
		h.Counts[h.index(v)] += n
	}
	h.N += n
	h.Sum += v * n
	h.Min = min(h.Min, v)
	h.Max = max(h.Max, v)
}

// Merge adds the counts of o, which must have the same layout.
func (h *Hist) Merge(o *Hist) {
	lo, hi := o.span()
	for i := lo; i <= hi; i++ {
		h.Counts[i] += o.Counts[i]
	}
	if o.N == 0 {
		return
	}
	h.Under += o.Under
	h.Over += o.Over
	h.N += o.N
	h.Sum += o.Sum
	h.Min = min(h.Min, o.Min)
	h.Max = max(h.Max, o.Max)
}

// reset empties h, clearing only the counters that can be non-zero.
func (h *Hist) reset() {
	lo, hi := h.span()
	if lo <= hi {
		clear(h.Counts[lo : hi+1])
	}
	*h = Hist{Lo: h.Lo, Exact: h.Exact, Counts: h.Counts, Min: math.MaxInt64, Max: math.MinInt64, e: h.e}
}

// Mean is the mean of all values, NaN when empty.
func (h *Hist) Mean() float64 {
	if h.N == 0 {
		return math.NaN()
	}
	return float64(h.Sum) / float64(h.N)
}

// Quantile returns the smallest value v with at least q·N values ≤ v (the inverse
// of the empirical distribution function, R's type 1). ok is true when the answer is
// exact: its counter holds one value. In a wide counter it returns the counter's
// middle (within 1/128 of the true value); in the tails Min or Max. An empty
// histogram returns 0, false.
func (h *Hist) Quantile(q float64) (v int64, ok bool) {
	if h.N == 0 {
		return 0, false
	}
	rank := int64(math.Ceil(q * float64(h.N)))
	rank = min(max(rank, 1), h.N)
	if rank <= h.Under {
		return h.Min, false
	}
	seen := h.Under
	lo, hi := h.span()
	for i := lo; i <= hi; i++ {
		seen += h.Counts[i]
		if seen >= rank {
			a, b := h.lower(i), h.upper(i)
			a, b = max(a, h.Min), min(b, h.Max)
			return a + (b-a)/2, a == b
		}
	}
	return h.Max, false
}

// support returns the non-zero counters as weighted points at the middle of their
// values (Min and Max bound the extreme ones), merging groups of 2^k neighbouring
// counters until at most maxPoints remain, each group at the weighted mean of its
// counters. Tail counts sit at Min and Max. resolution is the widest value range
// merged into one point (1 is exact).
func (h *Hist) support(maxPoints int) (xs, ws []float64, resolution int64) {
	lo, hi := h.span()
	group := int64(1)
	for {
		groups := 0
		last := int64(-1)
		for i := lo; i <= hi; i++ {
			if h.Counts[i] == 0 {
				continue
			}
			if g := i / group; g != last {
				groups++
				last = g
			}
		}
		if groups+2 <= maxPoints || group >= int64(len(h.Counts)) {
			break
		}
		group *= 2
	}
	if h.Under > 0 {
		xs = append(xs, float64(h.Min))
		ws = append(ws, float64(h.Under))
	}
	resolution = 1
	last := int64(-1)
	var sumV, sumC float64
	var first, lastVal int64
	flush := func() {
		if sumC > 0 {
			xs = append(xs, sumV/sumC)
			ws = append(ws, sumC)
			resolution = max(resolution, lastVal-first+1)
		}
		sumV, sumC = 0, 0
	}
	for i := lo; i <= hi; i++ {
		c := h.Counts[i]
		if c == 0 {
			continue
		}
		a, b := max(h.lower(i), h.Min), min(h.upper(i), h.Max)
		if g := i / group; g != last {
			flush()
			last = g
			first = a
		}
		lastVal = b
		sumV += (float64(a) + float64(b-a)/2) * float64(c)
		sumC += float64(c)
	}
	flush()
	if h.Over > 0 {
		xs = append(xs, float64(h.Max))
		ws = append(ws, float64(h.Over))
	}
	return xs, ws, resolution
}

// Bins are coarse, fixed bins over an integer quantity: bin i holds values in
// [Edges[i], Edges[i+1]); the first bin also holds everything below Edges[0] and the
// last everything from Edges[len-1] on, so there are len(Edges) bins. Coarse bins
// are what files are compared on: a few dozen counters per file.
type Bins struct {
	Edges []int64
}

// Index returns the bin of v.
func (b Bins) Index(v int64) int {
	i := sort.Search(len(b.Edges), func(i int) bool { return b.Edges[i] > v })
	return max(i-1, 0)
}

// Count returns the coarse counts of h, each counter going to the bin of its
// smallest value. Values ascend along the counters, so the bin index only moves
// forward; only counters between h's extremes are read.
func (b Bins) Count(h *Hist) []int64 {
	out := make([]int64, len(b.Edges))
	out[0] += h.Under
	out[len(out)-1] += h.Over
	lo, hi := h.span()
	bin := -1
	next := int64(math.MinInt64) // first value of the next bin
	for i := lo; i <= hi; i++ {
		if h.Counts[i] == 0 {
			continue
		}
		v := h.lower(i)
		if bin < 0 || v >= next {
			bin = b.Index(v)
			next = math.MaxInt64
			if bin+1 < len(b.Edges) {
				next = b.Edges[bin+1]
			}
		}
		out[bin] += h.Counts[i]
	}
	return out
}

// timeBins are half-octave bins for intervals in ms: [0, 8) ms (simultaneous to the
// ear), then edges 8·2^(k/2) ms up to about 65 s.
var timeBins = func() Bins {
	e := []int64{0}
	for k := 0; k <= 26; k++ {
		e = append(e, int64(math.Round(8*math.Pow(2, float64(k)/2))))
	}
	return Bins{Edges: e}
}()

// gridStepBins are half-octave bins for intervals in grid steps: edges 0, 1, 2, 3,
// 4, 6, 8, 11, 16, ... (2^(k/2) rounded) up to about 65,536 steps.
var gridStepBins = func() Bins {
	e := []int64{0}
	for k := 0; k <= 32; k++ {
		if v := int64(math.Round(math.Pow(2, float64(k)/2))); v > e[len(e)-1] {
			e = append(e, v)
		}
	}
	return Bins{Edges: e}
}()

// pitchBins hold every signed semitone offset from −24 to +24 on its own, and the
// rest in two tails.
var pitchBins = func() Bins {
	e := []int64{math.MinInt64 / 2}
	for d := int64(-24); d <= 25; d++ {
		e = append(e, d)
	}
	return Bins{Edges: e}
}()

// normalize returns counts divided by their sum (nil when the sum is zero).
func normalize(c []int64) []float64 {
	var n int64
	for _, v := range c {
		n += v
	}
	if n == 0 {
		return nil
	}
	out := make([]float64, len(c))
	for i, v := range c {
		out[i] = float64(v) / float64(n)
	}
	return out
}
