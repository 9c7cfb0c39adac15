package relpos

import (
	"fmt"
	"math"
	"sort"
)

// SchemeCounts are the pairs of one offset kind counted by one scheme.
type SchemeCounts struct {
	Pairs   int64   `json:"pairs"`    // pairs counted
	Inside  int64   `json:"inside"`   // pairs inside the scheme's range (not saturated)
	SatLow  int64   `json:"sat_low"`  // pairs saturated at the low edge
	SatHigh int64   `json:"sat_high"` // pairs saturated at the high edge
	Buckets []int64 `json:"buckets"`  // pairs per bucket id
}

func (s *SchemeCounts) add(o SchemeCounts) {
	s.Pairs += o.Pairs
	s.Inside += o.Inside
	s.SatLow += o.SatLow
	s.SatHigh += o.SatHigh
	for i, v := range o.Buckets {
		s.Buckets[i] += v
	}
}

// record counts one pair at offset d.
func (s *SchemeCounts) record(sch *Scheme, d int64) {
	g := sch.segs[sch.segment(d)]
	s.Pairs++
	s.Buckets[g.Bucket]++
	switch g.Sat {
	case SatLow:
		s.SatLow++
	case SatHigh:
		s.SatHigh++
	default:
		s.Inside++
	}
}

// KindCounts are the counts of one offset kind, one entry per scheme in config order.
type KindCounts struct {
	Pairs   int64          `json:"pairs"`
	Schemes []SchemeCounts `json:"schemes"`
}

// Counts are the per-scheme counts of a tally (or of one window, from CountNaive).
type Counts struct {
	NoPitch int64              `json:"no_pitch"`
	Kinds   ByKind             `json:"kinds"`
	Classes [numClasses]ByKind `json:"classes"`
	Joint   []int64            `json:"joint,omitempty"`
}

// ByKind holds the counts of each offset kind, indexed by Kind.
type ByKind [numKinds]KindCounts

// view reads the offsets of one kind of one stream of a tally.
type view struct {
	mode    Mode
	pairs   int64
	maxAbs  int64
	sampled bool
	// dense histogram: hist[d − lo], with prefix sums cum[i] = Σ hist[:i]
	lo  int64
	cum []int64
	// pointer counts
	cuts, below []int64
	mags        []int64
	// smallAbove[a] = pairs with −exact ≤ Δ ≤ −a, for 1 ≤ a ≤ exact+1
	smallAbove []int64
	exact      int64
	// sampling: per-scheme counts; for time, binCum[i] = pairs with |Δ| ≤ mags[i]
	sc     []SchemeCounts
	binCum []int64
}

func (c *Counter) view(s *stream, k Kind, whole bool) *view {
	v := &view{mode: c.cfg.Pairs, pairs: s.pairs[k], maxAbs: s.maxAbs[k]}
	if s.sc[k] != nil {
		v.sampled, v.sc = true, s.sc[k]
	}
	switch {
	case s.sc[k] != nil && k == Time:
		v.sampled, v.sc = true, s.sc[k]
		v.mags = c.bounds
		v.binCum = make([]int64, len(s.tbins))
		var run int64
		for i, n := range s.tbins {
			run += n
			v.binCum[i] = run
		}
		return v
	case k == Distance && (whole || s.sc[k] != nil):
		n := int64(len(s.dneg))
		v.lo = -(n - 1)
		v.cum = make([]int64, 2*n)
		var run int64
		for i := int64(0); i < 2*n-1; i++ {
			d := v.lo + i
			if d <= 0 {
				run += s.dneg[-d]
			} else {
				run += s.dpos[d]
			}
			v.cum[i+1] = run
		}
	case k == Pitch:
		v.lo = -127
		v.cum = make([]int64, pitchSpan+1)
		for i, n := range s.phist {
			v.cum[i+1] = v.cum[i] + n
		}
	default:
		v.cuts, v.below, v.mags = c.cuts[k], s.below[k], c.mags
		v.exact = c.exact
		v.smallAbove = make([]int64, c.exact+2)
		for a := c.exact; a >= 1; a-- {
			v.smallAbove[a] = v.smallAbove[a+1] + s.small[k][a]
		}
	}
	return v
}

// exactHist reports whether every offset's count is known.
func (v *view) exactHist() bool { return v.cum != nil }

// belowAt returns the number of pairs with Δ < x.
func (v *view) belowAt(x int64) int64 {
	switch {
	case x == math.MinInt64:
		return 0
	case v.cum != nil:
		i := x - v.lo
		if i <= 0 {
			return 0
		}
		if i >= int64(len(v.cum)) {
			return v.pairs
		}
		return v.cum[i]
	case x > 0:
		if v.mode == Causal {
			return v.pairs
		}
		return v.pairs - v.belowAt(-x+1)
	case x > -v.exact:
		// Δ < x ≤ 0: below −exact, or −Δ in [1−x, exact]
		return v.belowAt(-v.exact) + v.smallAbove[1-x]
	}
	i := sort.Search(len(v.cuts), func(i int) bool { return v.cuts[i] >= x })
	if i == len(v.cuts) || v.cuts[i] != x {
		panic(fmt.Sprintf("relpos: internal error: offset %d is not a counted cut", x))
	}
	return v.below[i]
}

// absAtMost returns the number of pairs with |Δ| ≤ a.
func (v *view) absAtMost(a int64) int64 {
	if a == math.MaxInt64 {
		return v.pairs
	}
	if v.binCum != nil {
		i := sort.Search(len(v.mags), func(i int) bool { return v.mags[i] >= a })
		if i == len(v.mags) || v.mags[i] != a {
			panic(fmt.Sprintf("relpos: internal error: magnitude %d is not a sampling bin bound", a))
		}
		return v.binCum[i]
	}
	return v.belowAt(a+1) - v.belowAt(-a)
}

// schemeCounts returns the counts of scheme i of the kind.
func (v *view) schemeCounts(s *Scheme, i int) SchemeCounts {
	if v.sampled {
		sc := v.sc[i]
		sc.Buckets = append([]int64(nil), sc.Buckets...)
		return sc
	}
	out := SchemeCounts{Pairs: v.pairs, Buckets: make([]int64, s.Buckets())}
	for _, g := range s.segs {
		hi := v.pairs
		if g.Hi != math.MaxInt64 {
			hi = v.belowAt(g.Hi + 1)
		}
		n := hi - v.belowAt(g.Lo)
		out.Buckets[g.Bucket] += n
		switch g.Sat {
		case SatLow:
			out.SatLow += n
		case SatHigh:
			out.SatHigh += n
		}
	}
	out.Inside = out.Pairs - out.SatLow - out.SatHigh
	return out
}

// Counts returns the per-scheme counts of a tally of this counter.
func (c *Counter) Counts(t *Tally) Counts {
	out := Counts{NoPitch: t.NoPitch, Joint: append([]int64(nil), t.joint...)}
	fill := func(s *stream, whole bool) (kc ByKind) {
		for _, k := range Kinds {
			v := c.view(s, k, whole)
			kc[k].Pairs = v.pairs
			for i, sch := range c.schemes[k] {
				kc[k].Schemes = append(kc[k].Schemes, v.schemeCounts(sch, i))
			}
		}
		return kc
	}
	out.Kinds = fill(&t.all, true)
	if *c.cfg.Instruments {
		for cl := range numClasses {
			out.Classes[cl] = fill(&t.class[cl], false)
		}
	}
	return out
}

func (k *KindCounts) add(o KindCounts) {
	k.Pairs += o.Pairs
	for i := range o.Schemes {
		k.Schemes[i].add(o.Schemes[i])
	}
}

func (k *ByKind) add(o ByKind) {
	for i := range k {
		k[i].add(o[i])
	}
}

// add adds o's counts (of the same counter) to c.
func (c *Counts) add(o Counts) {
	c.NoPitch += o.NoPitch
	c.Kinds.add(o.Kinds)
	for i := range c.Classes {
		if c.Classes[i][0].Schemes != nil {
			c.Classes[i].add(o.Classes[i])
		}
	}
	for i, v := range o.Joint {
		c.Joint[i] += v
	}
}
