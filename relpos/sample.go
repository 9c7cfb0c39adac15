package relpos

import (
	"math"
	"math/rand/v2"
	"sort"

	"github.com/relshard/relshard/tokenize"
)

// Sample adds a random share (Config.Sample) of the pairs of one window to t: every pair
// is drawn independently with that probability, so the sampled pairs of a corpus are a
// simple random sample of its pairs and each share gets a Wilson interval. key
// identifies the window (e.g. a hash of piece, variant and window index): the draw
// depends only on the seed and the key, so results do not depend on the order or the
// number of workers. Cost is O(L + sampled pairs): exact counting already costs only
// O(L·C), so sampling pays where exact costs O(L²) — the joint table — or for rates
// below about C/L.
func (c *Counter) Sample(t *Tally, tokens []tokenize.Token, key uint64) error {
	n, err := t.begin(tokens, true)
	if err != nil || n == 0 {
		return err
	}
	q := c.cfg.Sample
	rng := rand.New(rand.NewPCG(c.cfg.Seed, key))
	P := pairCount(n, c.cfg.Pairs)
	logq := math.Log1p(-q)
	skip := func() int64 { // pairs before the next drawn one: geometric
		u := 1 - rng.Float64() // (0, 1]
		g := math.Floor(math.Log(u) / logq)
		if g > float64(P) {
			return P
		}
		return int64(g)
	}
	for k := skip(); k < P; k += 1 + skip() {
		var i, j int64
		if c.cfg.Pairs == Causal {
			// pair k = i(i+1)/2 + j with 0 ≤ j ≤ i
			i = int64((math.Sqrt(8*float64(k)+1) - 1) / 2)
			for i*(i+1)/2 > k {
				i--
			}
			for (i+1)*(i+2)/2 <= k {
				i++
			}
			j = k - i*(i+1)/2
		} else {
			i, j = k/n, k%n
		}
		qt, kt := tokens[i], tokens[j]
		c.samplePair(&t.all, &t.NoPitch, j-i, qt, kt)
		if *c.cfg.Instruments {
			var dummy int64
			for cl := range numClasses {
				if inClass(qt, Class(cl)) && inClass(kt, Class(cl)) {
					c.samplePair(&t.class[cl], &dummy, j-i, qt, kt)
				}
			}
		}
		if c.jointT != nil && qt.Pitch >= 0 && kt.Pitch >= 0 {
			bt := c.jointT.Bucket(int64(kt.Time) - int64(qt.Time))
			t.joint[bt*c.jointP.Buckets()+int(c.pitchBucket[int(kt.Pitch)-int(qt.Pitch)+127])]++
		}
	}
	return nil
}

func (c *Counter) samplePair(s *stream, noPitch *int64, dist int64, q, k tokenize.Token) {
	rec := func(kind Kind, d int64) {
		s.pairs[kind]++
		s.maxAbs[kind] = max(s.maxAbs[kind], d, -d)
		for i, sch := range c.schemes[kind] {
			s.sc[kind][i].record(sch, d)
		}
	}
	rec(Distance, dist)
	if a := max(dist, -dist); int64(len(s.dneg)) <= a {
		grow := a + 1 - int64(len(s.dneg))
		s.dneg = append(s.dneg, make([]int64, grow)...)
		s.dpos = append(s.dpos, make([]int64, grow)...)
	}
	if dist <= 0 {
		s.dneg[-dist]++
	} else {
		s.dpos[dist]++
	}
	dt := int64(k.Time) - int64(q.Time)
	rec(Time, dt)
	a := max(dt, -dt)
	s.tbins[sort.Search(len(c.bounds), func(i int) bool { return c.bounds[i] >= a })]++
	if q.Pitch < 0 || k.Pitch < 0 {
		*noPitch++
		return
	}
	dp := int64(k.Pitch) - int64(q.Pitch)
	rec(Pitch, dp)
	s.phist[dp+127]++
}
