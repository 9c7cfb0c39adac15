package main

import (
	"context"
	"fmt"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/export"
)

// verifyOptions are the flags and arguments of relshard verify.
type verifyOptions struct {
	dir   string
	quiet bool
}

// AddFlags registers the flags.
func (o *verifyOptions) AddFlags(fs *pflag.FlagSet) {
	fs.BoolVarP(&o.quiet, "quiet", "q", false, "print only the problems")
}

// Validate checks the arguments.
func (o *verifyOptions) Validate() error {
	if o.dir == "" {
		return usageError("no dataset folder given: relshard verify DIR")
	}
	return nil
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &verifyOptions{}
		cmd := &cobra.Command{
			Use:   "verify DIR",
			Short: "Check an exported dataset against its manifest",
			Long: `Read every shard of the dataset in DIR back and check it against DIR/manifest.json:
size and SHA-256 of each file, Parquet schema and footer metadata, row and token counts,
equal list lengths in every row, token ids below the vocabulary size, windows no longer
than max_len, pitches in -1..127, each row's split against the split rule, splits disjoint
by content hash, no piece in two parts, totals equal to the manifest, and no unlisted or
half-written shard files. Prints one line per problem.
` + exitCodesHelp,
			Args: cobra.ExactArgs(1),
			RunE: func(cmd *cobra.Command, args []string) error {
				o.dir = args[0]
				if err := o.Validate(); err != nil {
					return err
				}
				return runVerify(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

func runVerify(ctx context.Context, o *verifyOptions, s *streams) error {
	probs, err := export.Verify(ctx, o.dir)
	if err != nil {
		return err
	}
	for _, p := range probs {
		if _, err := fmt.Fprintln(s.Out, p); err != nil {
			return err
		}
	}
	if len(probs) > 0 {
		return &exitError{code: exitFailed, err: fmt.Errorf("verify %s: %d problems", o.dir, len(probs))}
	}
	if !o.quiet {
		m, err := export.ReadManifest(o.dir)
		if err != nil {
			return err
		}
		_, err = fmt.Fprintf(s.Out, "%s: ok: %d shards, %d windows, %d tokens, %d files accounted for\n",
			o.dir, m.Totals.Shards, m.Totals.Windows, m.Totals.Tokens, m.Totals.Files)
		return err
	}
	return nil
}
