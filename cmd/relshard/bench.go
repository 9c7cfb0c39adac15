package main

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"text/tabwriter"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/export/bench"
)

// benchOptions are the flags of relshard bench.
type benchOptions struct {
	corpus   string
	files    int
	seed     uint64
	workers  int
	memSmall int
	memLarge int
	smoke    bool
	rounds   int
	noMemory bool
	json     bool
	tempDir  string
}

// AddFlags registers the flags.
func (o *benchOptions) AddFlags(fs *pflag.FlagSet) {
	d := bench.DefaultConfig()
	fs.StringVar(&o.corpus, "corpus", "", "folder of MIDI files to measure on (default: a generated sample corpus)")
	fs.IntVar(&o.files, "files", d.Files, "files of the generated sample corpus")
	fs.Uint64Var(&o.seed, "seed", d.Seed, "seed of the generated corpora")
	fs.IntVar(&o.workers, "workers", 0, "workers of the floors and the full export (0: all cores)")
	fs.IntVar(&o.memSmall, "mem-small", d.MemSmall, "files of the smaller peak-memory export")
	fs.IntVar(&o.memLarge, "mem-large", d.MemLarge, "files of the larger peak-memory export")
	fs.IntVar(&o.rounds, "rounds", 3, "times the ingest, memory and workers ratios are measured (the median is judged)")
	fs.BoolVar(&o.smoke, "smoke", false, "a quick run on a small corpus; targets are reported but not enforced")
	fs.BoolVar(&o.noMemory, "no-memory", false, "skip the peak-memory exports (child processes)")
	fs.BoolVar(&o.json, "json", false, "print the measures as JSON")
	fs.StringVar(&o.tempDir, "temp-dir", "", "folder for the generated corpora and exports (default: the system's)")
}

// Validate checks the flags.
func (o *benchOptions) Validate() error {
	if o.files < 1 || o.memSmall < 1 || o.memLarge < o.memSmall {
		return usageError("--files, --mem-small must be ≥ 1 and --mem-large ≥ --mem-small")
	}
	if o.workers < 0 {
		return usageError("--workers %d: want 0 (all cores) or more", o.workers)
	}
	if o.rounds < 1 {
		return usageError("--rounds %d: want 1 or more", o.rounds)
	}
	return nil
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &benchOptions{}
		cmd := &cobra.Command{
			Use:   "bench",
			Short: "Measure speed and memory against baselines measured in the same run",
			Long: `Measure relshard on a corpus (default: 10,000 generated sample files) and print one line
per measure, each target with PASS or FAIL. Every figure is a ratio against a baseline
measured in the same run, because shared machines are noisy:

  full export ÷ gomidi smf.ReadFrom parse-only time     target ≤ 0.5
  ingest stage ÷ reading the bytes                      target ≤ 3
  naive pair loop ÷ exact counting, L=2048, 64 buckets  target ≥ 20, identical counts
  peak RSS of export, 20,000 ÷ 2,000 files              target ≤ 1.25, and < 512 MiB
  export wall time, --workers 1 ÷ --workers 2           target ≥ 1.7 on 2 cores

plus throughput in files/s, notes/s, tokens/s and MB/s. The ingest, memory and workers
ratios are measured --rounds times, the two sides back to back, and the median is
judged; the detail column lists every round. Peak memory is what each export child
process reports of itself (VmHWM, Linux). With --smoke it runs on a
small corpus and enforces nothing.` + "\n" + exitCodesHelp + `
  A failed target exits with status 1.`,
			Args: cobra.NoArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				if o.smoke && !cmd.Flags().Changed("files") {
					sc := bench.SmokeConfig()
					o.files, o.memSmall, o.memLarge = sc.Files, sc.MemSmall, sc.MemLarge
					if !cmd.Flags().Changed("rounds") {
						o.rounds = sc.Rounds
					}
				}
				if err := o.Validate(); err != nil {
					return err
				}
				return runBench(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

func runBench(ctx context.Context, o *benchOptions, s *streams) error {
	cfg := bench.Config{Corpus: o.corpus, Files: o.files, Seed: o.seed, Workers: o.workers,
		MemSmall: o.memSmall, MemLarge: o.memLarge, TempDir: o.tempDir, Smoke: o.smoke, Rounds: o.rounds}
	if !o.noMemory {
		exe, err := os.Executable()
		if err != nil {
			return fmt.Errorf("bench: find the relshard binary for the memory measures: %w", err)
		}
		cfg.Exe = exe
	}
	rep, err := bench.Run(ctx, cfg, func(msg string) { fmt.Fprintln(s.Err, "bench:", msg) })
	if err != nil {
		return err
	}
	if o.json {
		enc := json.NewEncoder(s.Out)
		enc.SetIndent("", "  ")
		if err := enc.Encode(rep); err != nil {
			return err
		}
	} else if err := writeBenchTable(s, rep); err != nil {
		return err
	}
	if rep.Failed() {
		return &exitError{code: exitFailed, err: fmt.Errorf("bench: a target failed")}
	}
	return nil
}

func writeBenchTable(s *streams, rep *bench.Report) error {
	fmt.Fprintf(s.Out, "corpus %s: %d files, %.1f MB, %d workers\n\n", rep.Corpus, rep.Files, float64(rep.Bytes)/1e6, rep.Workers)
	tw := tabwriter.NewWriter(s.Out, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "measure\tvalue\ttarget\tresult\tdetail")
	for _, m := range rep.Measures {
		fmt.Fprintf(tw, "%s\t%s %s\t%s\t%s\t%s\n", m.Name, fmtValue(m.Value), m.Unit, m.Target, m.Status, m.Detail)
	}
	return tw.Flush()
}

func fmtValue(v float64) string {
	switch {
	case v >= 1000:
		return fmt.Sprintf("%.0f", v)
	case v >= 10:
		return fmt.Sprintf("%.1f", v)
	}
	return fmt.Sprintf("%.3f", v)
}
