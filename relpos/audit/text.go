package audit

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strings"
	"text/tabwriter"
)

// WriteJSON writes the report as indented JSON. Divergences that could not be
// computed are null.
func (r *Report) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	if err := enc.Encode(r); err != nil {
		return fmt.Errorf("write audit json: %w", err)
	}
	return nil
}

// distRow is one distribution of a dataset, for tables.
type distRow struct {
	name string
	d    *Dist
}

func (d *Dataset) dists(timeUnit string) []distRow {
	return []distRow{
		{"inter-onset interval", d.IOI},
		{"pair |Δt|", d.PairDT},
		{"pair Δp", d.PairDP},
		{"note duration", d.Duration},
		{"velocity", d.Velocity},
		{"polyphony", d.Polyphony},
		{"tempo", d.Tempo},
	}
}

// WriteText writes the report as aligned plain-text tables.
func (r *Report) WriteText(w io.Writer) error {
	ew := &errWriter{w: w}
	files := 0
	for _, d := range r.Datasets {
		files += d.Files
	}
	ew.printf("Audit of %d dataset(s), %d input file(s). Pairwise Δt in %s (%s encoding, windows of %d tokens).\n",
		len(r.Datasets), files, r.TimeUnit, r.Settings.Encoding, r.Settings.MaxLen)

	ew.section("Datasets")
	tw := ew.table()
	fmt.Fprintln(tw, "dataset\tfiles\tread\tskipped\tduplicates\tpieces\tnotes\thours\tdrums\twindows\ttempo flagged\tno meter\tnot encoded\t")
	for _, d := range r.Datasets {
		fmt.Fprintf(tw, "%s\t%d\t%d\t%d\t%d\t%d\t%s\t%.2f\t%s\t%s\t%d\t%d\t%d\t\n", d.Name, d.Files, d.Read, d.Skipped, d.Duplicates,
			d.Pieces, thousands(d.Notes), d.Hours, pct(d.DrumShare), thousands(d.Windows), d.TempoFlagged, d.MissingMeter, d.NotEncoded)
	}
	ew.flush(tw)

	ew.section("Distributions")
	tw = ew.table()
	fmt.Fprintln(tw, "dataset\tquantity\tunit\tcount\tmin\tp50\tp90\tp99\tmax\tmean\t")
	for _, d := range r.Datasets {
		for _, row := range d.dists(r.TimeUnit) {
			x := row.d
			if x.N == 0 {
				fmt.Fprintf(tw, "%s\t%s\t%s\t0\t-\t-\t-\t-\t-\t-\t\n", d.Name, row.name, x.Unit)
				continue
			}
			fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%.1f\t\n", d.Name, row.name, x.Unit, thousands(x.N),
				thousands(x.Min), thousands(x.P50), thousands(x.P90), thousands(x.P99), thousands(x.Max), x.Mean)
		}
	}
	ew.flush(tw)

	ew.section("Grids (pieces per detected grid)")
	tw = ew.table()
	fmt.Fprintln(tw, "dataset\tgrid\tpieces\tshare\t")
	for _, d := range r.Datasets {
		for _, g := range d.Grids {
			fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t\n", d.Name, g.Label, g.N, pct(float64(g.N)/float64(max(d.Pieces, 1))))
		}
	}
	ew.flush(tw)

	ew.section("PPQ (pieces per division)")
	tw = ew.table()
	fmt.Fprintln(tw, "dataset\tppq\tpieces\t")
	for _, d := range r.Datasets {
		for _, g := range d.PPQs {
			fmt.Fprintf(tw, "%s\t%s\t%d\t\n", d.Name, g.Label, g.N)
		}
	}
	ew.flush(tw)

	if len(r.Coverage) > 0 {
		ew.section("Coverage per scheme")
		tw = ew.table()
		fmt.Fprintln(tw, "dataset\tkind\tscheme\tbuckets\tpairs\tinside\tsaturated\tunused buckets\t")
		for _, c := range r.Coverage {
			fmt.Fprintf(tw, "%s\t%s\t%s\t%d\t%s\t%s\t%s\t%d\t\n", c.Dataset, c.Kind, c.Scheme, c.Buckets, thousands(c.Pairs),
				pct(c.Share), pct(c.Saturated), c.Unused)
		}
		ew.flush(tw)
	}

	if len(r.Comparisons) > 0 {
		ew.section("Dataset distances (Jensen–Shannon in nats over coarse bins; Wasserstein in the unit)")
		tw = ew.table()
		fmt.Fprintln(tw, "offset\tdataset A\tdataset B\tJSD\tWasserstein\tunit\t")
		for _, c := range r.Comparisons {
			unit := r.TimeUnit
			name := "Δt"
			if c.Kind == "dp" {
				unit, name = "semitones", "Δp"
			}
			fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t\n", name, c.A, c.B, num(float64(c.JSD), 3), num(float64(c.Wasserstein), 1), unit)
		}
		ew.flush(tw)
	}

	ew.section(fmt.Sprintf("Outliers (%d)", len(r.Outliers)))
	if len(r.Outliers) == 0 {
		ew.printf("none\n")
	}
	for _, o := range r.Outliers {
		ew.printf("%s (dataset %s)", o.Path, o.Dataset)
		if o.Piece != 0 {
			ew.printf(" (piece %d)", o.Piece)
		}
		ew.printf("\n")
		for _, why := range o.Reasons {
			ew.printf("  - %s\n", why)
		}
	}

	if len(r.Skipped) > 0 {
		ew.section(fmt.Sprintf("Skipped files (%d)", len(r.Skipped)))
		for _, f := range r.Skipped {
			ew.printf("%s\n", skipLine(f))
		}
	}

	ew.section("Files")
	tw = ew.table()
	fmt.Fprintln(tw, "dataset\tpath\tpiece\tppq\tnotes\tgrid\ton grid\ttempo BPM\tmeter\tdrums\tΔt div\tΔp div\t")
	for i := range r.Files {
		f := &r.Files[i]
		ppq := fmt.Sprint(f.PPQ)
		if f.SMPTE {
			ppq = "SMPTE"
		}
		meter := "yes"
		if f.MissingMeter {
			meter = "missing"
		}
		tempo := bpm(f.Tempo.MinBPM)
		if f.Tempo.MaxBPM != f.Tempo.MinBPM {
			tempo += "–" + bpm(f.Tempo.MaxBPM)
		}
		if f.Tempo.OutOfRange > 0 {
			tempo += " (!)"
		}
		if f.SMPTE {
			tempo = "-" // time is in frames, not beats
		}
		fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n", f.Dataset, f.Path, f.Piece, ppq, thousands(int64(f.Notes)),
			f.Grid.Label, pct(f.Grid.Share), tempo, meter, pct(f.DrumShare), num(float64(f.DTDivergence), 3), num(float64(f.DPDivergence), 3))
	}
	ew.flush(tw)
	return ew.err
}

// skipLine says which file was skipped and why, naming the file once (ingest's
// reasons usually start with the path).
func skipLine(f Skipped) string {
	if f.Path != "" && strings.HasPrefix(f.Reason, f.Path) {
		return f.Reason
	}
	return f.Path + ": " + f.Reason
}

// errWriter keeps the first write error so tables can be written without checks.
type errWriter struct {
	w   io.Writer
	err error
}

func (e *errWriter) printf(format string, a ...any) {
	if e.err == nil {
		_, e.err = fmt.Fprintf(e.w, format, a...)
	}
}

func (e *errWriter) section(title string) {
	e.printf("\n%s\n%s\n", title, strings.Repeat("-", len([]rune(title))))
}

func (e *errWriter) table() *tabwriter.Writer {
	return tabwriter.NewWriter(e, 0, 0, 2, ' ', 0)
}

func (e *errWriter) flush(tw *tabwriter.Writer) {
	if err := tw.Flush(); err != nil && e.err == nil {
		e.err = err
	}
}

// Write lets tabwriter write through the errWriter.
func (e *errWriter) Write(p []byte) (int, error) {
	if e.err != nil {
		return 0, e.err
	}
	n, err := e.w.Write(p)
	e.err = err
	return n, err
}

func pct(v float64) string {
	if math.IsNaN(v) {
		return "-"
	}
	return fmt.Sprintf("%.1f%%", 100*v)
}

func num(v float64, prec int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return "-"
	}
	return fmt.Sprintf("%.*f", prec, v)
}
