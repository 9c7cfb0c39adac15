package main

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/sampledata"
)

// sampleOptions are the flags of relshard sample.
type sampleOptions struct {
	out     string
	files   int
	seed    uint64
	damaged int
	force   bool
	workers int
}

// AddFlags registers the flags.
func (o *sampleOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.out, "out", "", "folder to write the corpus into (created if missing; must be empty unless --force)")
	fs.IntVar(&o.files, "files", 1000, "number of good files")
	fs.Uint64Var(&o.seed, "seed", 1, "corpus seed: the same seed gives the same bytes on every machine")
	fs.IntVar(&o.damaged, "damaged", 0, "number of damaged files, in the folder "+sampledata.DatasetSalvage)
	fs.BoolVar(&o.force, "force", false, "write into a folder that is not empty (files of the same names are overwritten)")
	fs.IntVar(&o.workers, "workers", 0, "files generated at once (0: all cores); the output does not depend on it")
}

// Validate checks the flags.
func (o *sampleOptions) Validate() error {
	if o.out == "" {
		return usageError("--out DIR is required")
	}
	if err := o.config().Validate(); err != nil {
		return usageError("%v", err)
	}
	return nil
}

func (o *sampleOptions) config() sampledata.Config {
	return sampledata.Config{Files: o.files, Seed: o.seed, Damaged: o.damaged, Workers: o.workers}
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &sampleOptions{}
		cmd := &cobra.Command{
			Use:   "sample --out DIR [--files N] [--seed S] [--damaged K]",
			Short: "Write a generated MIDI corpus of any size",
			Long: `Write a procedurally generated corpus of Standard MIDI Files into DIR, one folder
per invented dataset: velmora-recitals (expressive solo piano performances: human
timing, pedal, rubato; some with SMPTE division), tollemere-band (quantized band
arrangements at 96, 384, 480 and 960 PPQ, format-0 lead sheets) and kestrel-lane
(swing, odd and changing meters, format-2 pattern banks). Near-duplicates are made
on purpose: the same piece transposed (*-alt-key.mid) and saved at another PPQ
(*-<N>ppq.mid). With --damaged K, K broken files go to tollemere-salvage, one of each
kind of damage in turn (see the sampledata package for the errors they must give).

The same --seed gives byte-identical files on every machine and for any --workers.
DIR must be empty or missing unless --force is given.
` + exitCodesHelp,
			Args: cobra.NoArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				if err := o.Validate(); err != nil {
					return err
				}
				return runSample(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

func runSample(ctx context.Context, o *sampleOptions, s *streams) error {
	start := time.Now()
	sum, err := sampledata.WriteDir(ctx, o.out, o.config(), o.force)
	if errors.Is(err, sampledata.ErrNotEmpty) {
		return &exitError{code: exitFailed, err: fmt.Errorf("sample: %s is not empty (use --force to write into it)", o.out)}
	}
	if err != nil {
		return &exitError{code: exitFailed, err: fmt.Errorf("sample: %w", err)}
	}
	elapsed := time.Since(start)
	fmt.Fprintf(s.Out, "wrote %d files (%d damaged, %.1f MB) to %s in %.1fs\n",
		sum.Files, sum.Damaged, float64(sum.Bytes)/1e6, o.out, elapsed.Seconds())
	tw := tabwriter.NewWriter(s.Out, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "dataset\tfiles")
	for _, c := range sum.Datasets {
		fmt.Fprintf(tw, "%s\t%d\n", c.Name, c.Files)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	var kinds []string
	for _, c := range sum.Kinds {
		if !strings.HasPrefix(c.Name, sampledata.KindDamaged+"/") {
			kinds = append(kinds, fmt.Sprintf("%s %d", c.Name, c.Files))
		}
	}
	if sum.Damaged > 0 {
		kinds = append(kinds, fmt.Sprintf("damaged %d", sum.Damaged))
	}
	_, err = fmt.Fprintf(s.Out, "kinds: %s\n", strings.Join(kinds, ", "))
	return err
}
