package relpos

import (
	"encoding/csv"
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"
)

// TextOptions select what WriteText writes beyond the summary.
type TextOptions struct {
	Buckets bool // a table of every bucket of every scheme
}

func pct(f float64) string { return strconv.FormatFloat(100*f, 'f', 1, 64) + "%" }

func pctCI(f float64, ci *Interval) string {
	if ci == nil {
		return pct(f)
	}
	return fmt.Sprintf("%s [%s, %s]", pct(f), pct(ci.Low), pct(ci.High))
}

func (q Quantile) String() string {
	if q.Exact {
		return strconv.FormatInt(q.Value, 10)
	}
	return fmt.Sprintf("%d-%d", q.Low, q.Value)
}

func quantileName(p float64) string {
	if p == 1 {
		return "max"
	}
	return "p" + strconv.FormatFloat(100*p, 'f', -1, 64)
}

func offsetRange(o [2]*int64) string {
	lo, hi := bound(o[0], "-inf"), bound(o[1], "+inf")
	if lo == hi {
		return lo
	}
	return lo + ".." + hi
}

func (r *Report) unit(k Kind) string {
	switch k {
	case Distance:
		return "tokens"
	case Time:
		switch r.TimeUnit {
		case "":
			return "time units"
		case "grid":
			return "grid steps"
		}
		return r.TimeUnit
	}
	return "semitones"
}

// WriteText writes the report as text tables.
func (r *Report) WriteText(w io.Writer, opt TextOptions) error {
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintf(tw, "coverage of %s windows, %s tokens, %s pairs (offset = key - query); time in %s\n",
		groupDigits(r.Windows), groupDigits(r.Tokens), r.Pairs, r.unit(Time))
	if r.Sampled {
		fmt.Fprintf(tw, "sampled: %g of the pairs, counts are of the sampled pairs, intervals are Wilson %g%%\n",
			r.Sample, 100*r.Confidence)
	}
	all := r.Distance.Pairs
	share := 0.0
	if all > 0 {
		share = float64(r.NoPitch) / float64(all)
	}
	fmt.Fprintf(tw, "pairs with a token without pitch (no pitch offset): %s (%s)\n", groupDigits(r.NoPitch), pct(share))
	for _, k := range Kinds {
		kr := r.Kind(k)
		fmt.Fprintf(tw, "\n%s (%s): %s pairs\n", strings.ToUpper(k.String()), r.unit(k), groupDigits(kr.Pairs))
		var qs []string
		for _, q := range kr.Quantiles {
			qs = append(qs, quantileName(q.P)+" "+q.String())
		}
		fmt.Fprintf(tw, "  |Δ| %s\n", strings.Join(qs, "  "))
		fmt.Fprintln(tw, "  scheme\tbuckets\tinside\tsat low\tsat high\tunused\teffective")
		for _, s := range kr.Schemes {
			fmt.Fprintf(tw, "  %s\t%d\t%s\t%s\t%s\t%d\t%.1f\n", s.Name, len(s.Buckets), pctCI(s.InsideShare, s.InsideCI),
				pctCI(s.SatLowShare, s.SatLowCI), pctCI(s.SatHighShare, s.SatHighCI), len(s.Unused), s.Effective)
		}
		if len(kr.Recommend) > 0 {
			var parts []string
			for i, rec := range kr.Recommend {
				clip := strconv.FormatInt(rec.Clip, 10)
				if !rec.Exact {
					clip = fmt.Sprintf("%d-%d", rec.Clip, rec.ClipHigh)
				}
				part := fmt.Sprintf("%s -> clip %s (%d rows)", pct(rec.Target), clip, rec.Rows)
				if i == 0 || kr.Recommend[i-1].Width != rec.Width {
					part = fmt.Sprintf("width %d: %s", rec.Width, part)
				}
				parts = append(parts, part)
			}
			fmt.Fprintf(tw, "  smallest clip reaching a target: %s\n", strings.Join(parts, ", "))
		}
		if len(kr.Budget) > 0 {
			var parts []string
			for _, b := range kr.Budget {
				parts = append(parts, fmt.Sprintf("width %d clip %d %s", b.Width, b.Clip, pctCI(b.Inside, b.CI)))
			}
			fmt.Fprintf(tw, "  within %d rows: %s\n", kr.Budget[0].Rows, strings.Join(parts, "; "))
		}
		if opt.Buckets {
			for _, s := range kr.Schemes {
				fmt.Fprintf(tw, "  %s\n", s.Name)
				fmt.Fprintln(tw, "    bucket\toffsets\tpairs\tshare")
				for b, n := range s.Buckets {
					var ci *Interval
					if s.BucketCI != nil {
						ci = &s.BucketCI[b]
					}
					fmt.Fprintf(tw, "    %d\t%s\t%s\t%s\n", b, offsetRange(s.Offsets[b]), groupDigits(n), pctCI(s.BucketShares[b], ci))
				}
			}
		}
	}
	if len(r.Instruments) > 0 {
		fmt.Fprintf(tw, "\nINSTRUMENTS (pairs whose tokens are both drums, or both pitched instruments)\n")
		fmt.Fprintln(tw, "  class\tkind\tscheme\tpairs\tinside\tsat low\tsat high")
		for _, c := range r.Instruments {
			for _, k := range Kinds {
				kr := c.kind(k)
				for _, s := range kr.Schemes {
					fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s\t%s\t%s\n", c.Class, k, s.Name, groupDigits(s.Pairs),
						pctCI(s.InsideShare, s.InsideCI), pctCI(s.SatLowShare, s.SatLowCI), pctCI(s.SatHighShare, s.SatHighCI))
				}
			}
		}
	}
	if len(r.Datasets) > 0 {
		fmt.Fprintf(tw, "\nDATASETS\n")
		fmt.Fprintln(tw, "  dataset\twindows\tkind\tscheme\tpairs\tinside\tp99 |Δ|")
		for _, d := range r.Datasets {
			for _, k := range Kinds {
				kr := d.kind(k)
				p99 := ""
				for _, q := range kr.Quantiles {
					if q.P == 0.99 {
						p99 = q.String()
					}
				}
				for _, s := range kr.Schemes {
					fmt.Fprintf(tw, "  %s\t%s\t%s\t%s\t%s\t%s\t%s\n", d.Dataset, groupDigits(d.Windows), k, s.Name,
						groupDigits(s.Pairs), pctCI(s.InsideShare, s.InsideCI), p99)
				}
			}
		}
	}
	if j := r.Joint; j != nil {
		fmt.Fprintf(tw, "\nJOINT time bucket (rows, %s) x pitch bucket (columns, %s): %s pairs with both pitches\n",
			j.TimeScheme, j.PitchScheme, groupDigits(j.Pairs))
		fmt.Fprint(tw, "  time\\pitch")
		for b := range j.PitchOffsets {
			fmt.Fprintf(tw, "\t%d", b)
		}
		fmt.Fprintln(tw)
		for tb, row := range j.Counts {
			fmt.Fprintf(tw, "  %d %s", tb, offsetRange(j.TimeOffsets[tb]))
			for _, n := range row {
				fmt.Fprintf(tw, "\t%d", n)
			}
			fmt.Fprintln(tw)
		}
	}
	return tw.Flush()
}

func (c *ClassReport) kind(k Kind) *KindReport {
	switch k {
	case Distance:
		return &c.Distance
	case Time:
		return &c.Time
	}
	return &c.Pitch
}

func (d *DatasetReport) kind(k Kind) *KindReport {
	switch k {
	case Distance:
		return &d.Distance
	case Time:
		return &d.Time
	}
	return &d.Pitch
}

// CSVHeader is the header row of WriteCSV.
var CSVHeader = []string{"scope", "kind", "scheme", "item", "from", "to", "pairs", "share", "ci_low", "ci_high", "value"}

// WriteCSV writes the report in long form, one row per figure: for every scope ("all",
// "class:drums", "class:pitched", "dataset:NAME"), kind and scheme the rows inside,
// sat_low, sat_high and bucket:N (with its offsets from..to), and per kind the |Δ|
// quantiles (item p50 ... max, in the value column).
func (r *Report) WriteCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	if err := cw.Write(CSVHeader); err != nil {
		return err
	}
	f := func(v float64) string { return strconv.FormatFloat(v, 'g', 10, 64) }
	ci := func(c *Interval) (string, string) {
		if c == nil {
			return "", ""
		}
		return f(c.Low), f(c.High)
	}
	kindRows := func(scope string, k Kind, kr *KindReport) {
		for _, q := range kr.Quantiles {
			v := q.String()
			cw.Write([]string{scope, k.String(), "", quantileName(q.P), "", "", strconv.FormatInt(kr.Pairs, 10), "", "", "", v})
		}
		for _, s := range kr.Schemes {
			for _, item := range []struct {
				name string
				n    int64
				sh   float64
				ci   *Interval
			}{{"inside", s.Inside, s.InsideShare, s.InsideCI}, {"sat_low", s.SatLow, s.SatLowShare, s.SatLowCI},
				{"sat_high", s.SatHigh, s.SatHighShare, s.SatHighCI}} {
				lo, hi := ci(item.ci)
				cw.Write([]string{scope, k.String(), s.Name, item.name, "", "", strconv.FormatInt(item.n, 10), f(item.sh), lo, hi, ""})
			}
			for b, n := range s.Buckets {
				var c *Interval
				if s.BucketCI != nil {
					c = &s.BucketCI[b]
				}
				lo, hi := ci(c)
				cw.Write([]string{scope, k.String(), s.Name, "bucket:" + strconv.Itoa(b), bound(s.Offsets[b][0], ""),
					bound(s.Offsets[b][1], ""), strconv.FormatInt(n, 10), f(s.BucketShares[b]), lo, hi, ""})
			}
		}
	}
	for _, k := range Kinds {
		kindRows("all", k, r.Kind(k))
	}
	for i := range r.Instruments {
		for _, k := range Kinds {
			kindRows("class:"+r.Instruments[i].Class, k, r.Instruments[i].kind(k))
		}
	}
	for i := range r.Datasets {
		for _, k := range Kinds {
			kindRows("dataset:"+r.Datasets[i].Dataset, k, r.Datasets[i].kind(k))
		}
	}
	cw.Flush()
	return cw.Error()
}
