package audit

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
)

// compare fills the distances between every pair of datasets with pairs, by name
// order.
func (r *Report) compare() {
	for i, a := range r.Datasets {
		for _, b := range r.Datasets[i+1:] {
			for _, kind := range []string{"dt", "dp"} {
				da, db := a.PairDT, b.PairDT
				if kind == "dp" {
					da, db = a.PairDP, b.PairDP
				}
				if da.N == 0 || db.N == 0 {
					continue // nothing to compare with an empty side
				}
				c := Comparison{Kind: kind, A: a.Name, B: b.Name}
				c.JSD = JSONFloat(JensenShannon(da.Bins, db.Bins))
				w, res := histWasserstein(da.h, db.h)
				c.Wasserstein, c.Resolution = JSONFloat(w), res
				r.Comparisons = append(r.Comparisons, c)
			}
		}
	}
}

// findOutliers lists the files whose Δt or Δp distribution is far from the rest of
// their dataset, whose grid disagrees with a clear majority of their dataset, or
// whose tempo map leaves the plausible range.
//
// A file is compared with its dataset minus itself (leave one out), so a small
// dataset does not hide its own outliers. Its divergence must exceed both MinJSD and
// the dataset's median divergence plus MADs scaled median absolute deviations
// (1.4826·MAD estimates a standard deviation for normal data, common practice).
func (r *Report) findOutliers() {
	o := r.Settings.Outlier
	byDS := map[string]*Dataset{}
	for _, d := range r.Datasets {
		byDS[d.Name] = d
	}
	type fileDiv struct{ dt, dp float64 }
	divs := make([]fileDiv, len(r.Files))
	perDS := map[string][2][]float64{}
	for i := range r.Files {
		f := &r.Files[i]
		divs[i] = fileDiv{math.NaN(), math.NaN()}
		d := byDS[f.Dataset]
		if f.Pairs >= o.MinPairs && d != nil {
			divs[i].dt = leaveOneOut(d.PairDT.Bins, f.dtBins)
			divs[i].dp = leaveOneOut(d.PairDP.Bins, f.dpBins)
		}
		f.DTDivergence, f.DPDivergence = JSONFloat(divs[i].dt), JSONFloat(divs[i].dp)
		v := perDS[f.Dataset]
		if !math.IsNaN(divs[i].dt) {
			v[0] = append(v[0], divs[i].dt)
		}
		if !math.IsNaN(divs[i].dp) {
			v[1] = append(v[1], divs[i].dp)
		}
		perDS[f.Dataset] = v
	}
	cuts := map[string][2]float64{}
	for name, v := range perDS {
		cuts[name] = [2]float64{cutOff(v[0], o), cutOff(v[1], o)}
	}

	for i := range r.Files {
		f := &r.Files[i]
		d := byDS[f.Dataset]
		var reasons []string
		score := 0.0
		cut := cuts[f.Dataset]
		if v := divs[i].dt; !math.IsNaN(v) && v > cut[0] {
			reasons = append(reasons, fmt.Sprintf("Δt far from the rest of the dataset: divergence %.3f > %.3f; median |Δt| %s vs %s %s",
				v, cut[0], thousands(f.p50DT), thousands(d.PairDT.P50), r.TimeUnit))
			score = max(score, v)
		}
		if v := divs[i].dp; !math.IsNaN(v) && v > cut[1] {
			reasons = append(reasons, fmt.Sprintf("Δp far from the rest of the dataset: divergence %.3f > %.3f; median Δp %+d vs %+d semitones",
				v, cut[1], f.p50DP, d.PairDP.P50))
			score = max(score, v)
		}
		if why := gridDisagrees(f, d, o.GridMajority); why != "" {
			reasons = append(reasons, why)
		}
		if f.Tempo.OutOfRange > 0 {
			reasons = append(reasons, fmt.Sprintf("%d tempo event(s) outside %g–%g BPM (map from %s to %s BPM)",
				f.Tempo.OutOfRange, r.Settings.Tempo.MinBPM, r.Settings.Tempo.MaxBPM, bpm(f.Tempo.MinBPM), bpm(f.Tempo.MaxBPM)))
		}
		if len(reasons) > 0 {
			r.Outliers = append(r.Outliers, Outlier{Dataset: f.Dataset, Path: f.Path, Piece: f.Piece, Score: score, Reasons: reasons})
		}
	}
	slices.SortStableFunc(r.Outliers, func(a, b Outlier) int {
		if c := cmp.Compare(b.Score, a.Score); c != 0 {
			return c
		}
		if c := cmp.Compare(a.Dataset, b.Dataset); c != 0 {
			return c
		}
		return cmp.Compare(a.Path, b.Path)
	})
}

// leaveOneOut is the divergence of a file's bins from its dataset's bins without it.
func leaveOneOut(all, file []int64) float64 {
	if len(all) != len(file) {
		return math.NaN()
	}
	rest := make([]int64, len(all))
	for i := range all {
		rest[i] = all[i] - file[i]
	}
	return JensenShannon(file, rest)
}

// cutOff is the divergence above which a file of a dataset is an outlier.
func cutOff(v []float64, o OutlierConfig) float64 {
	if len(v) < 3 {
		return max(o.MinJSD, 0)
	}
	med := median(v)
	dev := make([]float64, len(v))
	for i, x := range v {
		dev[i] = math.Abs(x - med)
	}
	return max(o.MinJSD, med+o.MADs*1.4826*median(dev))
}

func median(v []float64) float64 {
	s := slices.Clone(v)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// gridDisagrees explains why f's grid stands out in its dataset, or returns "".
func gridDisagrees(f *File, d *Dataset, majority float64) string {
	if d == nil || f.Grid.Label == LabelFewOnsets || f.Grid.Label == LabelNoBeat {
		return ""
	}
	var onGrid, off int
	for _, g := range d.Grids {
		switch g.Label {
		case LabelFewOnsets, LabelNoBeat:
		case LabelUnquantized:
			off += g.N
		default:
			onGrid += g.N
		}
	}
	n := onGrid + off
	if n < 3 {
		return ""
	}
	quantized := f.Grid.Division > 0
	switch {
	case !quantized && float64(onGrid) >= majority*float64(n-1) && onGrid > 0:
		return fmt.Sprintf("unquantized (best grid explains %.0f%% of onsets) in a dataset whose pieces are %.0f%% on a grid",
			100*f.Grid.Share, 100*float64(onGrid)/float64(n))
	case quantized && float64(off) >= majority*float64(n-1) && off > 0:
		return fmt.Sprintf("%s in a dataset whose pieces are %.0f%% unquantized", f.Grid.Label, 100*float64(off)/float64(n))
	}
	return ""
}

func bpm(v float64) string {
	if v >= math.MaxFloat64 {
		return "∞"
	}
	return strconv.FormatFloat(math.Round(v*10)/10, 'f', -1, 64)
}

// thousands formats an integer with thin grouping commas: 12,345.
func thousands(v int64) string {
	s := strconv.FormatInt(v, 10)
	neg := s[0] == '-'
	if neg {
		s = s[1:]
	}
	var out []byte
	for i := range s {
		if i > 0 && (len(s)-i)%3 == 0 {
			out = append(out, ',')
		}
		out = append(out, s[i])
	}
	if neg {
		return "-" + string(out)
	}
	return string(out)
}

func formatFloat(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

func parseFloat(s string) (float64, error) { return strconv.ParseFloat(s, 64) }
