package audit

import (
	"math"
	"sort"
)

// Hist counts integer values exactly: one counter per value in [Lo, Lo+len(Counts)),
// with values outside the range counted in Under and Over. Min and Max are those of
// every value added, inside the range or not. Counts and sums are integers, so
// merging histograms in any order gives the same result.
type Hist struct {
	Lo     int64
	Counts []int64
	Under  int64 // values below Lo
	Over   int64 // values above the last counter
	N      int64 // all values
	Sum    int64 // sum of all values (saturating is not needed for ms over hours)
	Min    int64
	Max    int64
}

// newHist returns a histogram with one counter per value in [lo, hi].
func newHist(lo, hi int64) *Hist {
	return &Hist{Lo: lo, Counts: make([]int64, hi-lo+1), Min: math.MaxInt64, Max: math.MinInt64}
}

// Hi is the largest value with its own counter.
func (h *Hist) Hi() int64 { return h.Lo + int64(len(h.Counts)) - 1 }

// Add counts the value v once.
func (h *Hist) Add(v int64) { h.AddN(v, 1) }

// AddN counts the value v n times.
func (h *Hist) AddN(v, n int64) {
	if n <= 0 {
		return
	}
	switch i := v - h.Lo; {
	case i < 0:
		h.Under += n
	case i >= int64(len(h.Counts)):
		h.Over += n
	default:
		h.Counts[i] += n
	}
	h.N += n
	h.Sum += v * n
	if v < h.Min {
		h.Min = v
	}
	if v > h.Max {
		h.Max = v
	}
}

// Merge adds the counts of o, which must have the same range.
func (h *Hist) Merge(o *Hist) {
	if o.N == 0 {
		return
	}
	// Only the counters between o's extremes can be non-zero.
	lo := max(o.Min-o.Lo, 0)
	hi := min(o.Max-o.Lo, int64(len(o.Counts))-1)
	for i := lo; i <= hi; i++ {
		h.Counts[i] += o.Counts[i]
	}
	h.Under += o.Under
	h.Over += o.Over
	h.N += o.N
	h.Sum += o.Sum
	h.Min = min(h.Min, o.Min)
	h.Max = max(h.Max, o.Max)
}

// Mean is the mean of all values, NaN when empty.
func (h *Hist) Mean() float64 {
	if h.N == 0 {
		return math.NaN()
	}
	return float64(h.Sum) / float64(h.N)
}

// Quantile returns the smallest value v with at least q·N values ≤ v (the inverse
// of the empirical distribution function). It is exact when that value has its own
// counter; in the tails it returns Min or Max, whichever side it falls on, and ok
// false. An empty histogram returns 0, false.
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
	for i, c := range h.Counts {
		seen += c
		if seen >= rank {
			return h.Lo + int64(i), true
		}
	}
	return h.Max, false
}

// ShareAtMost is the share of values ≤ v.
func (h *Hist) ShareAtMost(v int64) float64 {
	if h.N == 0 {
		return math.NaN()
	}
	var n int64
	switch i := v - h.Lo; {
	case i < 0:
		if v >= h.Max {
			return 1
		}
		return math.NaN() // inside the uncounted lower tail
	case i >= int64(len(h.Counts)):
		if v >= h.Max {
			return 1
		}
		return math.NaN()
	default:
		n = h.Under
		for _, c := range h.Counts[:i+1] {
			n += c
		}
	}
	return float64(n) / float64(h.N)
}

// support returns the values with a non-zero count and their counts as weights,
// merging neighbouring counters into groups of width w (the smallest power of two
// that leaves at most maxPoints groups) and placing each group at the mean of its
// values. Tail counts sit at Min and Max. The width used is returned.
func (h *Hist) support(maxPoints int) (xs, ws []float64, width int64) {
	width = 1
	for {
		groups := 0
		last := int64(math.MinInt64)
		for i, c := range h.Counts {
			if c == 0 {
				continue
			}
			if g := int64(i) / width; g != last {
				groups++
				last = g
			}
		}
		if groups+2 <= maxPoints || width >= int64(len(h.Counts)) {
			break
		}
		width *= 2
	}
	if h.Under > 0 {
		xs = append(xs, float64(h.Min))
		ws = append(ws, float64(h.Under))
	}
	last := int64(-1)
	var sumV, sumC float64
	flush := func() {
		if sumC > 0 {
			xs = append(xs, sumV/sumC)
			ws = append(ws, sumC)
		}
		sumV, sumC = 0, 0
	}
	for i, c := range h.Counts {
		if c == 0 {
			continue
		}
		if g := int64(i) / width; g != last {
			flush()
			last = g
		}
		sumV += float64(h.Lo+int64(i)) * float64(c)
		sumC += float64(c)
	}
	flush()
	if h.Over > 0 {
		xs = append(xs, float64(h.Max))
		ws = append(ws, float64(h.Over))
	}
	return xs, ws, width
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

// Count returns the coarse counts of h. Values ascend along the counters, so the
// bin index only moves forward; only counters between h's extremes are read.
func (b Bins) Count(h *Hist) []int64 {
	out := make([]int64, len(b.Edges))
	out[0] += h.Under
	out[len(out)-1] += h.Over
	if h.N == 0 {
		return out
	}
	lo := max(h.Min-h.Lo, 0)
	hi := min(h.Max-h.Lo, int64(len(h.Counts))-1)
	bin := -1
	next := int64(math.MinInt64) // first value of the next bin
	for i := lo; i <= hi; i++ {
		v := h.Lo + i
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
