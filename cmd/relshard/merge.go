package main

import (
	"context"
	"errors"
	"fmt"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/export"
)

// mergeOptions are the flags and arguments of relshard merge.
type mergeOptions struct {
	parts     []string
	out       string
	overwrite bool
}

// AddFlags registers the flags.
func (o *mergeOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringVar(&o.out, "out", "", "folder of the merged dataset (required)")
	fs.BoolVar(&o.overwrite, "overwrite", false, "replace a dataset made with another config in --out (removes only the files its manifest lists)")
}

// Validate checks the flags and arguments.
func (o *mergeOptions) Validate() error {
	if o.out == "" {
		return usageError("--out DIR is required")
	}
	if len(o.parts) == 0 {
		return usageError("no part folders given: relshard merge --out DIR PART_DIR...")
	}
	return nil
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &mergeOptions{}
		cmd := &cobra.Command{
			Use:   "merge --out DIR PART_DIR...",
			Short: "Combine the folders of an export run in parts into one dataset",
			Long: `Combine the folders written by relshard export --part 1/N ... N/N into one dataset in
DIR with one manifest. The parts must come from the same config and relshard version and
all N must be given (in any order). Every shard is copied with its SHA-256 checked, no
piece may appear in two parts, the coverage is recounted from the rows, and the manifest
is written last. The merged rows equal those of a single run of the same export.
` + exitCodesHelp,
			Args: cobra.ArbitraryArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				o.parts = args
				if err := o.Validate(); err != nil {
					return err
				}
				return runMerge(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

func runMerge(ctx context.Context, o *mergeOptions, s *streams) error {
	opt := export.MergeOptions{Out: o.out, Overwrite: o.overwrite}
	var bar *progressbar.ProgressBar
	if s.ErrIsTerminal {
		bar = progressbar.NewOptions64(-1, progressbar.OptionSetWriter(s.Err), progressbar.OptionSetDescription("merging"),
			progressbar.OptionShowCount(), progressbar.OptionSetItsString("shards"),
			progressbar.OptionThrottle(100*time.Millisecond), progressbar.OptionClearOnFinish())
		opt.Progress = func(p export.Progress) { _ = bar.Set64(p.Shards) }
	}
	m, err := export.Merge(ctx, o.parts, opt)
	if bar != nil {
		_ = bar.Finish()
	}
	if err != nil {
		if errors.Is(err, export.ErrFolderInUse) {
			return &exitError{code: exitFailed, err: err}
		}
		return err
	}
	if err := printSummary(s, m, o.out); err != nil {
		return err
	}
	fmt.Fprintf(s.Out, "merged %d parts\n", len(o.parts))
	return nil
}
