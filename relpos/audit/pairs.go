package audit

import (
	"slices"

	"github.com/relshard/relshard/tokenize"
)

// Ranges of the pair histograms.
const (
	maxPairDT = 3_600_000 // in the stream's time unit (ms, or grid steps): an hour of ms
	maxPairDP = 127
)

// exactBelow is the range of exact counters of the wide histograms: every ms up
// to about 4 s, then 64 counters per octave.
const exactBelow = 4096

// newDTHist returns the histogram of pairwise |Δt|.
func newDTHist() *Hist { return newWideHist(0, maxPairDT, exactBelow) }

// pairCounter counts the time and pitch offsets of every pair of distinct tokens
// (i < j) inside a window, exactly and without enumerating the pairs one by one:
//
//   - Δt = t_j − t_i ≥ 0: the magnitude of the causal time offset key − query (query
//     j, key i). Tokens are grouped by time first, so the cost is O(D²) in the D
//     distinct times of a window, not O(L²) in its tokens.
//   - Δp = p_i − p_j, key minus query with the later token as the query (the
//     convention of Shaw et al. 2018), over pairs where both tokens carry a pitch and
//     neither is a drum: a running count per pitch gives O(L·P) for P distinct
//     pitches.
type pairCounter struct {
	times  []int32
	counts []int64
	sorted []int32
	pitch  [128]int64
	seen   []int16
}

// window adds the pairs of toks to dt and dp.
func (pc *pairCounter) window(toks []tokenize.Token, dt, dp *Hist) {
	pc.times, pc.counts = pc.times[:0], pc.counts[:0]
	ordered := true
	for i := range toks {
		t := toks[i].Time
		if n := len(pc.times); n > 0 && pc.times[n-1] == t {
			pc.counts[n-1]++
			continue
		} else if n > 0 && t < pc.times[n-1] {
			ordered = false
			break
		}
		pc.times = append(pc.times, t)
		pc.counts = append(pc.counts, 1)
	}
	if !ordered {
		// The encoder promises non-decreasing times; count correctly anyway.
		pc.sorted = pc.sorted[:0]
		for i := range toks {
			pc.sorted = append(pc.sorted, toks[i].Time)
		}
		slices.Sort(pc.sorted)
		pc.times, pc.counts = pc.times[:0], pc.counts[:0]
		for _, t := range pc.sorted {
			if n := len(pc.times); n > 0 && pc.times[n-1] == t {
				pc.counts[n-1]++
				continue
			}
			pc.times = append(pc.times, t)
			pc.counts = append(pc.counts, 1)
		}
	}
	addTimePairs(pc.times, pc.counts, dt)

	for i := range toks {
		p := toks[i].Pitch
		if p < 0 || p > 127 || toks[i].Inst == tokenize.InstDrums {
			continue
		}
		for _, q := range pc.seen {
			dp.AddN(int64(q)-int64(p), pc.pitch[q])
		}
		if pc.pitch[p] == 0 {
			pc.seen = append(pc.seen, p)
		}
		pc.pitch[p]++
	}
	for _, q := range pc.seen {
		pc.pitch[q] = 0
	}
	pc.seen = pc.seen[:0]
}

// addTimePairs counts, for distinct sorted times with multiplicities, every pair of
// tokens by the difference of their times into h, whose Lo must be 0. The pair
// count, sum and maximum come from suffix sums; the inner loop only increments
// counters, finding a wide counter once per counter rather than once per pair (the
// differences grow along it).
func addTimePairs(times []int32, counts []int64, h *Hist) {
	var over, n, sum int64
	maxD := int64(-1)
	cs := h.Counts
	hi := h.Hi()
	exact := h.Exact
	if exact == 0 {
		exact = int64(len(cs))
	}
	last := len(times) - 1
	var sufC, sufT int64 // tokens after k, and the sum of their times
	for k := last; k >= 0; k-- {
		tk, c := int64(times[k]), counts[k]
		if c > 1 {
			h.AddN(0, c*(c-1)/2)
		}
		if sufC > 0 {
			n += c * sufC
			sum += c * (sufT - tk*sufC)
			maxD = max(maxD, int64(times[last])-tk)
			l := k + 1
			for ; l <= last; l++ {
				d := int64(times[l]) - tk
				if d >= exact {
					break
				}
				cs[d] += c * counts[l]
			}
			idx, upper := int64(-1), int64(-1)
			for ; l <= last; l++ {
				d := int64(times[l]) - tk
				if d > hi {
					for ; l <= last; l++ {
						over += c * counts[l]
					}
					break
				}
				if d > upper {
					idx = h.index(d)
					upper = h.upper(idx)
				}
				cs[idx] += c * counts[l]
			}
		}
		sufC += c
		sufT += tk * c
	}
	if n == 0 {
		return
	}
	// Fold the bulk counts into the bookkeeping in one step; every d here is > 0 ≥ Lo.
	h.Over += over
	h.N += n
	h.Sum += sum
	h.Max = max(h.Max, maxD)
	minD := int64(times[1]) - int64(times[0])
	for k := 2; k < len(times); k++ {
		minD = min(minD, int64(times[k])-int64(times[k-1]))
	}
	h.Min = min(h.Min, minD)
}

// naivePairs is the reference: every pair (i < j) one by one.
func naivePairs(toks []tokenize.Token, dt, dp *Hist) {
	for j := range toks {
		for i := 0; i < j; i++ {
			d := int64(toks[j].Time) - int64(toks[i].Time)
			if d < 0 {
				d = -d
			}
			dt.Add(d)
			pi, pj := toks[i].Pitch, toks[j].Pitch
			if pi >= 0 && pi <= 127 && pj >= 0 && pj <= 127 && toks[i].Inst != tokenize.InstDrums && toks[j].Inst != tokenize.InstDrums {
				dp.Add(int64(pi) - int64(pj))
			}
		}
	}
}
