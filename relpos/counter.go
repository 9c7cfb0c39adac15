package relpos

import (
	"fmt"
	"math"
	"math/bits"
	"slices"
	"sort"

	"github.com/relshard/relshard/tokenize"
)

// Class is an instrument class of pairs for the breakdown.
type Class int

// Instrument classes: a pair belongs to a class when both of its tokens do.
const (
	Drums   Class = iota // tokenize.InstDrums
	Pitched              // General MIDI programs 0-127
	numClasses
)

func (c Class) String() string {
	if c == Drums {
		return "drums"
	}
	return "pitched"
}

// pitchSpan is the number of pitch offsets −127..127.
const pitchSpan = 255

// Counter counts the offsets of the pairs of training windows into a Tally, exactly in
// about O(L·C) per window of L tokens and C bucket edges: token distance in closed form
// (within an instrument class from a bitset histogram and rank lookups), time with one
// walk over the close pairs and one moving pointer per farther edge over the
// non-decreasing times, pitch with a running pitch histogram. A Counter keeps scratch
// buffers: use one per goroutine.
type Counter struct {
	cfg     Config
	schemes [numKinds][]*Scheme
	// cuts are the offsets x ≤ 0, ascending, at which kinds counted by pointers (time;
	// distance within an instrument class) record the number of pairs with Δ < x.
	cuts [numKinds][]int64
	// timeIdx[d] is the last index i with cuts[Time][i] ≤ −d, for d up to a table size.
	timeIdx []int32
	// mags are the magnitudes a at which the number of pairs with |Δ| ≤ a is known on
	// pointer-counted kinds: every a ≤ exact, then steps of max(1, a/12).
	mags []int64
	// exact is Config.ExactUpTo: magnitudes up to it are counted one by one (stream.small).
	exact int64
	// bounds are the time magnitudes binned when sampling: mags and budget magnitudes.
	bounds []int64

	jointT, jointP *Scheme
	pitchBucket    [pitchSpan]int32 // bucket of Δp+127 in jointP

	// scratch
	val        []int64
	class      [numClasses]classScratch
	pit        []int16
	gval, gpre []int64
	gcnt, gbin []int64
	words      []uint64
	phist      [pitchSpan]int64 // one window's pitch offsets
	tab        []int32
	hist       []int64
	unit       int64   // the window's time unit (timeUnit), for rankTable
	rank       []int32 // rankTable: tokens at or below each value step (a window's tokens fit)
	steps      []int64 // rankTable: each group's value in steps from the first
}

// DefaultExact is the default Config.ExactUpTo: the largest magnitude up to which quantiles
// of pointer-counted kinds are exact; above it they are known within a step of a/12
// (≤ 8.4 %).
const DefaultExact = 32

// maxExact bounds Config.ExactUpTo.
const maxExact = 1 << 16

func quantileMags(exactMags int64) []int64 {
	var m []int64
	for a := int64(0); a <= math.MaxInt32; {
		m = append(m, a)
		if a < exactMags {
			a++
		} else {
			a += max(1, a/12)
		}
	}
	return m
}

// NewCounter validates the config and prepares the schemes.
func NewCounter(cfg Config) (*Counter, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	cfg = cfg.Resolved()
	exactMags := int64(cfg.ExactUpTo)
	c := &Counter{cfg: cfg, mags: quantileMags(exactMags), exact: exactMags}
	for _, k := range Kinds {
		for _, spec := range cfg.Specs(k) {
			s, err := spec.Build(direction(k, cfg.Pairs))
			if err != nil {
				return nil, err
			}
			c.schemes[k] = append(c.schemes[k], s)
		}
	}
	for _, k := range []Kind{Distance, Time} {
		var cuts []int64
		add := func(x int64) {
			switch {
			case x <= 0:
				cuts = append(cuts, x)
			case cfg.Pairs == Bidirectional:
				cuts = append(cuts, -x+1) // #(Δ < x) = pairs − #(Δ < −x+1) by symmetry
			}
		}
		for _, s := range c.schemes[k] {
			for _, x := range s.cutPoints() {
				add(x)
			}
		}
		for _, a := range c.mags {
			add(-a)
		}
		for _, a := range c.budgetMags(k) {
			add(-a)
		}
		// Offsets in (−exact, 0] come from the per-pair walk (stream.small); the
		// pointers count the rest, from −exact down.
		cuts = append(cuts, -exactMags)
		keep := cuts[:0]
		for _, x := range cuts {
			if x <= -exactMags {
				keep = append(keep, x)
			}
		}
		c.cuts[k] = sortedUnique(keep)
	}
	c.timeIdx = cutTable(c.cuts[Time], exactMags)
	c.bounds = sortedUnique(append(append([]int64(nil), c.mags...), c.budgetMags(Time)...))
	if cfg.Joint {
		c.jointT, c.jointP = c.schemes[Time][0], c.schemes[Pitch][0]
		for d := -127; d <= 127; d++ {
			c.pitchBucket[d+127] = int32(c.jointP.Bucket(int64(d)))
		}
	}
	return c, nil
}

// Config returns the resolved config.
func (c *Counter) Config() Config { return c.cfg }

// Schemes returns the schemes of an offset kind in config order.
func (c *Counter) Schemes(k Kind) []*Scheme { return c.schemes[k] }

// oneSided reports whether the offsets of kind k are all ≤ 0: token distance and time
// of causal pairs. Pitch offsets take both signs in either mode.
func (c *Counter) oneSided(k Kind) bool { return c.cfg.Pairs == Causal && k != Pitch }

// budgetClip returns the largest clip whose rows fit the budget for kind k, or −1.
func (c *Counter) budgetClip(k Kind) int {
	b := c.cfg.Budget
	if b <= 0 {
		return -1
	}
	if c.oneSided(k) {
		return b - 1 // buckets −k..0 are the only ones causal pairs reach
	}
	return (b - 1) / 2
}

// budgetMags returns, per budget width w, the largest magnitude inside clip k: (k+1)w − 1.
func (c *Counter) budgetMags(k Kind) []int64 {
	clip := c.budgetClip(k)
	if clip < 0 {
		return nil
	}
	var m []int64
	for _, w := range c.cfg.BudgetWidths.of(k) {
		m = append(m, int64(clip+1)*int64(w)-1)
	}
	return m
}

// Tally accumulates the counts of many windows. Tallies of one Counter add up with Add.
type Tally struct {
	Windows int64 // windows counted
	Tokens  int64 // tokens in them
	NoPitch int64 // pairs in which at least one token has no pitch (counted, not bucketed by pitch)

	sampled bool
	all     stream
	class   [numClasses]stream
	joint   []int64 // jointT bucket × jointP bucket, row-major
}

// stream holds the counts of one stream of tokens: the whole window or one class.
type stream struct {
	pairs  [numKinds]int64
	maxAbs [numKinds]int64
	// exact counting
	dneg, dpos []int64           // distance: pairs at Δ = −a and +a (whole window)
	phist      [pitchSpan]int64  // pitch: pairs at Δp + 127
	below      [numKinds][]int64 // pointer-counted kinds: pairs with Δ < cuts[k][i]
	small      [numKinds][]int64 // pointer-counted kinds: pairs with Δ = −a, 1 ≤ a ≤ Counter.exact
	// sampling: per-scheme counts; distance and pitch offsets in dneg, dpos and phist;
	// time magnitudes in bins: tbins[i] = pairs with bounds[i−1] < |Δ| ≤ bounds[i]
	sc    [numKinds][]SchemeCounts
	tbins []int64
}

// NewTally returns an empty tally for this counter.
func (c *Counter) NewTally() *Tally {
	t := &Tally{sampled: c.cfg.Sample > 0 && c.cfg.Sample < 1}
	c.initStream(&t.all, t.sampled)
	for i := range t.class {
		c.initStream(&t.class[i], t.sampled)
	}
	if c.jointT != nil {
		t.joint = make([]int64, c.jointT.Buckets()*c.jointP.Buckets())
	}
	return t
}

func (c *Counter) initStream(s *stream, sampled bool) {
	if sampled {
		s.tbins = make([]int64, len(c.bounds)+1)
	}
	for _, k := range Kinds {
		if sampled {
			s.sc[k] = make([]SchemeCounts, len(c.schemes[k]))
			for i, sch := range c.schemes[k] {
				s.sc[k][i].Buckets = make([]int64, sch.Buckets())
			}
			continue
		}
		if c.cuts[k] != nil {
			s.below[k] = make([]int64, len(c.cuts[k]))
			s.small[k] = make([]int64, c.exact+1)
		}
	}
}

// Add adds the counts of o, a tally of the same counter, to t.
func (t *Tally) Add(o *Tally) {
	t.Windows += o.Windows
	t.Tokens += o.Tokens
	t.NoPitch += o.NoPitch
	t.all.add(&o.all)
	for i := range t.class {
		t.class[i].add(&o.class[i])
	}
	for i, v := range o.joint {
		t.joint[i] += v
	}
}

func (s *stream) add(o *stream) {
	for k := range s.pairs {
		s.pairs[k] += o.pairs[k]
		s.maxAbs[k] = max(s.maxAbs[k], o.maxAbs[k])
		for i, v := range o.below[k] {
			s.below[k][i] += v
		}
		for i, v := range o.small[k] {
			s.small[k][i] += v
		}
		for i := range o.sc[k] {
			s.sc[k][i].add(o.sc[k][i])
		}
	}
	s.dneg = addGrow(s.dneg, o.dneg)
	s.dpos = addGrow(s.dpos, o.dpos)
	for i, v := range o.tbins {
		s.tbins[i] += v
	}
	for i, v := range o.phist {
		s.phist[i] += v
	}
}

func addGrow(dst, src []int64) []int64 {
	if len(src) > len(dst) {
		dst = append(dst, make([]int64, len(src)-len(dst))...)
	}
	for i, v := range src {
		dst[i] += v
	}
	return dst
}

// checkWindow reports the first token that breaks the Token contract.
func checkWindow(tokens []tokenize.Token) error {
	for i, tk := range tokens {
		if tk.Pitch < -1 || tk.Pitch > 127 {
			return fmt.Errorf("window token %d: pitch %d outside -1..127", i, tk.Pitch)
		}
		if tk.Inst < -1 || tk.Inst > tokenize.InstDrums {
			return fmt.Errorf("window token %d: instrument %d outside -1..%d", i, tk.Inst, tokenize.InstDrums)
		}
		if i > 0 && tk.Time < tokens[i-1].Time {
			return fmt.Errorf("window token %d: time %d before the previous token's %d (times must not decrease)", i, tk.Time, tokens[i-1].Time)
		}
	}
	return nil
}

// pairCount is the number of pairs of n tokens in the mode.
func pairCount(n int64, m Mode) int64 {
	if m == Causal {
		return n * (n + 1) / 2
	}
	return n * n
}

// begin checks a window for Count (sampled false) or Sample and counts it and its
// tokens in t; it returns the number of tokens.
func (t *Tally) begin(tokens []tokenize.Token, sampled bool) (int64, error) {
	if t.sampled != sampled {
		if sampled {
			return 0, fmt.Errorf("relpos: Sample on an exact tally; use Count")
		}
		return 0, fmt.Errorf("relpos: Count on a sampling tally; use Sample")
	}
	if err := checkWindow(tokens); err != nil {
		return 0, err
	}
	t.Windows++
	t.Tokens += int64(len(tokens))
	return int64(len(tokens)), nil
}

// Count adds the pairs of one window to t, exactly. It errors, without counting, on a
// window that breaks the tokenize.Token contract (times decreasing, pitch or
// instrument out of range). With sampling configured, use Sample instead.
func (c *Counter) Count(t *Tally, tokens []tokenize.Token) error {
	n, err := t.begin(tokens, false)
	if err != nil || n == 0 {
		return err
	}
	mode := c.cfg.Pairs
	all := &t.all

	// Token distance, closed form: n − a pairs at each offset ±a.
	P := pairCount(n, mode)
	all.pairs[Distance] += P
	all.maxAbs[Distance] = max(all.maxAbs[Distance], n-1)
	if int64(len(all.dneg)) < n {
		all.dneg = append(all.dneg, make([]int64, n-int64(len(all.dneg)))...)
		all.dpos = append(all.dpos, make([]int64, n-int64(len(all.dpos)))...)
	}
	for a := int64(0); a < n; a++ {
		all.dneg[a] += n - a
	}
	if mode == Bidirectional {
		for a := int64(1); a < n; a++ {
			all.dpos[a] += n - a
		}
	}

	// Time: moving pointers.
	c.val = c.val[:0]
	for _, tk := range tokens {
		c.val = append(c.val, int64(tk.Time))
	}
	all.pairs[Time] += P
	c.unit = timeUnit(c.val)
	c.countPointers(c.val, c.cuts[Time], c.timeIdx, all.below[Time], all.small[Time], &all.maxAbs[Time])

	// Pitch: running histogram.
	c.pit = c.pit[:0]
	for _, tk := range tokens {
		if tk.Pitch >= 0 {
			c.pit = append(c.pit, tk.Pitch)
		}
	}
	// The window's pitch offsets go to a histogram of their own first: a class holding
	// every pitched token (the pitched class when drums are dropped) has the same ones.
	c.phist = [pitchSpan]int64{}
	var pmax int64
	pp := countPitch(c.pit, mode, &c.phist, &pmax)
	addPitch(all, &c.phist, pmax, pp)
	t.NoPitch += P - pp

	if *c.cfg.Instruments {
		// one pass sorts the tokens into the classes' streams (the classes of inClass)
		for cl := range c.class {
			cs := &c.class[cl]
			cs.pos, cs.val, cs.pit = cs.pos[:0], cs.val[:0], cs.pit[:0]
		}
		for i, tk := range tokens {
			var cs *classScratch
			switch {
			case tk.Inst == tokenize.InstDrums:
				cs = &c.class[Drums]
			case tk.Inst >= 0 && tk.Inst < tokenize.InstDrums:
				cs = &c.class[Pitched]
			default:
				continue
			}
			cs.pos = append(cs.pos, int64(i))
			cs.val = append(cs.val, int64(tk.Time))
			if tk.Pitch >= 0 {
				cs.pit = append(cs.pit, tk.Pitch)
			}
		}
		for cl := range c.class {
			s, cs := &t.class[cl], &c.class[cl]
			c.countClass(s, cs)
			if len(cs.pit) == len(c.pit) && len(cs.pit) > 0 {
				// every pitched token is in this class: the same pitch sequence
				addPitch(s, &c.phist, pmax, pp)
			} else {
				s.pairs[Pitch] += countPitch(cs.pit, c.cfg.Pairs, &s.phist, &s.maxAbs[Pitch])
			}
		}
	}
	if c.jointT != nil {
		c.countJoint(t.joint, tokens)
	}
	return nil
}

// inClass reports whether a token belongs to an instrument class.
func inClass(tk tokenize.Token, cl Class) bool {
	if cl == Drums {
		return tk.Inst == tokenize.InstDrums
	}
	return tk.Inst >= 0 && tk.Inst < tokenize.InstDrums
}

// classScratch holds one class's sub-stream of a window: the window positions, times
// and pitches of its tokens.
type classScratch struct {
	pos, val []int64
	pit      []int16
}

// countClass counts the token distances and time offsets of the pairs of one window
// whose tokens both belong to a class: the class's tokens form a sub-stream whose
// distances are differences of window positions. Count adds their pitch offsets.
func (c *Counter) countClass(s *stream, cs *classScratch) {
	m := int64(len(cs.pos))
	if m == 0 {
		return
	}
	P := pairCount(m, c.cfg.Pairs)
	s.pairs[Distance] += P
	s.pairs[Time] += P
	c.countPositions(cs.pos, s.below[Distance], s.small[Distance], &s.maxAbs[Distance])
	c.countPointers(cs.val, c.cuts[Time], c.timeIdx, s.below[Time], s.small[Time], &s.maxAbs[Time])
}

// addPitch adds one window's pitch offsets, counted into hist with the largest |Δp|
// maxAbs over pairs pairs, to a stream.
func addPitch(s *stream, hist *[pitchSpan]int64, maxAbs, pairs int64) {
	for i, n := range hist {
		s.phist[i] += n
	}
	s.maxAbs[Pitch] = max(s.maxAbs[Pitch], maxAbs)
	s.pairs[Pitch] += pairs
}

// countPositions counts, as countPointers does, the pairs of the distinct increasing
// window positions pos of a class's tokens by token distance, in two exact parts split at
// a distance A chosen per call to minimise the estimated steps:
//   - distances d ≤ A from a bitset B of the positions: the pairs at distance d are
//     popcount(B & B<<d), a word at a time; small and the cuts down to −A follow from
//     this histogram;
//   - each farther cut −a from a table R[y] of the positions at most y: the pairs at
//     distance > a are Σ R[q − a − 1] over the positions q > a, with no search.
func (c *Counter) countPositions(pos, below, small []int64, maxAbs *int64) {
	m := len(pos)
	if m == 0 {
		return
	}
	cuts := c.cuts[Distance]
	span := pos[m-1] - pos[0]
	*maxAbs = max(*maxAbs, span)
	if span == 0 {
		return
	}
	first := sort.Search(len(cuts), func(i int) bool { return cuts[i] > -span })
	nw := int(span>>6) + 1
	// Steps: the bitset costs about nw − d/64 words at distance d; a far cut −a about
	// m·(1 − a/span) lookups. Walk the split outward from c.exact, the least it may be.
	bitset := func(a int64) float64 {
		a = min(a, span)
		return float64(a) * (float64(nw) - float64(a)/128)
	}
	split := len(cuts) // cuts[split:] are within A
	for split > first && -cuts[split-1] <= c.exact {
		split--
	}
	var far float64
	for k := first; k < split; k++ {
		far += float64(m) * (1 - float64(-cuts[k])/float64(span))
	}
	a := c.exact
	best := bitset(a) + far
	for k := split - 1; k >= first; k-- {
		far -= float64(m) * (1 - float64(-cuts[k])/float64(span))
		if cost := bitset(-cuts[k]) + far; cost < best {
			best, split, a = cost, k, -cuts[k]
		}
	}
	a = min(a, span)

	words := c.words[:0]
	for range nw {
		words = append(words, 0)
	}
	c.words = words
	for _, p := range pos {
		q := p - pos[0]
		words[q>>6] |= 1 << (q & 63)
	}
	// hist[d] = pairs at distance d ≤ a, then the pairs at distance ≤ d
	hist := c.hist[:0]
	hist = append(hist, 0)
	for d := int64(1); d <= a; d++ {
		q, r := int(d>>6), uint(d&63)
		var n int
		var prev uint64 // the word before src
		hi, lo := words[q:], words[:len(words)-q]
		for i, w := range hi {
			src := lo[i]
			// prev>>1>>(63−r) is prev>>(64−r), 0 when r = 0, with both shifts below 64
			n += bits.OnesCount64(w & (src<<r | prev>>1>>((63-r)&63)))
			prev = src
		}
		hist = append(hist, int64(n))
	}
	c.hist = hist
	for d := int64(1); d <= min(c.exact, a); d++ {
		small[d] += hist[d]
	}
	for d := int64(1); d <= a; d++ {
		hist[d] += hist[d-1]
	}
	pairs := int64(m) * int64(m-1) / 2 // at distance ≥ 1
	for k := max(split, first); k < len(cuts); k++ {
		below[k] += pairs - hist[-cuts[k]]
	}
	if first >= split {
		return
	}
	tab := c.tab[:0]
	for range span + 1 {
		tab = append(tab, 0)
	}
	c.tab = tab
	// tab[y] = the positions at most y after the first
	for i, p := range pos {
		tab[p-pos[0]] = int32(i + 1)
	}
	for y := int64(1); y <= span; y++ {
		tab[y] = max(tab[y], tab[y-1])
	}
	for k := first; k < split; k++ {
		a := -cuts[k]
		// a pair (p, q) is at distance > a when p ≤ q − a − 1, for q > a
		i := sort.Search(m, func(i int) bool { return pos[i]-pos[0] > a })
		var sum int64
		for _, q := range pos[i:] {
			sum += int64(tab[q-pos[0]-a-1])
		}
		below[k] += sum
	}
}

// countPointers counts the ordered pairs (i, j) of the non-decreasing values v by
// their offset v[j] − v[i] < 0 (such pairs have j < i: they are causal pairs, and in
// bidirectional mode the counts of positive offsets follow by symmetry):
//   - small[a] += pairs at offset −a for 1 ≤ a ≤ c.exact;
//   - below[k] += pairs with offset < cuts[k] (all ≤ −c.exact).
//
// Equal values are grouped first, so the cost depends on the G distinct values rather
// than on len(v). The cuts near zero (magnitudes up to a split A, which always covers
// c.exact) come from one walk over the pairs of groups at most A apart, binned by cut;
// each farther cut takes one moving pointer over the groups that can reach below it.
// A is chosen per call to minimise the estimated steps of the two; both are exact.
func (c *Counter) countPointers(v, cuts []int64, idx []int32, below, small []int64, maxAbs *int64) {
	n := len(v)
	if n == 0 {
		return
	}
	span := v[n-1] - v[0]
	*maxAbs = max(*maxAbs, span)
	vals, cnts, pre := c.gval[:0], c.gcnt[:0], c.gpre[:0]
	for i, x := range v {
		if i > 0 && x == v[i-1] {
			cnts[len(cnts)-1]++
			continue
		}
		vals, cnts = append(vals, x), append(cnts, 1)
	}
	pre = append(pre, 0)
	for _, m := range cnts {
		pre = append(pre, pre[len(pre)-1]+m)
	}
	c.gval, c.gcnt, c.gpre = vals, cnts, pre
	if span == 0 {
		return // every pair has offset 0
	}
	// With a rank table a far cut costs a lookup a group instead of a pointer's two
	// steps, so the split moves nearer zero and the walk shortens.
	table := c.unit > 0 && span/c.unit+1 <= int64(maxRankPerGroup*len(vals)) && n <= math.MaxInt32
	weight := pointerWeight
	if table {
		weight = rankWeight
	}
	first, split := splitCuts(cuts, idx, len(vals), span, weight)
	c.walkNear(vals, cnts, pre, cuts, idx, below, small, split)
	if first >= split {
		return
	}
	if table {
		c.rankTable(vals, cnts, span)
		for k := first; k < split; k++ {
			below[k] += c.rankBelow(cnts, cuts[k])
		}
		return
	}
	for k := first; k < split; k++ {
		below[k] += pointerBelow(vals, cnts, pre, cuts[k])
	}
}

// timeUnit returns the greatest common divisor of the differences of the
// non-decreasing times v, 0 when all are equal. The encodings write times in whole
// steps (the performance encoding's shift, often 10 ms; grid steps), and any subset
// of the times (an instrument class) has a multiple of it as its own.
func timeUnit(v []int64) int64 {
	var unit uint32
	for i := 1; i < len(v); i++ {
		d := v[i] - v[i-1]
		if d == 0 {
			continue
		}
		if d > math.MaxUint32 {
			return 1
		}
		// 32-bit remainders: about half the cost of 64-bit ones
		if unit == 0 || uint32(d)%unit != 0 {
			a, b := uint32(d), unit
			for b != 0 {
				a, b = b, a%b
			}
			if unit = a; unit == 1 {
				return 1
			}
		}
	}
	return int64(unit)
}

// rankTable prepares rankBelow for the groups vals (counts cnts, values spread over
// span > 0, in whole steps of c.unit > 0): c.rank[i] is the number of tokens at most i
// steps after the first, c.steps[g] the steps of group g. countPointers uses it when
// the table is short next to the groups (maxRankPerGroup).
func (c *Counter) rankTable(vals, cnts []int64, span int64) {
	unit, n := c.unit, span/c.unit+1
	rank, steps := c.rank[:0], c.steps[:0]
	for range n {
		rank = append(rank, 0)
	}
	for g, v := range vals {
		q := (v - vals[0]) / unit
		steps = append(steps, q)
		rank[q] = int32(cnts[g])
	}
	for i := int64(1); i < n; i++ {
		rank[i] += rank[i-1]
	}
	c.rank, c.steps = rank, steps
}

// Costs of a far cut per group, in walk steps, for splitCuts: a moving pointer takes
// two steps a group (the group loop and the pointer), a rank lookup one.
const (
	pointerWeight = 2.0
	rankWeight    = 1.0
)

// maxRankPerGroup bounds the length of rankTable's table per group: past it, building
// the table costs more than the pointers it saves. On the windows of the openttd files
// (BenchmarkCountReal) 16 and 64 measured alike for the grid encoding; 64 lets the
// sparser performance windows use the table too, 18-24 % faster than pointers there.
const maxRankPerGroup = 64

// rankBelow is pointerBelow from the table of rankTable: the tokens with a value below
// vals[g] + x (x < 0) are those at most steps[g] − ⌊−x/unit⌋ − 1 steps after the first
// (a whole number of steps is below vals[g] − |x| exactly when it is at most that), a
// lookup for each group with no branch to mispredict.
func (c *Counter) rankBelow(cnts []int64, x int64) int64 {
	s := -x/c.unit + 1
	steps, rank := c.steps, c.rank
	g, _ := slices.BinarySearch(steps, s) // the first group at s or more steps
	var sum int64
	for ; g < len(steps); g++ {
		sum += cnts[g] * int64(rank[steps[g]-s])
	}
	return sum
}

// splitCuts returns the first cut that any pair can lie below (cuts[k] > −span; the cuts
// before it count nothing) and the split: cuts[split:] are counted by walkNear,
// cuts[first:split] by pointers.
func splitCuts(cuts []int64, idx []int32, groups int, span int64, weight float64) (first, split int) {
	first = sort.Search(len(cuts), func(i int) bool { return cuts[i] > -span })
	split = len(cuts) - 1 // cuts end with −exact, always walked
	if split < first {
		return first, len(cuts)
	}
	// Estimated cost, values spread evenly over the span: the walk up to magnitude A
	// visits about G²/2 · A/span group pairs; a pointer at cut x about G·(1 − |x|/span)
	// groups, twice (the group loop and the pointer). A walk step (a table lookup and a
	// scattered add) costs about two pointer steps: measured on BenchmarkCountDefault,
	// weights 1 to 4 are within a few per cent, 0.5 and below markedly slower.
	g := float64(groups)
	walk := func(a int64) float64 { return g * g * min(1, float64(a)/float64(span)) }
	var ptr float64
	for k := first; k < split; k++ {
		ptr += weight * g * (1 - float64(-cuts[k])/float64(span))
	}
	best := walk(-cuts[split]) + ptr
	for k := split - 1; k >= first; k-- {
		a := -cuts[k]
		if a >= int64(len(idx)) {
			break // beyond the cut table
		}
		ptr -= weight * g * (1 - float64(a)/float64(span))
		if cost := walk(a) + ptr; cost < best {
			best, split = cost, k
		}
	}
	return first, split
}

// walkNear adds, for every pair of groups at most A = −cuts[split] apart (c.exact when
// split = len(cuts)), its pairs to small (offsets down to −exact) and counts the
// cuts[split:] from them: a pair at offset −d is not below cut x exactly when x ≤ −d,
// that is for the cuts up to idx[d].
func (c *Counter) walkNear(vals, cnts, pre, cuts []int64, idx []int32, below, small []int64, split int) {
	a := c.exact
	if split < len(cuts) {
		a = -cuts[split]
	}
	bins := c.gbin[:0]
	for range len(cuts) {
		bins = append(bins, 0)
	}
	c.gbin = bins
	last := len(cuts) - 1
	var neg, nearExact int64 // pairs with offset < 0, and with −exact ≤ offset < 0
	exact := c.exact
	for g, x := range vals {
		cg := cnts[g]
		neg += cg * pre[g]
		for h := g - 1; h >= 0; h-- {
			d := x - vals[h]
			if d > a {
				break
			}
			w := cg * cnts[h]
			if d <= exact {
				small[d] += w
				nearExact += w
				continue
			}
			bins[idx[d]] += w
		}
	}
	bins[last] += nearExact
	var near int64 // pairs with −(−cuts[k]) ≤ offset < 0
	for k := last; k >= split; k-- {
		near += bins[k]
		below[k] += neg - near
	}
}

// cutTable returns, for 0 ≤ d ≤ min(max(maxTable, exact), −cuts[0]), the last cut k with
// cuts[k] ≤ −d (cuts ascending, all ≤ −exact): the bin of a pair at offset −d in walkNear.
func cutTable(cuts []int64, exact int64) []int32 {
	if len(cuts) == 0 {
		return nil
	}
	n := min(max(maxTable, exact), -cuts[0]) + 1
	idx := make([]int32, n)
	k := len(cuts) - 1
	for d := range n {
		for k >= 0 && cuts[k] > -d {
			k--
		}
		idx[d] = int32(k)
	}
	return idx
}

// maxTable bounds the magnitudes that walkNear may walk to beyond Config.ExactUpTo.
const maxTable = 1 << 15

// pointerBelow returns the pairs of groups with offset < x (x < 0): for each group g, the
// keys below vals[g] + x are the groups before a pointer that only moves forward. Groups
// with vals[g] + x ≤ vals[0] have none and are skipped.
func pointerBelow(vals, cnts, pre []int64, x int64) int64 {
	lim := vals[0] - x
	g := sort.Search(len(vals), func(i int) bool { return vals[i] > lim })
	var sum int64
	p := 0
	for ; g < len(vals); g++ {
		thr := vals[g] + x
		for vals[p] < thr { // stops at p ≤ g since vals[g] ≥ thr
			p++
		}
		sum += cnts[g] * pre[p]
	}
	return sum
}

// countPitch adds the pitch offsets of all pairs of the pitches p (in stream order) to
// hist and returns the number of pairs. Causal mode keeps a running histogram of the
// pitches seen so far (keys j ≤ i); bidirectional mode correlates the window's pitch
// histogram with itself. Both cost O(len(p)·R) or O(R²) for a pitch range R ≤ 128.
func countPitch(p []int16, mode Mode, hist *[pitchSpan]int64, maxAbs *int64) int64 {
	if len(p) == 0 {
		return 0
	}
	var h [128]int64
	lo, hi := int(p[0]), int(p[0])
	if mode == Causal {
		for _, q := range p {
			qi := int(q)
			h[qi]++
			lo, hi = min(lo, qi), max(hi, qi)
			src := h[lo : hi+1]
			row := hist[127-qi+lo:][:len(src)] // as long as src: no bounds check in the loop
			for b, n := range src {
				row[b] += n
			}
		}
	} else {
		for _, q := range p {
			h[q]++
			lo, hi = min(lo, int(q)), max(hi, int(q))
		}
		for a := lo; a <= hi; a++ {
			if h[a] == 0 {
				continue
			}
			ha, src := h[a], h[lo:hi+1]
			row := hist[127-a+lo:][:len(src)]
			for b, n := range src {
				row[b] += ha * n
			}
		}
	}
	*maxAbs = max(*maxAbs, int64(hi-lo))
	return pairCount(int64(len(p)), mode)
}

// countJoint walks every pair of pitched tokens and adds it to the time × pitch table.
// Along a query's keys the time offset is monotone, so the time segment is found by a
// moving index rather than a search.
func (c *Counter) countJoint(joint []int64, tokens []tokenize.Token) {
	segs := c.jointT.segs
	np := c.jointP.Buckets()
	for i, q := range tokens {
		if q.Pitch < 0 {
			continue
		}
		ti := int64(q.Time)
		// keys j ≤ i, Δt falling as j falls
		g := c.jointT.segment(0)
		for j := i; j >= 0; j-- {
			k := tokens[j]
			if k.Pitch < 0 {
				continue
			}
			d := int64(k.Time) - ti
			for d < segs[g].Lo {
				g--
			}
			joint[segs[g].Bucket*np+int(c.pitchBucket[int(k.Pitch)-int(q.Pitch)+127])]++
		}
		if c.cfg.Pairs == Causal {
			continue
		}
		g = c.jointT.segment(0)
		for j := i + 1; j < len(tokens); j++ {
			k := tokens[j]
			if k.Pitch < 0 {
				continue
			}
			d := int64(k.Time) - ti
			for d > segs[g].Hi {
				g++
			}
			joint[segs[g].Bucket*np+int(c.pitchBucket[int(k.Pitch)-int(q.Pitch)+127])]++
		}
	}
}
