package main

import (
	"context"
	"encoding/json"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/relpos"
)

// memplanOptions are the flags of relshard memplan.
type memplanOptions struct {
	spec relpos.MemSpec
	json bool
}

func (o *memplanOptions) AddFlags(fs *pflag.FlagSet) {
	fs.IntVar(&o.spec.Len, "len", 2048, "sequence length L (tokens per window)")
	fs.IntVar(&o.spec.Dim, "dim", 512, "model dimension D (all heads)")
	fs.IntVar(&o.spec.Heads, "heads", 8, "attention heads H (must divide --dim)")
	fs.IntVar(&o.spec.Batch, "batch", 1, "batch size")
	fs.StringVar((*string)(&o.spec.DType), "dtype", string(relpos.F32), "element type: f32 or bf16")
	fs.IntVar(&o.spec.Buckets, "buckets", 32, "relative-position buckets B of the bucketed gather")
	fs.BoolVar(&o.json, "json", false, "print JSON")
}

func (o *memplanOptions) Validate() error {
	if o.spec.DType != relpos.F32 && o.spec.DType != relpos.BF16 {
		return usageError("--dtype %q: want f32 or bf16", o.spec.DType)
	}
	for _, f := range []struct {
		name string
		v    int
	}{{"len", o.spec.Len}, {"dim", o.spec.Dim}, {"heads", o.spec.Heads}, {"batch", o.spec.Batch}, {"buckets", o.spec.Buckets}} {
		if f.v < 1 {
			return usageError("--%s %d: want ≥ 1", f.name, f.v)
		}
	}
	if o.spec.Dim%o.spec.Heads != 0 {
		return usageError("--heads %d does not divide --dim %d", o.spec.Heads, o.spec.Dim)
	}
	return nil
}

func runMemplan(_ context.Context, o *memplanOptions, s *streams) error {
	plan, err := relpos.PlanMemory(o.spec)
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	if o.json {
		enc := json.NewEncoder(s.Out)
		enc.SetIndent("", "  ")
		return enc.Encode(plan)
	}
	return plan.WriteText(s.Out)
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &memplanOptions{}
		cmd := &cobra.Command{
			Use:   "memplan",
			Short: "Print the memory of the relative term of attention per layer",
			Long: `Print the memory that the relative-position term of attention takes per layer, for
three ways of computing it:

  materialized  one embedding per pair and head, an L×L×D tensor (Shaw et al. 2018)
  skewing       one L×D_h embedding matrix per head, L×D per layer (Huang et al. 2018)
  bucketed      L×B bucket logits per head and batch element, gathered through one
                L×L int32 bucket index shared by heads and batch

and the L×L relative logits per head that every method ends with. The embedding
tensors of the first two do not grow with the batch.

Example: relshard memplan --len 2048 --dim 512 --heads 8 --dtype f32
(8,589,934,592 B materialized and 4,194,304 B skewed per layer, the 8.5 GB and
4.2 MB of Huang et al. 2018).
` + exitCodesHelp,
			Args: cobra.NoArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				if err := o.Validate(); err != nil {
					return err
				}
				return runMemplan(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}
