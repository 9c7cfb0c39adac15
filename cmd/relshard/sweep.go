package main

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/relpos"
)

// sweepOptions are the flags and arguments of relshard sweep.
type sweepOptions struct {
	corpus corpusFlags
	relpos relposFlags
	grid   relpos.Grid
	logs   [3][]string // --KIND-log values, B:M
	budget int
	json   bool
	csv    bool
	cfg    export.Config
}

func (o *sweepOptions) AddFlags(fs *pflag.FlagSet) {
	o.corpus.AddFlags(fs)
	o.relpos.addFlags(fs, false, true)
	o.grid = relpos.DefaultGrid()
	for i, k := range relpos.Kinds {
		kg := []*relpos.KindGrid{&o.grid.Distance, &o.grid.Time, &o.grid.Pitch}[i]
		name := k.String()
		fs.IntSliceVar(&kg.Widths, name+"-widths", kg.Widths, name+": linear bucket widths of the grid")
		fs.IntSliceVar(&kg.Clips, name+"-clips", kg.Clips, name+": linear clips k of the grid (every width × every clip)")
		var def []string
		for _, l := range kg.Log {
			def = append(def, fmt.Sprintf("%d:%d", l.Buckets, l.Max))
		}
		fs.StringSliceVar(&o.logs[i], name+"-log", def, name+": log bucket settings BUCKETS:MAX of the grid (Raffel et al. 2020)")
	}
	fs.IntVar(&o.budget, "budget", 0, "list only the settings of at most this many embedding rows")
	fs.BoolVar(&o.json, "json", false, "print the settings as JSON")
	fs.BoolVar(&o.csv, "csv", false, "print the settings as CSV")
}

func (o *sweepOptions) Validate(cmd *cobra.Command) error {
	if err := o.corpus.validate(); err != nil {
		return err
	}
	if o.json && o.csv {
		return usageError("--json and --csv are exclusive")
	}
	if o.budget < 0 {
		return usageError("--budget %d: want ≥ 0", o.budget)
	}
	// The grid: defaults, then the config file's sweep section, then the flags set.
	cf, err := loadConfigFile(o.corpus.configPath)
	if err != nil {
		return err
	}
	grid := relpos.DefaultGrid()
	if cf.Sweep != nil {
		grid = overlayGrid(grid, *cf.Sweep)
	}
	for i, k := range relpos.Kinds {
		kg := []*relpos.KindGrid{&grid.Distance, &grid.Time, &grid.Pitch}[i]
		fl := []*relpos.KindGrid{&o.grid.Distance, &o.grid.Time, &o.grid.Pitch}[i]
		if cmd.Flags().Changed(k.String() + "-widths") {
			kg.Widths = fl.Widths
		}
		if cmd.Flags().Changed(k.String() + "-clips") {
			kg.Clips = fl.Clips
		}
		if !cmd.Flags().Changed(k.String() + "-log") {
			continue
		}
		kg.Log = nil
		for _, v := range o.logs[i] {
			b, m, ok := strings.Cut(v, ":")
			nb, err1 := strconv.Atoi(b)
			nm, err2 := strconv.Atoi(m)
			if !ok || err1 != nil || err2 != nil {
				return usageError("--%s-log %q: want BUCKETS:MAX such as 32:128", k, v)
			}
			kg.Log = append(kg.Log, relpos.LogSetting{Buckets: nb, Max: nm})
		}
	}
	o.grid = grid
	cfg, err := o.corpus.config(cmd, &o.relpos)
	if err != nil {
		return err
	}
	if cfg.Buckets, err = relpos.SweepConfig(cfg.Buckets, o.grid); err != nil {
		return usageError("%v", err)
	}
	o.cfg = cfg
	return nil
}

// overlayGrid returns g with every list the file sets (non-nil) replaced.
func overlayGrid(g, file relpos.Grid) relpos.Grid {
	for _, pair := range [][2]*relpos.KindGrid{{&g.Distance, &file.Distance}, {&g.Time, &file.Time}, {&g.Pitch, &file.Pitch}} {
		dst, src := pair[0], pair[1]
		if src.Widths != nil {
			dst.Widths = src.Widths
		}
		if src.Clips != nil {
			dst.Clips = src.Clips
		}
		if src.Log != nil {
			dst.Log = src.Log
		}
	}
	return g
}

// sweepJSON is the JSON output.
type sweepJSON struct {
	Pairs     relpos.Mode                  `json:"pairs"`
	TimeUnit  string                       `json:"time_unit"`
	Sampled   bool                         `json:"sampled"`
	Windows   int64                        `json:"windows"`
	Tokens    int64                        `json:"tokens"`
	Files     int64                        `json:"files"`
	Counted   int64                        `json:"files_counted"`
	Settings  []relpos.SweepRow            `json:"settings"`
	Quantiles map[string][]relpos.Quantile `json:"quantiles"` // |Δ| per kind
}

func runSweep(ctx context.Context, o *sweepOptions, s *streams) error {
	corpus, err := o.corpus.count(ctx, o.cfg, s, "sweeping")
	if err != nil {
		return err
	}
	rep := corpus.Report()
	rows := corpus.Counter.SweepRows(rep, o.budget)
	switch {
	case o.json:
		out := sweepJSON{Pairs: rep.Pairs, TimeUnit: rep.TimeUnit, Sampled: rep.Sampled, Windows: rep.Windows, Tokens: rep.Tokens,
			Files: corpus.Files, Counted: corpus.Counted, Settings: rows, Quantiles: map[string][]relpos.Quantile{}}
		for _, k := range relpos.Kinds {
			out.Quantiles[k.String()] = rep.Kind(k).Quantiles
		}
		enc := json.NewEncoder(s.Out)
		enc.SetIndent("", "  ")
		if err := enc.Encode(out); err != nil {
			return fmt.Errorf("write sweep: %w", err)
		}
	case o.csv:
		cw := csv.NewWriter(s.Out)
		cw.Write([]string{"kind", "scheme", "buckets", "rows", "pairs", "inside_share", "sat_low_share", "sat_high_share", "unused", "effective_buckets", "ci_low", "ci_high"})
		for _, r := range rows {
			lo, hi := "", ""
			if r.InsideCI != nil {
				lo, hi = strconv.FormatFloat(r.InsideCI.Low, 'g', 10, 64), strconv.FormatFloat(r.InsideCI.High, 'g', 10, 64)
			}
			cw.Write([]string{r.Kind, r.Scheme, strconv.Itoa(r.Buckets), strconv.Itoa(r.Rows), strconv.FormatInt(r.Pairs, 10),
				strconv.FormatFloat(r.Inside, 'g', 10, 64), strconv.FormatFloat(r.SatLow, 'g', 10, 64),
				strconv.FormatFloat(r.SatHigh, 'g', 10, 64), strconv.Itoa(r.Unused), strconv.FormatFloat(r.Effective, 'g', 10, 64), lo, hi})
		}
		cw.Flush()
		if err := cw.Error(); err != nil {
			return fmt.Errorf("write sweep: %w", err)
		}
	default:
		tw := tabwriter.NewWriter(s.Out, 0, 0, 2, ' ', 0)
		fmt.Fprintf(tw, "sweep of %d settings over %d windows, %d tokens, %s pairs; time in %s\n",
			len(rows), rep.Windows, rep.Tokens, rep.Pairs, rep.TimeUnit)
		kind := ""
		for _, r := range rows {
			if r.Kind != kind {
				kind = r.Kind
				fmt.Fprintf(tw, "\n%s\n", strings.ToUpper(kind))
				fmt.Fprintln(tw, "  scheme\tbuckets\trows\tinside\tsat low\tsat high\tunused\teffective")
			}
			inside := fmt.Sprintf("%.1f%%", 100*r.Inside)
			if r.InsideCI != nil {
				inside += fmt.Sprintf(" [%.1f%%, %.1f%%]", 100*r.InsideCI.Low, 100*r.InsideCI.High)
			}
			fmt.Fprintf(tw, "  %s\t%d\t%d\t%s\t%.1f%%\t%.1f%%\t%d\t%.1f\n", r.Scheme, r.Buckets, r.Rows, inside,
				100*r.SatLow, 100*r.SatHigh, r.Unused, r.Effective)
		}
		if err := tw.Flush(); err != nil {
			return fmt.Errorf("write sweep: %w", err)
		}
	}
	return skippedOutcome(corpus, s)
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &sweepOptions{}
		cmd := &cobra.Command{
			Use:   "sweep SOURCE...",
			Short: "Evaluate a grid of bucket settings on a corpus in one pass",
			Long: `Read the MIDI sources, encode them into windows as export does, and evaluate a grid
of relative-position bucket settings for each offset kind — every linear width ×
clip (Shaw et al. 2018) and every log setting BUCKETS:MAX (Raffel et al. 2020) — in one
pass over the data: all settings are counted together (one moving pointer per
distinct bucket edge), never one pass per setting. For each setting it prints the
bucket ids, the embedding rows the pairs can reach (for causal pairs, distance and
time use only the buckets of offsets ≤ 0), the share of pairs inside its range and
saturated, the unused buckets and the effective number of buckets; --budget N keeps the
settings of at most N rows.

The config file (--config, the one export reads) gives the input, tokens and pairs,
and its sweep section the grid, with the flags' keys (a flag set wins for its list):

  sweep:
    time: {widths: [10, 20, 50], clips: [32, 64], log: [{buckets: 32, max: 2048}]}

Example: relshard sweep corpus/ --time-widths 10,20,50 --time-clips 32,64 --budget 129
` + exitCodesHelp,
			Args: cobra.ArbitraryArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				o.corpus.sources = args
				if err := o.Validate(cmd); err != nil {
					return err
				}
				return runSweep(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}
