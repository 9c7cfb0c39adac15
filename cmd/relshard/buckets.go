package main

import (
	"context"
	"encoding/json"
	"fmt"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/tokenize"
)

// relposFlags are the flags that set the relpos config; each has the name of its YAML
// key, and a flag given on the command line wins over the config file.
type relposFlags struct {
	pairs               string
	distance, time, pit []string
	instruments, joint  bool
	targets             []float64
	budget              int
	exactUpTo           int
	sample, confidence  float64
	seed                uint64
	report              bool // the report flags are registered
}

const schemeFlagHelp = "a bucket scheme (repeatable): linear:width=W,clip=K | log:buckets=N,max=M[,exact=E][,direction=D] | edges:E0,E1,..."

// AddFlags registers --pairs, the scheme flags, and the report flags when report is set.
func (f *relposFlags) AddFlags(fs *pflag.FlagSet, report bool) { f.addFlags(fs, true, report) }

// addFlags registers --pairs, the scheme flags when schemes is set, and the report
// flags when report is set (the sampling flags always with the report flags).
func (f *relposFlags) addFlags(fs *pflag.FlagSet, schemes, report bool) {
	f.report = report
	fs.StringVar(&f.pairs, "pairs", string(relpos.Causal), "pairs attention sees: causal (keys j ≤ i) or bidirectional")
	if schemes {
		fs.StringArrayVar(&f.distance, "distance", nil, "token distance: "+schemeFlagHelp)
		fs.StringArrayVar(&f.time, "time", nil, "time offset: "+schemeFlagHelp)
		fs.StringArrayVar(&f.pit, "pitch", nil, "pitch offset: "+schemeFlagHelp)
	}
	if !report {
		return
	}
	if schemes {
		fs.BoolVar(&f.instruments, "instruments", true, "break down into drum pairs and pitched-instrument pairs")
		fs.BoolVar(&f.joint, "joint", false, "add the time × pitch table of the first time and pitch schemes (walks every pitched pair)")
		fs.Float64SliceVar(&f.targets, "targets", []float64{0.95, 0.99}, "coverage targets of the clip recommendations")
		fs.IntVar(&f.budget, "budget", 0, "embedding rows: list the (width, clip) pairs that fit")
	}
	fs.IntVar(&f.exactUpTo, "exact-up-to", relpos.DefaultExact, "time |Δ| quantiles are exact up to this magnitude, bracketed within 1/12 above (cost: the pairs that close)")
	fs.Float64Var(&f.sample, "sample", 0, "count this share of the pairs, at random, with confidence intervals (0 = all, exact)")
	fs.Uint64Var(&f.seed, "seed", 0, "seed of the sampling")
	fs.Float64Var(&f.confidence, "confidence", 0.95, "confidence level of the sampling intervals")
}

// apply sets in cfg the flags given on the command line.
func (f *relposFlags) apply(fs *pflag.FlagSet, cfg *relpos.Config) error {
	specs := func(name string, in []string, out *[]relpos.SchemeSpec) error {
		if !fs.Changed(name) {
			return nil
		}
		*out = nil
		for _, s := range in {
			spec, err := relpos.ParseScheme(s)
			if err != nil {
				return usageError("--%s: %v", name, err)
			}
			*out = append(*out, spec)
		}
		return nil
	}
	if fs.Changed("pairs") {
		cfg.Pairs = relpos.Mode(f.pairs)
	}
	if err := specs("distance", f.distance, &cfg.Distance); err != nil {
		return err
	}
	if err := specs("time", f.time, &cfg.Time); err != nil {
		return err
	}
	if err := specs("pitch", f.pit, &cfg.Pitch); err != nil {
		return err
	}
	if f.report {
		if fs.Changed("instruments") {
			v := f.instruments
			cfg.Instruments = &v
		}
		if fs.Changed("joint") {
			cfg.Joint = f.joint
		}
		if fs.Changed("targets") {
			cfg.Targets = f.targets
		}
		if fs.Changed("budget") {
			cfg.Budget = f.budget
		}
		if fs.Changed("exact-up-to") {
			cfg.ExactUpTo = f.exactUpTo
		}
	}
	if err := cfg.Validate(); err != nil {
		return usageError("%v", err)
	}
	return nil
}

// applySampling sets in cfg the sampling flags given; export counts every pair, so
// these apply to the coverage and sweep reports only, after the export config is
// validated.
func (f *relposFlags) applySampling(fs *pflag.FlagSet, cfg *relpos.Config) error {
	if fs.Changed("sample") {
		cfg.Sample = f.sample
	}
	if fs.Changed("seed") {
		cfg.Seed = f.seed
	}
	if fs.Changed("confidence") {
		cfg.Confidence = f.confidence
	}
	if err := cfg.Validate(); err != nil {
		return usageError("%v", err)
	}
	return nil
}

// bucketsOptions are the flags of relshard buckets.
type bucketsOptions struct {
	relpos     relposFlags
	configPath string
	kind       string
	json       bool
	cfg        relpos.Config // resolved from the config file and the flags
	timeUnit   string
}

func (o *bucketsOptions) AddFlags(fs *pflag.FlagSet) {
	o.relpos.AddFlags(fs, false)
	fs.StringVar(&o.configPath, "config", "", "YAML config file: the tables of its buckets section (flags win over it)")
	fs.StringVar(&o.kind, "kind", "", "print only this offset kind: distance, time or pitch")
	fs.BoolVar(&o.json, "json", false, "print the tables as JSON (the form stored with the shards)")
}

func (o *bucketsOptions) Validate(fs *pflag.FlagSet) error {
	switch o.kind {
	case "", "distance", "time", "pitch":
	default:
		return usageError("--kind %q: want distance, time or pitch", o.kind)
	}
	cfg, err := loadConfig(o.configPath)
	if err != nil {
		return err
	}
	o.cfg = cfg.Buckets
	o.timeUnit = "ms"
	if cfg.Tokens.Encoding == tokenize.Grid {
		o.timeUnit = "grid steps"
	}
	return o.relpos.apply(fs, &o.cfg)
}

func runBuckets(_ context.Context, o *bucketsOptions, s *streams) error {
	tables, err := o.cfg.Tables()
	if err != nil {
		return &exitError{code: exitFailed, err: err}
	}
	for i := range tables {
		if tables[i].Kind == "time" {
			tables[i].Unit = o.timeUnit
		}
	}
	if o.kind != "" {
		var keep []relpos.Table
		for _, t := range tables {
			if t.Kind == o.kind {
				keep = append(keep, t)
			}
		}
		tables = keep
	}
	if o.json {
		enc := json.NewEncoder(s.Out)
		enc.SetIndent("", "  ")
		if err := enc.Encode(tables); err != nil {
			return fmt.Errorf("write tables: %w", err)
		}
		return nil
	}
	return relpos.WriteTables(s.Out, tables)
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &bucketsOptions{}
		cmd := &cobra.Command{
			Use:   "buckets",
			Short: "Print relative-position bucket tables",
			Long: `Print the bucket table of every relative-position scheme: which offsets (key minus
query, so causal offsets are ≤ 0) map to which bucket id, and which are saturated.
Without scheme flags the schemes of the config file's buckets section (--config)
are printed, or the defaults. --json prints the tables as
they are stored with the shards, so that training code applies exactly the same
mapping.

Schemes:
  linear:width=W,clip=K      bucket = clip(trunc(Δ/W), −K, K) + K, 2K+1 buckets (Shaw et al. 2018)
  log:buckets=N,max=M        exact then log-spaced buckets, saturating at |Δ| ≥ M (Raffel et al. 2020);
                             exact=E sets the exact magnitudes (default N/4 bidirectional, N/2 causal),
                             direction=causal|bidirectional (default: --pairs; pitch: bidirectional)
  edges:E0,E1,...,Em         bucket b covers [E_b, E_b+1); beyond saturates into the end buckets

Example: relshard buckets --pairs bidirectional --distance log:buckets=32,max=128
` + exitCodesHelp,
			Args: cobra.NoArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				if err := o.Validate(cmd.Flags()); err != nil {
					return err
				}
				return runBuckets(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}
