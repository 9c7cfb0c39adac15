package audit

import (
	"math"

	"github.com/relshard/relshard/relpos"
)

// maxDrawnEdges bounds the bucket edges kept for a chart; a scheme with more keeps
// only its clip.
const maxDrawnEdges = 512

// timeScheme describes a time scheme on the |Δt| axis. Causal offsets are ≤ 0 (key
// minus query), so a segment [Lo, Hi] of offsets covers magnitudes [−Hi, −Lo] and its
// far edge lies at −Lo + ½; the clip lies half a unit below the first saturated
// magnitude.
func timeScheme(s *relpos.Scheme) Scheme {
	out := Scheme{Name: s.Name, Kind: "time"}
	segs := s.Segments()
	for _, g := range segs {
		if g.Lo <= 0 && g.Lo != math.MinInt64 {
			out.Edges = append(out.Edges, float64(-g.Lo)+0.5)
		}
	}
	for i := len(segs) - 1; i >= 0; i-- {
		if g := segs[i]; g.Sat == relpos.SatLow && g.Hi <= 0 {
			out.Clip = []float64{float64(-g.Hi) - 0.5}
			break
		}
	}
	// Edges were collected from far to near; report them ascending.
	for i, j := 0, len(out.Edges)-1; i < j; i, j = i+1, j-1 {
		out.Edges[i], out.Edges[j] = out.Edges[j], out.Edges[i]
	}
	if len(out.Edges) > maxDrawnEdges {
		out.Edges = nil
	}
	return out
}

// pitchScheme describes a pitch scheme on the signed Δp axis: an edge half a
// semitone below each segment's first offset, the clip at the inner ends of the
// saturated segments.
func pitchScheme(s *relpos.Scheme) Scheme {
	out := Scheme{Name: s.Name, Kind: "pitch"}
	segs := s.Segments()
	lo, hi := math.NaN(), math.NaN()
	for _, g := range segs {
		if g.Lo != math.MinInt64 && g.Lo > -1000 && g.Lo < 1000 {
			out.Edges = append(out.Edges, float64(g.Lo)-0.5)
		}
		if g.Sat == relpos.SatLow && g.Hi != math.MaxInt64 {
			lo = float64(g.Hi) + 0.5
		}
		if g.Sat == relpos.SatHigh && math.IsNaN(hi) && g.Lo != math.MinInt64 {
			hi = float64(g.Lo) - 0.5
		}
	}
	for _, v := range []float64{lo, hi} {
		if !math.IsNaN(v) {
			out.Clip = append(out.Clip, v)
		}
	}
	if len(out.Edges) > maxDrawnEdges {
		out.Edges = nil
	}
	return out
}

// coverage turns the relpos counts of a dataset into report rows.
func (a *Auditor) coverage(name string, t *relpos.Tally) []Coverage {
	counts := a.counter.Counts(t)
	var out []Coverage
	for _, k := range relpos.Kinds {
		for i, sch := range a.counter.Schemes(k) {
			sc := counts.Kinds[k].Schemes[i]
			c := Coverage{Dataset: name, Kind: k.String(), Scheme: sch.Name, Pairs: sc.Pairs, Inside: sc.Inside, Buckets: sch.Buckets()}
			for _, n := range sc.Buckets {
				if n == 0 {
					c.Unused++
				}
			}
			if len(sc.Buckets) < c.Buckets {
				c.Unused += c.Buckets - len(sc.Buckets)
			}
			if sc.Pairs > 0 {
				c.Share = float64(sc.Inside) / float64(sc.Pairs)
				c.Saturated = float64(sc.SatLow+sc.SatHigh) / float64(sc.Pairs)
			}
			out = append(out, c)
		}
	}
	return out
}
