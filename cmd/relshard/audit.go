package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/relpos/audit"
)

// auditOptions are the flags and arguments of relshard audit.
type auditOptions struct {
	corpus corpusFlags
	relpos relposFlags

	json      bool
	html      string
	charts    string
	byFolder  bool
	threshold float64
	tolerance float64
	tempoMin  float64
	tempoMax  float64
	minPairs  int64
	minJSD    float64

	cfg audit.Config
}

func (o *auditOptions) AddFlags(fs *pflag.FlagSet) {
	o.corpus.AddFlags(fs)
	o.relpos.AddFlags(fs, false)
	d := audit.DefaultConfig()
	fs.BoolVar(&o.json, "json", false, "print the report as JSON instead of tables")
	fs.StringVar(&o.html, "html", "", "also write the report as one self-contained HTML page to `FILE`")
	fs.StringVar(&o.charts, "charts", "", "also write every chart as SVG and PNG into `DIR`")
	fs.BoolVar(&o.byFolder, "by-folder", d.ByFolder, "with a single unnamed source, make each top-level folder a dataset")
	fs.Float64Var(&o.threshold, "grid-threshold", d.Grid.Threshold, "share of onsets a grid must explain to be named")
	fs.Float64Var(&o.tolerance, "grid-tolerance", d.Grid.Tolerance, "how far an onset may sit from a grid line, as a share of the grid step")
	fs.Float64Var(&o.tempoMin, "tempo-min", d.Tempo.MinBPM, "tempos below this many BPM are flagged")
	fs.Float64Var(&o.tempoMax, "tempo-max", d.Tempo.MaxBPM, "tempos above this many BPM are flagged")
	fs.Int64Var(&o.minPairs, "min-pairs", d.Outlier.MinPairs, "token pairs a file needs before it is compared with its dataset")
	fs.Float64Var(&o.minJSD, "outlier-divergence", d.Outlier.MinJSD, "Jensen–Shannon divergence (nats) below which no file is an outlier")
}

// Validate checks the flags and builds the audit config: defaults, then the config
// file's input, tokens and buckets sections, then the flags.
func (o *auditOptions) Validate(cmd *cobra.Command) error {
	if err := o.corpus.validate(); err != nil {
		return err
	}
	if o.json && o.html == "-" {
		return usageError("--html -: write the HTML report to a file, not standard output")
	}
	ecfg, err := o.corpus.config(cmd, &o.relpos)
	if err != nil {
		return err
	}
	cfg := audit.DefaultConfig()
	cfg.Tokenize = ecfg.Tokens
	cfg.Relpos = ecfg.Buckets
	cfg.Scan = ecfg.Input.Options()
	cfg.Scan.Workers = o.corpus.workers
	cfg.Scan.KeepDuplicates = ecfg.Shards.KeepDuplicates
	cfg.Workers = o.corpus.workers
	cfg.ByFolder = o.byFolder
	cfg.Grid.Threshold = o.threshold
	cfg.Grid.Tolerance = o.tolerance
	cfg.Tempo = audit.TempoRange{MinBPM: o.tempoMin, MaxBPM: o.tempoMax}
	cfg.Outlier.MinPairs = o.minPairs
	cfg.Outlier.MinJSD = o.minJSD
	if err := cfg.Validate(); err != nil {
		return usageError("%v", err)
	}
	o.cfg = cfg
	return nil
}

func runAudit(ctx context.Context, o *auditOptions, s *streams) error {
	cfg := o.cfg
	var bar *progressbar.ProgressBar
	if s.ErrIsTerminal {
		bar = progressbar.NewOptions64(-1, progressbar.OptionSetWriter(s.Err), progressbar.OptionSetDescription("auditing"),
			progressbar.OptionShowCount(), progressbar.OptionSetItsString("files"),
			progressbar.OptionThrottle(100*time.Millisecond), progressbar.OptionClearOnFinish())
		cfg.Progress = func(files int64) { _ = bar.Set64(files) }
	}
	rep, err := audit.Run(ctx, o.corpus.sourceList(), cfg)
	if bar != nil {
		_ = bar.Finish()
	}
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	if o.charts != "" {
		if err := writeAuditCharts(rep, o.charts); err != nil {
			return &exitError{code: exitFailed, err: err}
		}
	}
	if o.html != "" {
		if err := writeAuditFile(o.html, rep.WriteHTML); err != nil {
			return &exitError{code: exitFailed, err: err}
		}
	}
	if o.json {
		err = rep.WriteJSON(s.Out)
	} else {
		err = rep.WriteText(s.Out)
	}
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	if n := len(rep.Skipped); n > 0 {
		files := 0
		for _, d := range rep.Datasets {
			files += d.Files
		}
		return &exitError{code: exitSkipped, err: fmt.Errorf("%d of %d input files skipped (listed in the report)", n, files)}
	}
	return nil
}

// writeAuditCharts writes every chart of the report as NAME.svg and NAME.png into dir.
func writeAuditCharts(rep *audit.Report, dir string) error {
	charts, err := rep.Charts()
	if err != nil {
		return err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("charts: %w", err)
	}
	for _, c := range charts {
		if err := writeAuditFile(filepath.Join(dir, c.Name+".svg"), c.WriteSVG); err != nil {
			return err
		}
		if err := writeAuditFile(filepath.Join(dir, c.Name+".png"), c.WritePNG); err != nil {
			return err
		}
	}
	return nil
}

// writeAuditFile creates path and fills it with write, checking the close.
func writeAuditFile(path string, write func(w io.Writer) error) (err error) {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	defer func() {
		if cerr := f.Close(); cerr != nil && err == nil {
			err = fmt.Errorf("close %s: %w", path, cerr)
		}
	}()
	if err := write(f); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	return nil
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &auditOptions{}
		cmd := &cobra.Command{
			Use:   "audit SOURCE...",
			Short: "Show how each dataset times and pitches its notes, and which files stand out",
			Long: `Read the MIDI sources and, per dataset (each source; with a single source, each
top-level folder of it), build the distributions of inter-onset intervals, of the time
and pitch offsets (|Δt|, Δp) between the token pairs attention sees inside training
windows, of note durations, velocities, polyphony and tempo. Windows are cut as export
cuts them (same config file and token flags), from the unaugmented stream: the data's
own timing, so --transpose changes nothing here.

Per file: the beat grid its onsets sit on ("on a 1/16 grid", "triplet grid (1/8
triplets)", "unquantized performance"): the coarsest grid of 1, 2, 3, 4, 6, 8, 12, 16,
24 or 32 steps per quarter note that holds --grid-threshold of the onsets within
--grid-tolerance of a step; its PPQ, tempos outside --tempo-min..--tempo-max, a missing
time signature, the drum share.

Between datasets: the Jensen–Shannon divergence and the 1-D Wasserstein distance of
their Δt and Δp distributions. Outliers: files whose own distributions are far from the
rest of their dataset, or whose grid or tempo map stands out, each with its reason.
Coverage: the share of pairs inside the clip of each bucket scheme (--time, --pitch,
--distance, or the buckets section of the config file).

Output: aligned tables, or --json. --charts DIR writes histograms and cumulative curves
of Δt and Δp, with the bucket edges and clip drawn on them, as SVG and PNG; --html FILE
writes one self-contained page (charts inline, nothing loaded from the network) with
all of it.
` + exitCodesHelp,
			Args: cobra.ArbitraryArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				o.corpus.sources = args
				if err := o.Validate(cmd); err != nil {
					return err
				}
				return runAudit(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}
