package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/relpos/audit"
	"github.com/relshard/relshard/sampledata"
)

// demoMarker marks a folder as relshard demo output, so a re-run may replace it and
// no other folder is ever written into.
const demoMarker = ".relshard-demo"

// demoOptions are the flags and arguments of relshard demo.
type demoOptions struct {
	dir     string
	workers int
}

// AddFlags registers the flags.
func (o *demoOptions) AddFlags(fs *pflag.FlagSet) {
	fs.IntVar(&o.workers, "workers", 0, "files processed at once (0: all cores); the output is the same for any value")
}

// Validate checks the flags.
func (o *demoOptions) Validate() error {
	if o.workers < 0 {
		return usageError("--workers %d: want 0 (all cores) or more", o.workers)
	}
	return nil
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &demoOptions{dir: "relshard-demo"}
		cmd := &cobra.Command{
			Use:   "demo [DIR]",
			Short: "Run the whole job on the embedded demo corpus",
			Long: `Run the main job end to end on the embedded demo corpus, into DIR (default
./relshard-demo):

  1. write the corpus: an invented recital archive, band library and groove
     collection (a few dozen pieces, near-duplicates among them on purpose), and a
     damaged set beside it (DIR/corpus);
  2. scan: every file accounted for; each damaged file must give its documented error;
  3. tokenize and count the relative-position coverage of the training windows;
  4. export Parquet shards with splits and a manifest (DIR/shards);
  5. verify the shards against the manifest;
  6. audit the timing and pitch offsets per dataset (DIR/audit.html).

DIR must be new, empty, or an earlier demo's folder (which is replaced).` + "\n" + exitCodesHelp + `
  The damaged files are expected: the demo exits 0 when each gives its documented error.`,
			Args: cobra.MaximumNArgs(1),
			RunE: func(cmd *cobra.Command, args []string) error {
				if len(args) == 1 {
					o.dir = args[0]
				}
				if err := o.Validate(); err != nil {
					return err
				}
				return runDemo(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

func runDemo(ctx context.Context, o *demoOptions, s *streams) error {
	fail := func(err error) error { return &exitError{code: exitFailed, err: fmt.Errorf("demo: %w", err)} }
	out := s.Out
	if err := prepareDemoDir(o.dir); err != nil {
		return fail(err)
	}
	corpus := filepath.Join(o.dir, "corpus")
	sources, damaged, err := writeDemoCorpus(corpus)
	if err != nil {
		return fail(err)
	}
	fmt.Fprintf(out, "relshard demo: corpus of %d datasets written to %s\n", len(sources), corpus)

	cfg := export.DefaultConfig()
	scanOpts := cfg.Input.Options()
	scanOpts.Workers = o.workers

	// 1. Scan: every input accounted for, damaged files with their documented errors.
	fmt.Fprintf(out, "\n== scan\n")
	sum := ingest.NewSummary()
	var mismatched []string
	var checked int
	err = ingest.Scan(ctx, sources, scanOpts, func(r *ingest.Result) error {
		sum.Add(r)
		r.Release()
		key := r.Record.Dataset + "/" + r.Record.Path
		c, ok := damaged[key]
		if !ok {
			return nil
		}
		checked++
		if r.Record.Status != ingest.StatusSkipped || !strings.Contains(r.Record.Reason, c.WantText) {
			mismatched = append(mismatched, fmt.Sprintf("%s: want %s (%q), got %s %q", key, c.WantErr, c.WantText, r.Record.Status, r.Record.Reason))
		}
		return nil
	})
	if err != nil {
		return fail(err)
	}
	if err := writeScanTables(out, sum); err != nil {
		return err
	}
	if len(mismatched) > 0 {
		return fail(fmt.Errorf("damaged files without their documented error:\n  %s", strings.Join(mismatched, "\n  ")))
	}
	fmt.Fprintf(out, "damaged set: all %d files skipped with their documented errors\n", checked)

	// 2. Tokenize and count the coverage of the windows export will write.
	fmt.Fprintf(out, "\n== tokenize and coverage (%s encoding, windows of %d tokens)\n", cfg.Tokens.Encoding, cfg.Tokens.MaxLen)
	cov, err := relpos.CountCorpus(ctx, sources, cfg.Buckets, relpos.CorpusOptions{Scan: scanOpts, Tokens: cfg.Tokens, Workers: o.workers})
	if err != nil {
		return fail(err)
	}
	rep := cov.Report()
	if err := rep.WriteText(out, relpos.TextOptions{}); err != nil {
		return err
	}

	// 3. Export; its own count of the windows it wrote must equal the coverage stage's.
	fmt.Fprintf(out, "\n== export\n")
	shards := filepath.Join(o.dir, "shards")
	man, err := export.Run(ctx, sources, cfg, export.Options{Out: shards, Workers: o.workers, ToolVersion: toolVersion()})
	if err != nil {
		return fail(err)
	}
	if err := writeDemoExport(out, man, shards); err != nil {
		return err
	}
	if man.Totals.Windows != rep.Windows || man.Totals.Tokens != rep.Tokens {
		return fail(fmt.Errorf("export wrote %d windows of %d tokens, coverage counted %d of %d",
			man.Totals.Windows, man.Totals.Tokens, rep.Windows, rep.Tokens))
	}
	fmt.Fprintf(out, "coverage counted exactly the %d windows export wrote\n", rep.Windows)

	fmt.Fprintf(out, "\n== verify\n")
	problems, err := export.Verify(ctx, shards)
	if err != nil {
		return fail(err)
	}
	if len(problems) > 0 {
		for _, p := range problems {
			fmt.Fprintln(out, "  ", p)
		}
		return fail(fmt.Errorf("verify found %d problems in %s", len(problems), shards))
	}
	fmt.Fprintf(out, "%s: %d shards, every row and checksum matches the manifest\n", shards, len(man.Shards))

	// 5. Audit, written as one HTML page.
	fmt.Fprintf(out, "\n== audit\n")
	acfg := audit.DefaultConfig()
	acfg.Tokenize, acfg.Relpos, acfg.Scan, acfg.Workers = cfg.Tokens, cfg.Buckets, scanOpts, o.workers
	arep, err := audit.Run(ctx, sources, acfg)
	if err != nil {
		return fail(err)
	}
	htmlPath := filepath.Join(o.dir, "audit.html")
	if err := writeAuditFile(htmlPath, arep.WriteHTML); err != nil {
		return fail(err)
	}
	fmt.Fprintf(out, "%d datasets, %d pieces graded for a beat grid, %d outliers; the full tables with `relshard audit %s`\n",
		len(arep.Datasets), len(arep.Files), len(arep.Outliers), corpus)
	fmt.Fprintf(out, "\nrelshard demo: done. Shards and manifest in %s, audit report in %s\n", shards, htmlPath)
	return nil
}

// prepareDemoDir makes dir ready for a demo: new, empty, or an earlier demo's folder,
// whose corpus is removed (it is written again, byte for byte the same).
func prepareDemoDir(dir string) error {
	entries, err := os.ReadDir(dir)
	switch {
	case errors.Is(err, os.ErrNotExist):
	case err != nil:
		return err
	case len(entries) > 0:
		if _, err := os.Stat(filepath.Join(dir, demoMarker)); err != nil {
			return fmt.Errorf("%s is not empty and not an earlier demo's folder; name a new one", dir)
		}
		if err := os.RemoveAll(filepath.Join(dir, "corpus")); err != nil {
			return err
		}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(dir, demoMarker), []byte("relshard demo output; `relshard demo` may replace this folder\n"), 0o644)
}

// writeDemoCorpus writes the embedded corpus and its damaged set under dir, one
// sub-folder per dataset, and returns a source per dataset (sorted by name) and the
// damaged cases by "dataset/path".
func writeDemoCorpus(dir string) ([]ingest.Source, map[string]sampledata.DamagedCase, error) {
	damaged := map[string]sampledata.DamagedCase{}
	var names []string
	for _, f := range slices.Concat(sampledata.Demo(), sampledata.DemoDamaged()) {
		p := filepath.Join(dir, filepath.FromSlash(f.Path))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			return nil, nil, err
		}
		if err := os.WriteFile(p, f.Data, 0o644); err != nil {
			return nil, nil, err
		}
		ds, rest, _ := strings.Cut(f.Path, "/")
		if !slices.Contains(names, ds) {
			names = append(names, ds)
		}
		if c, ok := f.Damaged(); ok {
			damaged[ds+"/"+rest] = c
		}
	}
	slices.Sort(names)
	sources := make([]ingest.Source, len(names))
	for i, n := range names {
		sources[i] = ingest.Source{Path: filepath.Join(dir, n), Dataset: path.Base(n)}
	}
	return sources, damaged, nil
}

func writeDemoExport(w io.Writer, man *export.Manifest, dir string) error {
	t := man.Totals
	fmt.Fprintf(w, "%d files: %d ok, %d skipped, %d duplicates (not exported)\n", t.Files, t.FilesOK, t.FilesSkipped, t.FilesDuplicate)
	fmt.Fprintf(w, "%d pieces → %d windows of at most %d tokens, %d tokens (%s encoding, vocabulary of %d)\n",
		t.Pieces, t.Windows, man.MaxLen, t.Tokens, man.Encoding, man.VocabSize)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "split\tpieces\twindows")
	for _, sp := range []string{"train", "validation", "test"} {
		st := t.Splits[sp]
		fmt.Fprintf(tw, "%s\t%d\t%d\n", sp, st.Pieces, st.Windows)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintf(w, "%d shards, %d bytes, in %s\n", t.Shards, t.Bytes, dir)
	return nil
}
