package relpos

import (
	"errors"
	"fmt"
	"math"
	"math/big"
	"sort"
	"strconv"
	"strings"
)

// Mode selects which pairs attention sees, and which side a log scheme buckets.
type Mode string

// Modes.
const (
	Causal        Mode = "causal"        // keys j ≤ i: offsets ≤ 0
	Bidirectional Mode = "bidirectional" // every key j of the window
)

func (m Mode) valid() bool { return m == Causal || m == Bidirectional }

// Scheme types.
const (
	TypeLinear = "linear" // clip(trunc(Δ/width), −clip, clip), Shaw et al. 2018
	TypeLog    = "log"    // exact then log-spaced buckets, Raffel et al. 2020
	TypeEdges  = "edges"  // explicit bucket edges
)

// Limits on scheme parameters, so that every table stays small and every bucket edge
// fits comfortably in an int64.
const (
	maxClip      = 1 << 20
	maxWidth     = 1 << 30
	maxLogBucket = 4096
	maxLogOffset = math.MaxInt32
	maxEdges     = 1 << 16
	maxEdgeValue = 1 << 40
)

// Saturation sides of a segment.
const (
	SatNone = 0
	SatLow  = -1 // offset below the scheme's range, clipped into its lowest bucket
	SatHigh = 1  // offset above the scheme's range, clipped into its highest bucket
)

// Segment is a run of consecutive offsets [Lo, Hi] (inclusive) that share one bucket id
// and one saturation side. Lo is math.MinInt64 and Hi math.MaxInt64 for open ends.
type Segment struct {
	Lo, Hi int64
	Bucket int
	Sat    int // SatNone, SatLow or SatHigh
}

// Scheme maps an offset (key minus query) to a bucket id in [0, Buckets()). The
// segments of a scheme cover every int64 offset exactly once, in increasing order.
type Scheme struct {
	Name      string  // canonical spec, e.g. "linear:width=1,clip=7"
	Type      string  // TypeLinear, TypeLog or TypeEdges
	Width     int     // linear
	Clip      int     // linear
	LogSize   int     // log: number of buckets
	MaxOffset int     // log: offsets with |Δ| ≥ MaxOffset saturate
	Exact     int     // log: offsets with |Δ| < Exact get a bucket each
	Direction Mode    // log: Causal buckets only Δ ≤ 0, Bidirectional both sides
	Edges     []int64 // edges: bucket b covers [Edges[b], Edges[b+1])
	segs      []Segment
	n         int
}

// Buckets returns the number of bucket ids (embedding rows) of the scheme.
func (s *Scheme) Buckets() int { return s.n }

// Segments returns the scheme's segments in increasing offset order. The slice is
// shared: do not modify it.
func (s *Scheme) Segments() []Segment { return s.segs }

// segment returns the index of the segment holding offset d.
func (s *Scheme) segment(d int64) int {
	segs := s.segs
	lo, hi := 0, len(segs)-1
	for lo < hi {
		m := int(uint(lo+hi+1) >> 1)
		if segs[m].Lo <= d {
			lo = m
		} else {
			hi = m - 1
		}
	}
	return lo
}

// Bucket returns the bucket id of offset d (key minus query).
func (s *Scheme) Bucket(d int64) int { return s.segs[s.segment(d)].Bucket }

// Saturation reports whether offset d lies beyond the scheme's range: SatLow, SatHigh
// or SatNone.
func (s *Scheme) Saturation(d int64) int { return s.segs[s.segment(d)].Sat }

// Linear returns the clipping scheme of Shaw et al. 2018 with a bucket width:
// bucket = clip(trunc(Δ/width), −clip, clip) + clip, so 2·clip+1 buckets, bucket id
// clip being offset 0. An offset is saturated when trunc(Δ/width) lies beyond ±clip.
func Linear(width, clip int) (*Scheme, error) {
	if width < 1 || width > maxWidth {
		return nil, fmt.Errorf("linear scheme: width %d outside 1..%d", width, maxWidth)
	}
	if clip < 0 || clip > maxClip {
		return nil, fmt.Errorf("linear scheme: clip %d outside 0..%d", clip, maxClip)
	}
	w, k := int64(width), int64(clip)
	s := &Scheme{Name: fmt.Sprintf("linear:width=%d,clip=%d", width, clip), Type: TypeLinear,
		Width: width, Clip: clip, n: 2*clip + 1}
	add := func(lo, hi int64, b int64, sat int) {
		s.segs = append(s.segs, Segment{Lo: lo, Hi: hi, Bucket: int(b + k), Sat: sat})
	}
	add(math.MinInt64, -(k+1)*w, -k, SatLow)
	for b := -k; b <= k; b++ {
		// trunc(Δ/w) = b: Δ in [b·w − w + 1, b·w] for b < 0, [b·w, b·w + w − 1] for b > 0.
		switch {
		case b < 0:
			add(b*w-w+1, b*w, b, SatNone)
		case b == 0:
			add(-w+1, w-1, 0, SatNone)
		default:
			add(b*w, b*w+w-1, b, SatNone)
		}
	}
	add((k+1)*w, math.MaxInt64, k, SatHigh)
	return s, nil
}

// Log returns the logarithmic scheme of Raffel et al. 2020 (the relative position
// bucket function of T5): with direction Bidirectional, the buckets are halved between
// the two signs (positive offsets get ids from buckets/2 up); on each side the first
// exact magnitudes get a bucket each and the rest up to maxOffset share log-spaced
// buckets; magnitudes ≥ maxOffset saturate into the last one. With direction Causal,
// positive offsets all go to bucket 0 (saturated high). exact = 0 selects the
// published default, half of the buckets of one side.
//
// The log edges are computed exactly in integer arithmetic: magnitude n gets bucket
// exact + m for the largest m with (n/exact)^(side−exact) ≥ (maxOffset/exact)^m, so
// offsets that sit exactly on a log edge (16, 32, 64 with 32 buckets up to 128) land
// where the real-valued formula puts them.
func Log(buckets, maxOffset, exact int, direction Mode) (*Scheme, error) {
	if !direction.valid() {
		return nil, fmt.Errorf("log scheme: direction %q is neither %q nor %q", direction, Causal, Bidirectional)
	}
	if buckets < 2 || buckets > maxLogBucket {
		return nil, fmt.Errorf("log scheme: buckets %d outside 2..%d", buckets, maxLogBucket)
	}
	side := buckets
	if direction == Bidirectional {
		if buckets%2 != 0 || buckets < 4 {
			return nil, fmt.Errorf("log scheme: bidirectional needs an even number of buckets ≥ 4, got %d", buckets)
		}
		side = buckets / 2
	}
	if exact == 0 {
		exact = side / 2
	}
	if exact < 1 || exact >= side {
		return nil, fmt.Errorf("log scheme: exact %d outside 1..%d (buckets per side %d)", exact, side-1, side)
	}
	if maxOffset <= exact || maxOffset > maxLogOffset {
		return nil, fmt.Errorf("log scheme: max %d outside %d..%d", maxOffset, exact+1, maxLogOffset)
	}
	s := &Scheme{Name: fmt.Sprintf("log:buckets=%d,max=%d,exact=%d,direction=%s", buckets, maxOffset, exact, direction),
		Type: TypeLog, LogSize: buckets, MaxOffset: maxOffset, Exact: exact, Direction: direction, n: buckets}
	mag := logMagnitudes(side, maxOffset, exact) // segments over magnitudes n ≥ 0
	// Negative side (and zero): Δ = −n, in increasing Δ, so magnitudes reversed.
	for i := len(mag) - 1; i >= 0; i-- {
		g := mag[i]
		lo, hi := negate(g.Hi), negate(g.Lo)
		sat := SatNone
		if g.Sat != SatNone {
			sat = SatLow
		}
		s.segs = append(s.segs, Segment{Lo: lo, Hi: hi, Bucket: g.Bucket, Sat: sat})
	}
	if direction == Causal {
		s.segs = append(s.segs, Segment{Lo: 1, Hi: math.MaxInt64, Bucket: 0, Sat: SatHigh})
		return s, nil
	}
	for _, g := range mag {
		if g.Hi < 1 {
			continue
		}
		g.Lo = max(g.Lo, 1)
		g.Bucket += side
		if g.Sat != SatNone {
			g.Sat = SatHigh
		}
		s.segs = append(s.segs, g)
	}
	return s, nil
}

// negate maps a magnitude bound to an offset bound, open ends to open ends.
func negate(v int64) int64 {
	if v == math.MaxInt64 {
		return math.MinInt64
	}
	return -v
}

// logMagnitudes returns the segments of one side over magnitudes n ≥ 0, the last
// segment open-ended and saturated (Sat != 0).
func logMagnitudes(side, maxOffset, exact int) []Segment {
	var segs []Segment
	for n := 0; n < exact; n++ {
		segs = append(segs, Segment{Lo: int64(n), Hi: int64(n), Bucket: n})
	}
	edges := logEdges(side, maxOffset, exact)
	for m, lo := range edges {
		hi := int64(maxOffset) - 1
		if m+1 < len(edges) {
			hi = edges[m+1] - 1
		}
		if lo <= hi {
			segs = append(segs, Segment{Lo: lo, Hi: hi, Bucket: exact + m})
		}
	}
	segs = append(segs, Segment{Lo: int64(maxOffset), Hi: math.MaxInt64, Bucket: side - 1, Sat: SatHigh})
	return segs
}

// logEdges returns, for each log bucket m in [0, side−exact), the smallest magnitude
// n that reaches it: the smallest n ≥ exact with n^a · exact^m ≥ maxOffset^m · exact^a,
// a = side − exact, which is (n/exact)^a ≥ (maxOffset/exact)^m without rounding.
func logEdges(side, maxOffset, exact int) []int64 {
	a := side - exact
	me, md := big.NewInt(int64(exact)), big.NewInt(int64(maxOffset))
	meA := new(big.Int).Exp(me, big.NewInt(int64(a)), nil)
	edges := make([]int64, a)
	var lhs, rhs, meM, nb big.Int
	for m := 0; m < a; m++ {
		meM.Exp(me, big.NewInt(int64(m)), nil)
		rhs.Exp(md, big.NewInt(int64(m)), nil)
		rhs.Mul(&rhs, meA)
		reaches := func(n int64) bool {
			nb.SetInt64(n)
			lhs.Exp(&nb, big.NewInt(int64(a)), nil)
			lhs.Mul(&lhs, &meM)
			return lhs.Cmp(&rhs) >= 0
		}
		// Start from the real-valued solution and settle exactly on the integer edge.
		x := float64(exact) * math.Pow(float64(maxOffset)/float64(exact), float64(m)/float64(a))
		n := min(max(int64(math.Ceil(x))-1, int64(exact)), int64(maxOffset))
		for !reaches(n) {
			n++
		}
		for n > int64(exact) && reaches(n-1) {
			n--
		}
		edges[m] = n
	}
	return edges
}

// EdgesScheme returns the scheme of explicit edges e0 < e1 < … < em: bucket b covers
// offsets [e_b, e_{b+1}); offsets below e0 saturate into bucket 0 and offsets ≥ em
// into bucket m−1.
func EdgesScheme(edges []int64) (*Scheme, error) {
	if len(edges) < 2 || len(edges) > maxEdges {
		return nil, fmt.Errorf("edges scheme: %d edges, want 2..%d", len(edges), maxEdges)
	}
	for i, e := range edges {
		if e < -maxEdgeValue || e > maxEdgeValue {
			return nil, fmt.Errorf("edges scheme: edge %d (%d) outside ±%d", i, e, int64(maxEdgeValue))
		}
		if i > 0 && e <= edges[i-1] {
			return nil, fmt.Errorf("edges scheme: edge %d (%d) not above edge %d (%d)", i, e, i-1, edges[i-1])
		}
	}
	parts := make([]string, len(edges))
	for i, e := range edges {
		parts[i] = strconv.FormatInt(e, 10)
	}
	m := len(edges) - 1
	s := &Scheme{Name: "edges:" + strings.Join(parts, ","), Type: TypeEdges,
		Edges: append([]int64(nil), edges...), n: m}
	s.segs = append(s.segs, Segment{Lo: math.MinInt64, Hi: edges[0] - 1, Bucket: 0, Sat: SatLow})
	for b := 0; b < m; b++ {
		s.segs = append(s.segs, Segment{Lo: edges[b], Hi: edges[b+1] - 1, Bucket: b})
	}
	s.segs = append(s.segs, Segment{Lo: edges[m], Hi: math.MaxInt64, Bucket: m - 1, Sat: SatHigh})
	return s, nil
}

// ParseEdges parses a comma-separated list of strictly increasing integers, such as
// "-64,-16,-4,-1,0,1".
func ParseEdges(s string) ([]int64, error) {
	if strings.TrimSpace(s) == "" {
		return nil, errors.New("parse edges: empty list")
	}
	fields := strings.Split(s, ",")
	if len(fields) > maxEdges {
		return nil, fmt.Errorf("parse edges: %d edges, at most %d", len(fields), maxEdges)
	}
	edges := make([]int64, 0, len(fields))
	for i, f := range fields {
		v, err := strconv.ParseInt(strings.TrimSpace(f), 10, 64)
		if err != nil {
			return nil, fmt.Errorf("parse edges: item %d %q: not an integer", i+1, strings.TrimSpace(f))
		}
		if v < -maxEdgeValue || v > maxEdgeValue {
			return nil, fmt.Errorf("parse edges: item %d (%d) outside ±%d", i+1, v, int64(maxEdgeValue))
		}
		if i > 0 && v <= edges[i-1] {
			return nil, fmt.Errorf("parse edges: item %d (%d) not above item %d (%d)", i+1, v, i, edges[i-1])
		}
		edges = append(edges, v)
	}
	if len(edges) < 2 {
		return nil, fmt.Errorf("parse edges: %d edge, want at least 2", len(edges))
	}
	return edges, nil
}

// cutPoints returns the offsets x at which a new segment starts (every segment's Lo but
// the first), in increasing order: counting pairs with Δ < x at each cut is enough to
// count every segment.
func (s *Scheme) cutPoints() []int64 {
	cuts := make([]int64, 0, len(s.segs)-1)
	for _, g := range s.segs[1:] {
		cuts = append(cuts, g.Lo)
	}
	return cuts
}

// sortedUnique sorts v and removes duplicates in place.
func sortedUnique(v []int64) []int64 {
	sort.Slice(v, func(i, j int) bool { return v[i] < v[j] })
	out := v[:0]
	for i, x := range v {
		if i == 0 || x != v[i-1] {
			out = append(out, x)
		}
	}
	return out
}
