package relpos

import (
	"math"
	"sort"
)

// QuantilePoints are the probabilities of the reported |Δ| quantiles.
var QuantilePoints = []float64{0.5, 0.9, 0.95, 0.99, 0.999}

// Report is the coverage of a tally: per offset kind and scheme, and broken down by
// instrument class and dataset. With sampling, counts are those of the sampled pairs
// and every share has a Wilson confidence interval.
type Report struct {
	Pairs      Mode    `json:"pairs"` // causal or bidirectional
	TimeUnit   string  `json:"time_unit,omitempty"`
	Sampled    bool    `json:"sampled"`
	Sample     float64 `json:"sample,omitempty"`     // share of pairs sampled
	Confidence float64 `json:"confidence,omitempty"` // of the intervals
	Windows    int64   `json:"windows"`
	Tokens     int64   `json:"tokens"`
	// NoPitch counts the pairs in which a token has no pitch: they have token distance
	// and time offsets but no pitch offset.
	NoPitch  int64      `json:"no_pitch"`
	Distance KindReport `json:"distance"`
	Time     KindReport `json:"time"`
	Pitch    KindReport `json:"pitch"`
	// Instruments breaks the pairs down into drum pairs and pitched-instrument pairs.
	Instruments []ClassReport `json:"instruments,omitempty"`
	// Joint is the time × pitch table, when configured.
	Joint *JointReport `json:"joint,omitempty"`
	// Datasets breaks the report down per dataset, in name order.
	Datasets []DatasetReport `json:"datasets,omitempty"`
}

// Kind returns the report of one offset kind.
func (r *Report) Kind(k Kind) *KindReport {
	switch k {
	case Distance:
		return &r.Distance
	case Time:
		return &r.Time
	}
	return &r.Pitch
}

// ClassReport is the coverage of the pairs of one instrument class.
type ClassReport struct {
	Class    string     `json:"class"` // drums or pitched
	Distance KindReport `json:"distance"`
	Time     KindReport `json:"time"`
	Pitch    KindReport `json:"pitch"`
}

// DatasetReport is the coverage of one dataset's windows.
type DatasetReport struct {
	Dataset  string     `json:"dataset"`
	Windows  int64      `json:"windows"`
	Tokens   int64      `json:"tokens"`
	NoPitch  int64      `json:"no_pitch"`
	Distance KindReport `json:"distance"`
	Time     KindReport `json:"time"`
	Pitch    KindReport `json:"pitch"`
}

// KindReport is the coverage of one offset kind.
type KindReport struct {
	Pairs int64 `json:"pairs"`
	// Max is the largest |Δ| counted (exact).
	Max       int64          `json:"max"`
	Quantiles []Quantile     `json:"quantiles"`
	Schemes   []SchemeReport `json:"schemes"`
	// Recommend gives, for each linear width in use, the smallest clip reaching each target.
	Recommend []Recommendation `json:"recommend,omitempty"`
	// Budget lists the (width, clip) pairs that fit the embedding budget.
	Budget []BudgetFit `json:"budget,omitempty"`
}

// Quantile is a quantile of |Δ|: the smallest magnitude a such that a share P of the
// pairs have |Δ| ≤ a. Where only a bracket is known (time offsets beyond the exact
// range), Low ≤ quantile ≤ Value and Exact is false; the bracket is at most 1/12 of
// Value wide.
type Quantile struct {
	P     float64 `json:"p"`
	Value int64   `json:"value"`
	Low   int64   `json:"low"`
	Exact bool    `json:"exact"`
}

// Interval is a confidence interval of a share.
type Interval struct {
	Low  float64 `json:"low"`
	High float64 `json:"high"`
}

// SchemeReport is the coverage of one scheme.
type SchemeReport struct {
	Name    string  `json:"name"`
	Scheme  string  `json:"scheme"`
	Pairs   int64   `json:"pairs"`
	Inside  int64   `json:"inside"`
	SatLow  int64   `json:"sat_low"`
	SatHigh int64   `json:"sat_high"`
	Buckets []int64 `json:"buckets"` // pairs per bucket id
	// Offsets are the offsets of each bucket id, [from, to] with null for an open end.
	Offsets [][2]*int64 `json:"offsets"`
	// Shares of Pairs.
	InsideShare  float64   `json:"inside_share"`
	SatLowShare  float64   `json:"sat_low_share"`
	SatHighShare float64   `json:"sat_high_share"`
	BucketShares []float64 `json:"bucket_shares"`
	// Unused lists the bucket ids no pair reached.
	Unused []int `json:"unused"`
	// Entropy (nats) of the bucket distribution and exp(Entropy), the effective number
	// of buckets.
	Entropy   float64 `json:"entropy"`
	Effective float64 `json:"effective_buckets"`
	// Intervals, with sampling only.
	InsideCI  *Interval  `json:"inside_ci,omitempty"`
	SatLowCI  *Interval  `json:"sat_low_ci,omitempty"`
	SatHighCI *Interval  `json:"sat_high_ci,omitempty"`
	BucketCI  []Interval `json:"bucket_ci,omitempty"`
}

// Recommendation is the smallest clip k of a linear scheme of a width whose range holds
// a target share of the pairs (|Δ| < (k+1)·width). When the quantile is only bracketed,
// the clip lies in [Clip, ClipHigh].
type Recommendation struct {
	Width    int     `json:"width"`
	Target   float64 `json:"target"`
	Clip     int64   `json:"clip"`
	ClipHigh int64   `json:"clip_high"`
	Rows     int64   `json:"rows"` // embedding rows the pairs reach: k+1 for causal distance and time, else 2k+1
	Exact    bool    `json:"exact"`
}

// BudgetFit is the largest linear scheme of a width whose rows fit the budget.
type BudgetFit struct {
	Width  int       `json:"width"`
	Clip   int       `json:"clip"`
	Rows   int       `json:"rows"`
	Inside float64   `json:"inside_share"`
	CI     *Interval `json:"inside_ci,omitempty"`
}

// JointReport is the 2-D table of time bucket × pitch bucket over pairs where both
// tokens have a pitch.
type JointReport struct {
	TimeScheme  string    `json:"time_scheme"`
	PitchScheme string    `json:"pitch_scheme"`
	Pairs       int64     `json:"pairs"`
	Counts      [][]int64 `json:"counts"` // [time bucket][pitch bucket]
	// Offsets of each time and pitch bucket, [from, to] with null for an open end.
	TimeOffsets  [][2]*int64 `json:"time_offsets"`
	PitchOffsets [][2]*int64 `json:"pitch_offsets"`
}

// rank is the number of pairs a share p of n must reach: the smallest integer ≥ p·n,
// at least 1.
func rank(p float64, n int64) int64 {
	r := int64(math.Ceil(p * float64(n)))
	return max(r, 1)
}

// Report returns the coverage of a tally of this counter. timeUnit names the unit of
// time offsets in the report (e.g. "ms").
func (c *Counter) Report(t *Tally, timeUnit string) *Report {
	r := &Report{Pairs: c.cfg.Pairs, TimeUnit: timeUnit, Sampled: t.sampled, Windows: t.Windows,
		Tokens: t.Tokens, NoPitch: t.NoPitch}
	if t.sampled {
		r.Sample, r.Confidence = c.cfg.Sample, c.cfg.Confidence
	}
	for _, k := range Kinds {
		*r.Kind(k) = c.kindReport(c.view(&t.all, k, true), k)
	}
	if *c.cfg.Instruments {
		for cl := range numClasses {
			cr := ClassReport{Class: Class(cl).String()}
			cr.Distance = c.kindReport(c.view(&t.class[cl], Distance, false), Distance)
			cr.Time = c.kindReport(c.view(&t.class[cl], Time, false), Time)
			cr.Pitch = c.kindReport(c.view(&t.class[cl], Pitch, false), Pitch)
			r.Instruments = append(r.Instruments, cr)
		}
	}
	if c.jointT != nil {
		j := &JointReport{TimeScheme: c.jointT.Name, PitchScheme: c.jointP.Name,
			TimeOffsets: bucketOffsets(c.jointT), PitchOffsets: bucketOffsets(c.jointP)}
		np := c.jointP.Buckets()
		for b := range c.jointT.Buckets() {
			row := append([]int64(nil), t.joint[b*np:(b+1)*np]...)
			for _, v := range row {
				j.Pairs += v
			}
			j.Counts = append(j.Counts, row)
		}
		r.Joint = j
	}
	return r
}

// ReportDatasets returns the report of the total with a breakdown per dataset.
func (c *Counter) ReportDatasets(total *Tally, byDataset map[string]*Tally, timeUnit string) *Report {
	r := c.Report(total, timeUnit)
	names := make([]string, 0, len(byDataset))
	for name := range byDataset {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		d := c.Report(byDataset[name], timeUnit)
		r.Datasets = append(r.Datasets, DatasetReport{Dataset: name, Windows: d.Windows, Tokens: d.Tokens,
			NoPitch: d.NoPitch, Distance: d.Distance, Time: d.Time, Pitch: d.Pitch})
	}
	return r
}

func (c *Counter) kindReport(v *view, k Kind) KindReport {
	kr := KindReport{Pairs: v.pairs, Max: v.maxAbs}
	kr.Quantiles = make([]Quantile, 0, len(QuantilePoints)+1)
	for _, p := range QuantilePoints {
		kr.Quantiles = append(kr.Quantiles, v.quantile(p))
	}
	kr.Quantiles = append(kr.Quantiles, Quantile{P: 1, Value: v.maxAbs, Low: v.maxAbs, Exact: true})
	for i, s := range c.schemes[k] {
		kr.Schemes = append(kr.Schemes, c.schemeReport(s, v.schemeCounts(s, i), v.sampled))
	}
	// Recommendations for every linear width in use (width 1 when none is).
	var widths []int
	seen := map[int]bool{}
	for _, s := range c.schemes[k] {
		if s.Type == TypeLinear && !seen[s.Width] {
			seen[s.Width] = true
			widths = append(widths, s.Width)
		}
	}
	if len(widths) == 0 {
		widths = []int{1}
	}
	for _, w := range widths {
		for _, target := range c.cfg.Targets {
			if v.pairs == 0 {
				break
			}
			q := v.quantile(target)
			lo, hi := q.Low/int64(w), q.Value/int64(w)
			kr.Recommend = append(kr.Recommend, Recommendation{Width: w, Target: target, Clip: lo, ClipHigh: hi,
				Rows: c.rows(hi, k), Exact: lo == hi})
		}
	}
	if clip := c.budgetClip(k); clip >= 0 && v.pairs > 0 {
		for _, w := range c.cfg.BudgetWidths.of(k) {
			n := v.absAtMost(int64(clip+1)*int64(w) - 1)
			f := BudgetFit{Width: w, Clip: clip, Rows: int(c.rows(int64(clip), k)), Inside: float64(n) / float64(v.pairs)}
			if v.sampled {
				ci := wilson(n, v.pairs, c.cfg.Confidence)
				f.CI = &ci
			}
			kr.Budget = append(kr.Budget, f)
		}
	}
	return kr
}

// rows is the number of embedding rows the pairs of kind reach with clip k.
func (c *Counter) rows(k int64, kind Kind) int64 {
	if c.oneSided(kind) {
		return k + 1
	}
	return 2*k + 1
}

func (c *Counter) schemeReport(s *Scheme, sc SchemeCounts, sampled bool) SchemeReport {
	r := SchemeReport{Name: s.Name, Scheme: s.Type, Pairs: sc.Pairs, Inside: sc.Inside, SatLow: sc.SatLow,
		SatHigh: sc.SatHigh, Buckets: sc.Buckets, BucketShares: make([]float64, len(sc.Buckets)), Unused: []int{}}
	r.Offsets = bucketOffsets(s)
	share := func(n int64) float64 {
		if sc.Pairs == 0 {
			return 0
		}
		return float64(n) / float64(sc.Pairs)
	}
	r.InsideShare, r.SatLowShare, r.SatHighShare = share(sc.Inside), share(sc.SatLow), share(sc.SatHigh)
	for b, n := range sc.Buckets {
		p := share(n)
		r.BucketShares[b] = p
		if n == 0 {
			r.Unused = append(r.Unused, b)
		} else {
			r.Entropy -= p * math.Log(p)
		}
	}
	r.Entropy = math.Abs(r.Entropy) // no −0
	r.Effective = math.Exp(r.Entropy)
	if sampled && sc.Pairs > 0 {
		z := c.cfg.Confidence
		in, lo, hi := wilson(sc.Inside, sc.Pairs, z), wilson(sc.SatLow, sc.Pairs, z), wilson(sc.SatHigh, sc.Pairs, z)
		r.InsideCI, r.SatLowCI, r.SatHighCI = &in, &lo, &hi
		for _, n := range sc.Buckets {
			r.BucketCI = append(r.BucketCI, wilson(n, sc.Pairs, z))
		}
	}
	return r
}

// quantile returns the p-quantile of |Δ|.
func (v *view) quantile(p float64) Quantile {
	q := Quantile{P: p}
	if v.pairs == 0 {
		q.Exact = true
		return q
	}
	need := rank(p, v.pairs)
	if v.exactHist() {
		// Binary search over magnitudes: absAtMost is non-decreasing.
		lo, hi := int64(0), v.maxAbs
		for lo < hi {
			m := lo + (hi-lo)/2
			if v.absAtMost(m) >= need {
				hi = m
			} else {
				lo = m + 1
			}
		}
		q.Value, q.Low, q.Exact = lo, lo, true
		return q
	}
	prev := int64(-1)
	for _, a := range v.mags {
		if a >= v.maxAbs || v.absAtMost(a) >= need {
			q.Value = min(a, v.maxAbs)
			q.Low = min(prev+1, q.Value)
			q.Exact = q.Low == q.Value
			return q
		}
		prev = a
	}
	q.Value, q.Low = v.maxAbs, prev+1
	q.Exact = q.Low == q.Value
	return q
}

// bucketOffsets returns the offset range of each bucket id (the hull of its segments).
func bucketOffsets(s *Scheme) [][2]*int64 {
	out := make([][2]*int64, s.Buckets())
	set := make([]bool, s.Buckets())
	for _, g := range s.segs {
		var lo, hi *int64
		if g.Lo != math.MinInt64 {
			v := g.Lo
			lo = &v
		}
		if g.Hi != math.MaxInt64 {
			v := g.Hi
			hi = &v
		}
		b := g.Bucket
		if !set[b] {
			out[b], set[b] = [2]*int64{lo, hi}, true
			continue
		}
		if lo == nil || (out[b][0] != nil && *lo < *out[b][0]) {
			out[b][0] = lo
		}
		if hi == nil || (out[b][1] != nil && *hi > *out[b][1]) {
			out[b][1] = hi
		}
	}
	return out
}
