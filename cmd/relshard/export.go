package main

import (
	"context"
	"errors"
	"fmt"
	"maps"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/ingest"
)

// exportOptions are the flags and arguments of relshard export.
type exportOptions struct {
	sources    []string // SOURCE or NAME=SOURCE arguments, then --dataset values
	datasets   []string
	out        string
	configPath string
	workers    int
	part       string
	parts      int
	overwrite  bool
	licenses   []string

	shardRows      int64
	shardMB        float64
	rowGroupMB     float64
	compression    string
	splits         string
	keepDuplicates bool
	maxLen         int
	encoding       string
	transpose      []int

	getenv func(string) string // the environment, for --part auto
}

// AddFlags registers the flags.
func (o *exportOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringArrayVar(&o.datasets, "dataset", nil, "a source with its dataset name, NAME=PATH (repeatable; after the SOURCE arguments)")
	fs.StringVar(&o.out, "out", "", "dataset folder to write (required): empty, new, or an earlier export")
	fs.StringVar(&o.configPath, "config", "", "YAML config file (sections input, tokens, buckets, shards, licenses); flags win over it")
	fs.IntVar(&o.workers, "workers", 0, "files parsed, pieces encoded and shards written at once (0: all cores); the output is the same for any value")
	fs.StringVar(&o.part, "part", "", `export only part I of N of the pieces, "I/N"; "auto" reads a Kubernetes Indexed Job or Slurm array index from the environment`)
	fs.IntVar(&o.parts, "parts", 0, "number of parts N for --part auto (default: SLURM_ARRAY_TASK_COUNT)")
	fs.BoolVar(&o.overwrite, "overwrite", false, "replace a dataset made with another config in --out (removes only the files its manifest lists)")
	fs.StringArrayVar(&o.licenses, "license", nil, "licence or provenance text of a dataset for the manifest, DATASET=TEXT (repeatable)")
	fs.Int64Var(&o.shardRows, "shard-rows", 0, "rows per shard (instead of --shard-mb)")
	fs.Float64Var(&o.shardMB, "shard-mb", export.DefaultShardMB, "shard size target in MiB of uncompressed payload (files are smaller by the compression)")
	fs.Float64Var(&o.rowGroupMB, "row-group-mb", export.DefaultRowGroupMB, "row group size target in MiB of uncompressed payload")
	fs.StringVar(&o.compression, "compression", export.CompressionZstd, "shard compression: zstd, snappy or none")
	fs.StringVar(&o.splits, "splits", "0.9,0.05,0.05", "train,validation,test shares, assigned by content hash")
	fs.BoolVar(&o.keepDuplicates, "keep-duplicates", false, "export duplicate files too (default: listed in the manifest, not exported)")
	fs.IntVar(&o.maxLen, "max-len", 0, "tokens per window (default from the config: 2048)")
	fs.StringVar(&o.encoding, "encoding", "", "token encoding: performance or grid (default from the config: performance)")
	fs.IntSliceVar(&o.transpose, "transpose", nil, "transposition augmentation in semitones, e.g. 0,-2,2 (default from the config: 0)")
}

// Validate checks the flags and arguments that need no config.
func (o *exportOptions) Validate(cmd *cobra.Command) error {
	if len(o.sources)+len(o.datasets) == 0 {
		return usageError("no source given: relshard export SOURCE... --out DIR")
	}
	if o.out == "" {
		return usageError("--out DIR is required")
	}
	if o.workers < 0 {
		return usageError("--workers %d: want 0 (all cores) or more", o.workers)
	}
	if cmd.Flags().Changed("shard-rows") && cmd.Flags().Changed("shard-mb") {
		return usageError("--shard-rows and --shard-mb are exclusive")
	}
	for _, d := range o.datasets {
		if src := ingest.ParseSource(d); src.Dataset == "" {
			return usageError("--dataset %q: want NAME=PATH", d)
		}
	}
	if _, err := parseLicenses(o.licenses); err != nil {
		return err
	}
	if _, err := parseRatios(o.splits); err != nil {
		return err
	}
	return nil
}

// config resolves defaults < config file < flags.
func (o *exportOptions) config(cmd *cobra.Command) (export.Config, map[string]string, error) {
	cf, err := loadConfigFile(o.configPath)
	if err != nil {
		return export.Config{}, nil, err
	}
	cfg := cf.Config
	applyFlags(cmd, &cfg, []flagSetter{
		{"shard-rows", func(c *export.Config) { c.Shards.Rows = o.shardRows }},
		{"shard-mb", func(c *export.Config) { c.Shards.MB, c.Shards.Rows = o.shardMB, 0 }},
		{"row-group-mb", func(c *export.Config) { c.Shards.RowGroupMB = o.rowGroupMB }},
		{"compression", func(c *export.Config) { c.Shards.Compression = o.compression }},
		{"splits", func(c *export.Config) { c.Shards.Splits, _ = parseRatios(o.splits) }},
		{"keep-duplicates", func(c *export.Config) { c.Shards.KeepDuplicates = o.keepDuplicates }},
		{"max-len", func(c *export.Config) { c.Tokens.MaxLen = o.maxLen }},
		{"encoding", func(c *export.Config) { c.Tokens.Encoding = o.encoding }},
		{"transpose", func(c *export.Config) { c.Tokens.Transpose = slices.Clone(o.transpose) }},
	})
	if err := cfg.Validate(); err != nil {
		return cfg, nil, usageError("%v", err)
	}
	licenses := map[string]string{}
	for k, v := range cf.Licenses {
		licenses[k] = v
	}
	flagLicenses, _ := parseLicenses(o.licenses)
	for k, v := range flagLicenses {
		licenses[k] = v
	}
	if len(licenses) == 0 {
		licenses = nil
	}
	return cfg, licenses, nil
}

func parseLicenses(args []string) (map[string]string, error) {
	m := map[string]string{}
	for _, a := range args {
		name, text, ok := strings.Cut(a, "=")
		if !ok || name == "" || text == "" {
			return nil, usageError("--license %q: want DATASET=TEXT", a)
		}
		m[name] = text
	}
	return m, nil
}

func parseRatios(s string) (export.Ratios, error) {
	f := strings.Split(s, ",")
	if len(f) != 3 {
		return export.Ratios{}, usageError("--splits %q: want three shares TRAIN,VALIDATION,TEST such as 0.9,0.05,0.05", s)
	}
	var v [3]float64
	for i, x := range f {
		n, err := strconv.ParseFloat(strings.TrimSpace(x), 64)
		if err != nil {
			return export.Ratios{}, usageError("--splits %q: %q is not a number", s, x)
		}
		v[i] = n
	}
	r := export.Ratios{Train: v[0], Validation: v[1], Test: v[2]}
	if err := r.Validate(); err != nil {
		return r, usageError("--splits: %v", err)
	}
	return r, nil
}

// resolvePart reads --part: "", "I/N", or "auto" (scheduler environment).
//
// Kubernetes Indexed Jobs (completionMode: Indexed) set JOB_COMPLETION_INDEX, from
// 0 to completions − 1, and do not publish the completion count, so --parts N is
// needed (kubernetes.io, "Indexed Job for Parallel Processing with Static Work
// Assignment"). Slurm job arrays set SLURM_ARRAY_TASK_ID to the task's array index
// (slurm.schedmd.com, "Job Array Support"), and SLURM_ARRAY_TASK_MIN,
// SLURM_ARRAY_TASK_COUNT and SLURM_ARRAY_TASK_STEP (same page, from memory); the
// part is ID − MIN + 1 of COUNT, so --array=0-3 and --array=1-4 both give parts
// 1..4. A stepped or listed array (--array=0-6:2, --array=1,3,5) is refused: its
// ids are not contiguous, and the part index would fall outside 1..COUNT.
func resolvePart(flag string, parts int, getenv func(string) string) (export.Part, error) {
	switch flag {
	case "":
		if parts != 0 {
			return export.Part{}, usageError("--parts needs --part auto")
		}
		return export.Part{}, nil
	case "auto":
		return partFromEnv(parts, getenv)
	}
	is, ns, ok := strings.Cut(flag, "/")
	i, err1 := strconv.Atoi(is)
	n, err2 := strconv.Atoi(ns)
	if !ok || err1 != nil || err2 != nil {
		return export.Part{}, usageError(`--part %q: want I/N such as 2/8, or "auto"`, flag)
	}
	p := export.Part{Index: i, Count: n}
	if err := p.Validate(); err != nil {
		return p, usageError("--part: %v", err)
	}
	return p, nil
}

func partFromEnv(parts int, getenv func(string) string) (export.Part, error) {
	atoi := func(name string) (int, bool, error) {
		v := getenv(name)
		if v == "" {
			return 0, false, nil
		}
		n, err := strconv.Atoi(v)
		if err != nil {
			return 0, true, usageError("--part auto: %s=%q is not a number", name, v)
		}
		return n, true, nil
	}
	var p export.Part
	if idx, ok, err := atoi("JOB_COMPLETION_INDEX"); err != nil {
		return p, err
	} else if ok {
		if parts <= 0 {
			return p, usageError("--part auto: JOB_COMPLETION_INDEX=%d is set; give the Job's completions as --parts N", idx)
		}
		p = export.Part{Index: idx + 1, Count: parts}
	} else if id, ok, err := atoi("SLURM_ARRAY_TASK_ID"); err != nil {
		return p, err
	} else if ok {
		lo, _, err := atoi("SLURM_ARRAY_TASK_MIN")
		if err != nil {
			return p, err
		}
		n := parts
		if n <= 0 {
			c, ok, err := atoi("SLURM_ARRAY_TASK_COUNT")
			if err != nil {
				return p, err
			}
			if !ok {
				return p, usageError("--part auto: SLURM_ARRAY_TASK_COUNT is not set; give --parts N")
			}
			n = c
		}
		if step, ok, _ := atoi("SLURM_ARRAY_TASK_STEP"); ok && step != 1 {
			return p, usageError("--part auto: a Slurm array with step %d; use a contiguous --array range", step)
		}
		p = export.Part{Index: id - lo + 1, Count: n}
	} else {
		return p, usageError("--part auto: neither JOB_COMPLETION_INDEX (Kubernetes Indexed Job) nor SLURM_ARRAY_TASK_ID (Slurm array) is set")
	}
	if err := p.Validate(); err != nil {
		return p, usageError("--part auto: %v", err)
	}
	return p, nil
}

func (o *exportOptions) sourceList() []ingest.Source {
	var out []ingest.Source
	for _, a := range append(slices.Clone(o.sources), o.datasets...) {
		out = append(out, ingest.ParseSource(a))
	}
	return out
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &exportOptions{getenv: os.Getenv}
		cmd := &cobra.Command{
			Use:   "export SOURCE... --out DIR",
			Short: "Write tokenized, deduplicated, split Parquet training shards and a manifest",
			Long: `Read the MIDI sources, drop duplicates, encode every piece into training windows,
count their relative-position bucket coverage, and write the windows as Parquet shards,
one row per window, in DIR/train, DIR/validation and DIR/test, then DIR/manifest.json.

Columns: tokens list<int32>, time list<int32>, pitch list<int16> (-1: no pitch),
inst list<int16> (-1 none, 0-127 GM program, 128 drums), piece, dataset, source,
content_hash, split (strings), window, transpose (int32), stretch (float32). Each
shard's footer holds the vocabulary, the bucket tables, the time unit and the config
hash. Splits follow the transposition-invariant content hash, so duplicates and all
windows and augmentations of a piece share a split, and a piece keeps its split as the
corpus grows.

Shards and manifest appear only complete; the manifest is written last. Run the same
command again after a crash or kill to finish the job: the result is byte-identical to
an uninterrupted run, for any --workers. A folder holding other files, or a dataset made
with another config, is refused (--overwrite replaces the latter).

On a cluster, run N copies with --part 1/N ... N/N (or --part auto in a Kubernetes
Indexed Job or a Slurm array), each into its own folder, then relshard merge.
` + exitCodesHelp,
			Args: cobra.ArbitraryArgs,
			RunE: func(cmd *cobra.Command, args []string) error {
				o.sources = args
				if err := o.Validate(cmd); err != nil {
					return err
				}
				return runExport(cmd.Context(), cmd, o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

func runExport(ctx context.Context, cmd *cobra.Command, o *exportOptions, s *streams) error {
	cfg, licenses, err := o.config(cmd)
	if err != nil {
		return err
	}
	part, err := resolvePart(o.part, o.parts, o.getenv)
	if err != nil {
		return err
	}
	var bar *progressbar.ProgressBar
	opt := export.Options{Out: o.out, Workers: o.workers, Part: part, Overwrite: o.overwrite,
		Licenses: licenses, ToolVersion: toolVersion()}
	if s.ErrIsTerminal {
		bar = progressbar.NewOptions64(-1, progressbar.OptionSetWriter(s.Err), progressbar.OptionSetDescription("exporting"),
			progressbar.OptionShowCount(), progressbar.OptionSetItsString("files"),
			progressbar.OptionThrottle(100*time.Millisecond), progressbar.OptionClearOnFinish())
	}
	var last export.Progress
	opt.Progress = func(p export.Progress) {
		last = p
		if bar != nil {
			bar.Describe(fmt.Sprintf("exporting: %d windows, %d shards; files", p.Windows, p.Shards))
			_ = bar.Set64(p.Files)
		}
	}
	m, err := export.Run(ctx, o.sourceList(), cfg, opt)
	if bar != nil {
		_ = bar.Finish()
	}
	if errors.Is(err, context.Canceled) {
		return &exitError{code: exitFailed, err: fmt.Errorf("interrupted; run the same command again to finish the export in %s", o.out)}
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
	if last.Reused > 0 {
		fmt.Fprintf(s.Out, "resumed: kept %d of %d shards from the interrupted run\n", last.Reused, last.Shards)
	}
	// As in scan: archive entries that are not MIDI files are listed, not failures.
	var skipped int64
	for class, n := range m.FileCounts().Skipped {
		if class != ingest.ErrNotMIDI.Error() {
			skipped += n
		}
	}
	if skipped > 0 {
		return &exitError{code: exitSkipped, err: fmt.Errorf("%d of %d input files skipped (see files in %s)", skipped, m.Totals.Files, filepath.Join(o.out, export.ManifestName))}
	}
	return nil
}

// printSummary writes the end-of-run summary of a manifest.
func printSummary(s *streams, m *export.Manifest, dir string) error {
	t := m.Totals
	var b strings.Builder
	part := ""
	if m.Part != nil {
		part = fmt.Sprintf(" (part %s)", m.Part)
	}
	fmt.Fprintf(&b, "%s%s: %d windows, %d tokens, %d pieces in %d shards (%s)\n", dir, part, t.Windows, t.Tokens, t.Pieces, t.Shards, byteCount(t.Bytes))
	fmt.Fprintf(&b, "files: %d (%d ok, %d duplicate, %d skipped)\n", t.Files, t.FilesOK, t.FilesDuplicate, t.FilesSkipped)
	counts := m.FileCounts()
	classes := counts.Skipped
	for _, c := range slices.Sorted(maps.Keys(classes)) {
		fmt.Fprintf(&b, "  skipped, %s: %d\n", c, classes[c])
	}
	for _, sp := range export.Splits {
		st := t.Splits[sp]
		fmt.Fprintf(&b, "%-10s %8d pieces %10d windows %12d tokens %5d shards\n", sp, st.Pieces, st.Windows, st.Tokens, st.Shards)
	}
	fmt.Fprintf(&b, "config %s, encoding %s, vocabulary %d, time unit %s\n", m.ConfigHash[:min(12, len(m.ConfigHash))], m.Encoding, m.VocabSize, m.TimeUnit)
	datasets := map[string]bool{}
	for _, d := range counts.Datasets {
		datasets[d] = true
	}
	for _, d := range counts.Datasets {
		if _, ok := m.Licenses[d]; !ok {
			fmt.Fprintf(&b, "note: no licence recorded for dataset %s (--license %s=TEXT)\n", d, d)
		}
	}
	for _, d := range slices.Sorted(maps.Keys(m.Licenses)) {
		if !datasets[d] {
			fmt.Fprintf(&b, "warning: a licence is given for dataset %s, but no input belongs to it\n", d)
		}
	}
	_, err := fmt.Fprint(s.Out, b.String())
	return err
}

func byteCount(n int64) string {
	const unit = 1024
	if n < unit {
		return fmt.Sprintf("%d B", n)
	}
	div, exp := int64(unit), 0
	for m := n / unit; m >= unit; m /= unit {
		div *= unit
		exp++
	}
	return fmt.Sprintf("%.1f %ciB", float64(n)/float64(div), "KMGTPE"[exp])
}
