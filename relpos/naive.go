package relpos

import (
	"github.com/relshard/relshard/tokenize"
)

// CountNaive is the reference for Count: it enumerates every pair of one window, O(L²),
// and buckets each offset with Scheme.Bucket. Counts of a tally that counted only this
// window are equal to it.
func (c *Counter) CountNaive(tokens []tokenize.Token) (Counts, error) {
	if err := checkWindow(tokens); err != nil {
		return Counts{}, err
	}
	var out Counts
	init3 := func(kc *ByKind) {
		for _, k := range Kinds {
			for _, s := range c.schemes[k] {
				kc[k].Schemes = append(kc[k].Schemes, SchemeCounts{Buckets: make([]int64, s.Buckets())})
			}
		}
	}
	init3(&out.Kinds)
	if *c.cfg.Instruments {
		for cl := range out.Classes {
			init3(&out.Classes[cl])
		}
	}
	if c.jointT != nil {
		out.Joint = make([]int64, c.jointT.Buckets()*c.jointP.Buckets())
	}
	for i, q := range tokens {
		for j, k := range tokens {
			if c.cfg.Pairs == Causal && j > i {
				break
			}
			c.naivePair(&out.Kinds, &out.NoPitch, int64(j-i), q, k)
			if *c.cfg.Instruments {
				for cl := range numClasses {
					if inClass(q, Class(cl)) && inClass(k, Class(cl)) {
						// distance within a class is the difference of window positions
						var dummy int64
						c.naivePair(&out.Classes[cl], &dummy, int64(j-i), q, k)
					}
				}
			}
			if c.jointT != nil && q.Pitch >= 0 && k.Pitch >= 0 {
				bt := c.jointT.Bucket(int64(k.Time) - int64(q.Time))
				bp := c.jointP.Bucket(int64(k.Pitch) - int64(q.Pitch))
				out.Joint[bt*c.jointP.Buckets()+bp]++
			}
		}
	}
	return out, nil
}

func (c *Counter) naivePair(kc *ByKind, noPitch *int64, dist int64, q, k tokenize.Token) {
	kc[Distance].Pairs++
	for i, s := range c.schemes[Distance] {
		kc[Distance].Schemes[i].record(s, dist)
	}
	dt := int64(k.Time) - int64(q.Time)
	kc[Time].Pairs++
	for i, s := range c.schemes[Time] {
		kc[Time].Schemes[i].record(s, dt)
	}
	if q.Pitch < 0 || k.Pitch < 0 {
		*noPitch++
		return
	}
	dp := int64(k.Pitch) - int64(q.Pitch)
	kc[Pitch].Pairs++
	for i, s := range c.schemes[Pitch] {
		kc[Pitch].Schemes[i].record(s, dp)
	}
}
