package main

import (
	"context"
	"encoding/json"
	"fmt"
	"slices"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/relpos"
)

// corpusFlags are the flags shared by coverage and sweep that decide which windows are
// counted: the same sources, config file and token flags as export, so that the
// windows counted are the windows export writes.
type corpusFlags struct {
	sources        []string // SOURCE or NAME=SOURCE arguments, then --dataset values
	datasets       []string
	configPath     string
	workers        int
	maxLen         int
	encoding       string
	transpose      []int
	keepDuplicates bool
}

func (o *corpusFlags) AddFlags(fs *pflag.FlagSet) {
	fs.StringArrayVar(&o.datasets, "dataset", nil, "a source with its dataset name, NAME=PATH (repeatable; after the SOURCE arguments)")
	fs.StringVar(&o.configPath, "config", "", "YAML config file, the one export reads (sections input, tokens, buckets, ...); flags win over it")
	fs.IntVar(&o.workers, "workers", 0, "files parsed and counted at once (0: all cores); the counts are the same for any value")
	fs.IntVar(&o.maxLen, "max-len", 0, "tokens per window (default from the config: 2048)")
	fs.StringVar(&o.encoding, "encoding", "", "token encoding: performance or grid (default from the config: performance)")
	fs.IntSliceVar(&o.transpose, "transpose", nil, "transposition augmentation in semitones, e.g. 0,-2,2 (default from the config: 0)")
	fs.BoolVar(&o.keepDuplicates, "keep-duplicates", false, "count duplicate files too, as export --keep-duplicates exports them")
}

func (o *corpusFlags) validate() error {
	if len(o.sources)+len(o.datasets) == 0 {
		return usageError("no source given")
	}
	for _, d := range o.datasets {
		if src := ingest.ParseSource(d); src.Dataset == "" {
			return usageError("--dataset %q: want NAME=PATH", d)
		}
	}
	if o.workers < 0 {
		return usageError("--workers %d: want 0 (all cores) or more", o.workers)
	}
	return nil
}

// config loads the config file and applies the token and relpos flags given.
func (o *corpusFlags) config(cmd *cobra.Command, rf *relposFlags) (export.Config, error) {
	cfg, err := loadConfig(o.configPath)
	if err != nil {
		return cfg, err
	}
	applyFlags(cmd, &cfg, []flagSetter{
		{"max-len", func(c *export.Config) { c.Tokens.MaxLen = o.maxLen }},
		{"encoding", func(c *export.Config) { c.Tokens.Encoding = o.encoding }},
		{"transpose", func(c *export.Config) { c.Tokens.Transpose = slices.Clone(o.transpose) }},
		{"keep-duplicates", func(c *export.Config) { c.Shards.KeepDuplicates = o.keepDuplicates }},
	})
	// Export counts every pair and refuses buckets.sample; for the reports the file's
	// sampling keys stand, and the sampling flags win over them.
	sample := cfg.Buckets.Sample
	cfg.Buckets.Sample = 0
	if err := rf.apply(cmd.Flags(), &cfg.Buckets); err != nil {
		return cfg, err
	}
	if err := cfg.Validate(); err != nil {
		return cfg, usageError("%v", err)
	}
	cfg.Buckets.Sample = sample
	return cfg, rf.applySampling(cmd.Flags(), &cfg.Buckets)
}

func (o *corpusFlags) sourceList() []ingest.Source {
	var out []ingest.Source
	for _, a := range append(slices.Clone(o.sources), o.datasets...) {
		out = append(out, ingest.ParseSource(a))
	}
	return out
}

// count counts the corpus with the config, with a progress bar on a terminal.
func (o *corpusFlags) count(ctx context.Context, cfg export.Config, s *streams, what string) (*relpos.Corpus, error) {
	iopt := cfg.Input.Options()
	iopt.Workers = o.workers
	iopt.KeepDuplicates = cfg.Shards.KeepDuplicates
	opt := relpos.CorpusOptions{Scan: iopt, Tokens: cfg.Tokens, Workers: o.workers}
	var bar *progressbar.ProgressBar
	if s.ErrIsTerminal {
		bar = progressbar.NewOptions64(-1, progressbar.OptionSetWriter(s.Err), progressbar.OptionSetDescription(what),
			progressbar.OptionShowCount(), progressbar.OptionSetItsString("files"),
			progressbar.OptionThrottle(100*time.Millisecond), progressbar.OptionClearOnFinish())
		opt.Progress = func(files, windows int64) {
			bar.Describe(fmt.Sprintf("%s: %d windows; files", what, windows))
			_ = bar.Set64(files)
		}
	}
	corpus, err := relpos.CountCorpus(ctx, o.sourceList(), cfg.Buckets, opt)
	if bar != nil {
		_ = bar.Finish()
	}
	if err != nil {
		return nil, &exitError{code: exitFailed, err: err}
	}
	return corpus, nil
}

// skippedOutcome lists the skipped files on Err and gives exit status 3 when any.
func skippedOutcome(corpus *relpos.Corpus, s *streams) error {
	if len(corpus.Skipped) == 0 {
		return nil
	}
	for _, f := range corpus.Skipped {
		fmt.Fprintf(s.Err, "skipped %s/%s: %s\n", f.Dataset, f.Path, f.Reason)
	}
	return &exitError{code: exitSkipped, err: fmt.Errorf("%d of %d input files skipped", len(corpus.Skipped), corpus.Files)}
}

// coverageOptions are the flags and arguments of relshard coverage.
type coverageOptions struct {
	corpus    corpusFlags
	relpos    relposFlags
	json      bool
	csv       bool
	perBucket bool
	cfg       export.Config
}

func (o *coverageOptions) AddFlags(fs *pflag.FlagSet) {
	o.corpus.AddFlags(fs)
	o.relpos.AddFlags(fs, true)
	fs.BoolVar(&o.json, "json", false, "print the report as JSON")
	fs.BoolVar(&o.csv, "csv", false, "print the report as CSV, one row per figure")
	fs.BoolVar(&o.perBucket, "per-bucket", false, "add a table of every bucket of every scheme (text output)")
}

func (o *coverageOptions) Validate(cmd *cobra.Command) error {
	if err := o.corpus.validate(); err != nil {
		return err
	}
	if o.json && o.csv {
		return usageError("--json and --csv are exclusive")
	}
	cfg, err := o.corpus.config(cmd, &o.relpos)
	o.cfg = cfg
	return err
}

// coverageJSON is the JSON output: the report, with the accounting of the input files.
type coverageJSON struct {
	*relpos.Report
	Files      int64                `json:"files"`
	Counted    int64                `json:"files_counted"`
	Duplicates int64                `json:"files_duplicate"`
	Skipped    []relpos.SkippedFile `json:"files_skipped"`
}

func runCoverage(ctx context.Context, o *coverageOptions, s *streams) error {
	corpus, err := o.corpus.count(ctx, o.cfg, s, "counting")
	if err != nil {
		return err
	}
	rep := corpus.Report()
	switch {
	case o.json:
		enc := json.NewEncoder(s.Out)
		enc.SetIndent("", "  ")
		skipped := corpus.Skipped
		if skipped == nil {
			skipped = []relpos.SkippedFile{}
		}
		if err := enc.Encode(coverageJSON{Report: rep, Files: corpus.Files, Counted: corpus.Counted,
			Duplicates: corpus.Duplicates, Skipped: skipped}); err != nil {
			return fmt.Errorf("write report: %w", err)
		}
	case o.csv:
		if err := rep.WriteCSV(s.Out); err != nil {
			return fmt.Errorf("write report: %w", err)
		}
	default:
		fmt.Fprintf(s.Out, "files: %d read, %d counted, %d duplicates, %d skipped\n", corpus.Files, corpus.Counted,
			corpus.Duplicates, len(corpus.Skipped))
		if err := rep.WriteText(s.Out, relpos.TextOptions{Buckets: o.perBucket}); err != nil {
			return fmt.Errorf("write report: %w", err)
		}
	}
	return skippedOutcome(corpus, s)
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &coverageOptions{}
		cmd := &cobra.Command{
			Use:   "coverage SOURCE...",
			Short: "Report how relative-position buckets cover the offsets of a corpus",
			Long: `Read the MIDI sources, encode them into training windows exactly as export does
(same config file and token flags), and count, for every pair (query i, key j) that
attention sees in a window — causal (j ≤ i) by default, or bidirectional — its offsets
key minus query: token distance j − i, time Δt (ms, or grid steps for the grid
encoding) and pitch Δp (pairs where both tokens have a pitch; the others are counted
as "no pitch").

For each offset kind and bucket scheme the report gives the pairs inside the scheme's
range and saturated at each edge, the pairs and share of every bucket, the unused
buckets, the entropy and effective number of buckets, the quantiles of |Δ|, the
smallest clip of each linear width that reaches each target, and with --budget N the
(width, clip) pairs that fit N embedding rows; then the same for drum and pitched pairs,
per dataset, and with --joint a time × pitch table. Counting is exact (every pair, in
about O(L·B) per window); --sample P counts a random share P of the pairs and gives
every share a Wilson confidence interval.

Schemes are given as in "relshard buckets" (--distance, --time, --pitch, repeatable) or
in the buckets section of the config file, with the same keys as the flags:

  buckets:
    pairs: causal
    distance: ["linear:width=1,clip=64", "log:buckets=32,max=128"]
    time: [{scheme: log, buckets: 32, max: 2048}]
    pitch: ["linear:width=1,clip=24"]
    budget: 65

Output: text tables, --json (per kind "distance", "time", "pitch", per scheme at
least "pairs", "inside" and "buckets", the pairs per bucket id) or --csv.
` + exitCodesHelp,
			Args: cobra.ArbitraryArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				o.corpus.sources = args
				if err := o.Validate(cmd); err != nil {
					return err
				}
				return runCoverage(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}
