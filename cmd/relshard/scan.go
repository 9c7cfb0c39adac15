package main

import (
	"bufio"
	"cmp"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/relshard/relshard/ingest"
	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

// scanOptions are the flags and arguments of relshard scan.
type scanOptions struct {
	sources        []string // SOURCE or NAME=SOURCE arguments, then --dataset values
	datasets       []string
	workers        int
	json           bool
	strict         bool
	noPedal        bool
	keepDuplicates bool
	files          bool
	maxFileSize    string
	maxEntries     int
	maxEntrySize   string
	maxArchiveSize string
	maxTarBuffer   string
	filter         ingest.Filter
}

// AddFlags registers the flags.
func (o *scanOptions) AddFlags(fs *pflag.FlagSet) {
	fs.StringArrayVar(&o.datasets, "dataset", nil, "a source with its dataset name, NAME=PATH (repeatable; after the SOURCE arguments)")
	fs.IntVar(&o.workers, "workers", 0, "files parsed at once (0: all cores)")
	fs.BoolVar(&o.json, "json", false, "print one JSON object: the files and the summaries")
	fs.BoolVar(&o.strict, "strict", false, "stop at the first bad input file")
	fs.BoolVar(&o.noPedal, "no-pedal", false, "do not extend note ends to the sustain pedal release")
	fs.BoolVar(&o.keepDuplicates, "keep-duplicates", false, "count later copies as ok (still marked as duplicates in --json)")
	fs.BoolVar(&o.files, "files", false, "list every input file with its status before the tables")
	fs.StringVar(&o.maxFileSize, "max-file-size", "64MiB", "largest MIDI file read, after gzip decompression (bytes, or with KiB, MiB, GiB)")
	fs.IntVar(&o.maxEntries, "max-entries", ingest.DefaultLimits().MaxEntries, "most entries of one archive; a larger archive is refused")
	fs.StringVar(&o.maxEntrySize, "max-entry-size", "64MiB", "most decompressed bytes of one archive entry")
	fs.StringVar(&o.maxArchiveSize, "max-archive-size", "4GiB", "most decompressed bytes of one archive; a larger archive is refused")
	fs.StringVar(&o.maxTarBuffer, "max-tar-buffer", "128MiB", "most entry bytes of a tar archive held in memory to give them in name order (a smaller buffer reads the stream more times)")
	fs.IntVar(&o.filter.MinNotes, "min-notes", 1, "skip files with fewer notes")
	fs.IntVar(&o.filter.MaxNotes, "max-notes", 0, "skip files with more notes (0: no limit)")
	fs.Float64Var(&o.filter.MinSeconds, "min-seconds", 0, "skip files shorter than this (to the end of the last note)")
	fs.Float64Var(&o.filter.MaxSeconds, "max-seconds", 0, "skip files longer than this (0: no limit)")
	fs.BoolVar(&o.filter.DropDrums, "drop-drums", false, "remove drum notes (channel 10); skip files left without notes")
	fs.IntVar(&o.filter.MinPitch, "min-pitch", 0, "skip files with a non-drum key below this")
	fs.IntVar(&o.filter.MaxPitch, "max-pitch", 0, "skip files with a non-drum key above this (0: no limit)")
}

// Validate checks the flags and arguments.
func (o *scanOptions) Validate() error {
	if len(o.sources)+len(o.datasets) == 0 {
		return usageError("no source given: relshard scan SOURCE...")
	}
	for _, d := range o.datasets {
		if src := ingest.ParseSource(d); src.Dataset == "" {
			return usageError("--dataset %q: want NAME=PATH", d)
		}
	}
	for name, v := range map[string]string{"--max-file-size": o.maxFileSize, "--max-entry-size": o.maxEntrySize,
		"--max-archive-size": o.maxArchiveSize, "--max-tar-buffer": o.maxTarBuffer} {
		if n, err := parseSize(v); err != nil || n <= 0 {
			return usageError("%s %q: want a positive size such as 64MiB", name, v)
		}
	}
	switch {
	case o.workers < 0:
		return usageError("--workers %d: want 0 (all cores) or more", o.workers)
	case o.maxEntries <= 0:
		return usageError("--max-entries %d: want a positive count", o.maxEntries)
	case o.filter.MinNotes < 0 || o.filter.MaxNotes < 0 || o.filter.MinSeconds < 0 || o.filter.MaxSeconds < 0:
		return usageError("filter limits must not be negative")
	case o.filter.MinPitch < 0 || o.filter.MinPitch > 127 || o.filter.MaxPitch < 0 || o.filter.MaxPitch > 127:
		return usageError("--min-pitch and --max-pitch take MIDI keys 0-127")
	}
	return nil
}

// ingestOptions turns the flags into scan options (after Validate).
func (o *scanOptions) ingestOptions() ingest.Options {
	opts := ingest.DefaultOptions()
	opts.Workers = o.workers
	opts.Strict = o.strict
	opts.Parse.Pedal = !o.noPedal
	opts.KeepDuplicates = o.keepDuplicates
	opts.Filter = o.filter
	opts.MaxFileSize, _ = parseSize(o.maxFileSize)
	opts.Limits.MaxEntries = o.maxEntries
	opts.Limits.MaxEntrySize, _ = parseSize(o.maxEntrySize)
	opts.Limits.MaxTotalSize, _ = parseSize(o.maxArchiveSize)
	opts.Limits.MaxBuffered, _ = parseSize(o.maxTarBuffer)
	return opts
}

func (o *scanOptions) sourceList() []ingest.Source {
	var out []ingest.Source
	for _, a := range append(slices.Clone(o.sources), o.datasets...) {
		out = append(out, ingest.ParseSource(a))
	}
	return out
}

func init() {
	register(func(s *streams) *cobra.Command {
		o := &scanOptions{}
		cmd := &cobra.Command{
			Use:   "scan SOURCE...",
			Short: "Inventory MIDI sources: files, skips, duplicates, notes, hours",
			Long: `Read every MIDI file of the sources and report, per dataset and in total: files,
ok, skipped by reason, duplicates by kind, notes, hours of music, drum share, SMF
formats, the PPQ histogram and the tempo range.

A SOURCE is a folder (read recursively: .mid .midi .smf .rmi in any case, optionally
.gz; zip and tar archives inside are read in place), a .zip, .tar, .tar.gz or .tgz
archive (read in place, never extracted), a .txt or .lst file listing one path per
line, or one MIDI file. Each source is a dataset named after the folder or file;
NAME=SOURCE (or --dataset NAME=SOURCE) names it. Files are read in a stable order,
sources in the order given and files sorted by path, so the output is the same for
any --workers. The later of two copies is the duplicate: exact (same bytes), musical
(same notes in beat time, whatever the PPQ or track split) or transposed.

With --json the output is one object: "files", one {dataset, path, status, reason}
per input file (status ok, skipped or duplicate; duplicates also carry duplicate_of
and duplicate_kind), "datasets" and "total" with the counts; on a failed run also
"error". A damaged archive, or one over the --max-entries or --max-archive-size cap,
is one entry with an empty path (its own path when inside a folder). Non-MIDI entries
of archives are listed as skipped ("not MIDI") but do not by themselves make the exit
status 3.
` + exitCodesHelp,
			RunE: func(cmd *cobra.Command, args []string) error {
				o.sources = args
				if err := o.Validate(); err != nil {
					return err
				}
				return runScan(cmd.Context(), o, s)
			},
		}
		o.AddFlags(cmd.Flags())
		return cmd
	})
}

// fileJSON is one entry of the "files" array of relshard scan --json.
type fileJSON struct {
	Dataset       string `json:"dataset"`
	Path          string `json:"path"`
	Status        string `json:"status"`
	Reason        string `json:"reason"`
	DuplicateOf   string `json:"duplicate_of,omitempty"`
	DuplicateKind string `json:"duplicate_kind,omitempty"`
}

// summaryJSON adds the derived figures to a dataset summary.
type summaryJSON struct {
	*ingest.DatasetSummary
	Hours     float64 `json:"hours"`
	DrumShare float64 `json:"drum_share"`
}

func summaryView(d *ingest.DatasetSummary) summaryJSON {
	return summaryJSON{d, d.Hours(), d.DrumShare()}
}

// fileReason is the reason shown for a file: the skip reason, or which file it copies.
func fileReason(rec *ingest.FileRecord) string {
	if rec.DuplicateOf != "" {
		return fmt.Sprintf("%s duplicate of %s", rec.DuplicateKind, rec.DuplicateOf)
	}
	return rec.Reason
}

func runScan(ctx context.Context, o *scanOptions, s *streams) error {
	sum := ingest.NewSummary()
	out := bufio.NewWriter(s.Out)
	var bar *progressbar.ProgressBar
	if s.ErrIsTerminal {
		bar = progressbar.NewOptions64(-1, progressbar.OptionSetWriter(s.Err), progressbar.OptionSetDescription("scanning"),
			progressbar.OptionShowCount(), progressbar.OptionShowIts(), progressbar.OptionSetItsString("files"),
			progressbar.OptionThrottle(100*time.Millisecond), progressbar.OptionClearOnFinish())
	}
	if o.json {
		out.WriteString("{\n\"files\": [")
	}
	var skipped, n int
	var writeErr error
	err := ingest.Scan(ctx, o.sourceList(), o.ingestOptions(), func(r *ingest.Result) error {
		sum.Add(r)
		r.Release() // the inventory needs no notes past this point
		rec := &r.Record
		if rec.Status == ingest.StatusSkipped && !errors.Is(r.Err, ingest.ErrNotMIDI) {
			skipped++
		}
		switch {
		case o.json:
			b, err := json.Marshal(fileJSON{rec.Dataset, rec.Path, string(rec.Status), fileReason(rec), rec.DuplicateOf, string(rec.DuplicateKind)})
			if err != nil {
				return err
			}
			if n > 0 {
				out.WriteByte(',')
			}
			out.WriteString("\n  ")
			out.Write(b)
		case o.files:
			name := rec.Dataset + "/" + rec.Path
			if rec.Path == "" {
				name = rec.Dataset + " (the whole source " + rec.Source + ")"
			}
			fmt.Fprintf(out, "%-9s %s", rec.Status, name)
			if reason := fileReason(rec); reason != "" {
				fmt.Fprintf(out, "  (%s)", reason)
			}
			out.WriteByte('\n')
		}
		n++
		if bar != nil {
			bar.Add(1)
		}
		// Stop early when the output is gone (a closed pipe).
		if out.Buffered() > 32<<10 {
			writeErr = out.Flush()
		}
		return writeErr
	})
	if bar != nil {
		bar.Finish()
	}
	if o.json {
		if werr := writeScanJSON(out, sum, err); werr != nil && err == nil {
			err = werr
		}
	} else if err == nil || !errors.Is(err, writeErr) {
		if werr := writeScanTables(out, sum); werr != nil && err == nil {
			err = werr
		}
	}
	if ferr := out.Flush(); ferr != nil && err == nil {
		err = ferr
	}
	switch {
	case err != nil && ctx.Err() != nil:
		return &exitError{code: exitFailed, err: fmt.Errorf("scan interrupted after %d files: %w", n, err)}
	case err != nil:
		return &exitError{code: exitFailed, err: err}
	case skipped > 0:
		return &exitError{code: exitSkipped, err: fmt.Errorf("%d of %d input files skipped", skipped, n)}
	}
	return nil
}

func writeScanJSON(w io.Writer, sum *ingest.Summary, runErr error) error {
	views := make([]summaryJSON, 0, len(sum.Datasets))
	for _, d := range sum.Datasets {
		views = append(views, summaryView(d))
	}
	ds, err := json.MarshalIndent(views, "", "  ")
	if err != nil {
		return err
	}
	tot, err := json.MarshalIndent(summaryView(sum.Total), "", "  ")
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "\n],\n\"datasets\": %s,\n\"total\": %s", ds, tot)
	if runErr != nil {
		msg, _ := json.Marshal(runErr.Error())
		fmt.Fprintf(w, ",\n\"error\": %s", msg)
	}
	_, err = io.WriteString(w, "\n}\n")
	return err
}

// writeScanTables prints the inventory: one aligned row per dataset and the total, then
// the skip reasons, duplicate kinds, PPQ histograms and warnings.
func writeScanTables(w io.Writer, sum *ingest.Summary) error {
	rows := append(slices.Clone(sum.Datasets), sum.Total)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "dataset\tfiles\tok\tskipped\tduplicates\tnotes\thours\tdrums\tformats\ttempo BPM")
	for _, d := range rows {
		tempo := "-"
		if d.MaxBPM > 0 {
			tempo = fmt.Sprintf("%s-%s", fmtNum(d.MinBPM), fmtNum(d.MaxBPM))
		}
		fmt.Fprintf(tw, "%s\t%d\t%d\t%d\t%d\t%d\t%.3f\t%.1f%%\t%s\t%s\n", d.Dataset, d.Files, d.OK, d.Skipped, d.Duplicates,
			d.Notes, d.Hours(), 100*d.DrumShare(), histogram(d.Formats, "format ", 0), tempo)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	section := func(title string, lines func(d *ingest.DatasetSummary) []string) error {
		var any bool
		for _, d := range rows {
			ls := lines(d)
			if len(ls) == 0 {
				continue
			}
			if !any {
				fmt.Fprintf(tw, "\n%s\n", title)
				any = true
			}
			for _, l := range ls {
				fmt.Fprintf(tw, "  %s\t%s\n", d.Dataset, l)
			}
		}
		return tw.Flush()
	}
	if err := section("skipped by reason:", func(d *ingest.DatasetSummary) []string {
		return countLines(d.SkippedBy)
	}); err != nil {
		return err
	}
	if err := section("duplicates by kind:", func(d *ingest.DatasetSummary) []string {
		m := map[string]int{}
		for k, v := range d.DupsBy {
			m[string(k)] = v
		}
		return countLines(m)
	}); err != nil {
		return err
	}
	if err := section("ticks per quarter (files):", func(d *ingest.DatasetSummary) []string {
		if len(d.PPQ) == 0 {
			return nil
		}
		return []string{histogram(d.PPQ, "", 12)}
	}); err != nil {
		return err
	}
	return section("warnings:", func(d *ingest.DatasetSummary) []string { return countLines(d.Warnings) })
}

// countLines renders "reason\tcount" lines, the most frequent first (ties by name).
func countLines[M ~map[string]int](m M) []string {
	keys := slices.SortedFunc(maps.Keys(m), func(a, b string) int {
		return cmp.Or(cmp.Compare(m[b], m[a]), strings.Compare(a, b))
	})
	var out []string
	for _, k := range keys {
		out = append(out, fmt.Sprintf("%s\t%d", k, m[k]))
	}
	return out
}

// histogram renders "key:count" pairs by key, at most limit of them (0: all) by count.
func histogram(m map[int]int, prefix string, limit int) string {
	if len(m) == 0 {
		return "-"
	}
	keys := slices.Sorted(maps.Keys(m))
	more := 0
	if limit > 0 && len(keys) > limit {
		byCount := slices.SortedFunc(slices.Values(keys), func(a, b int) int { return cmp.Or(cmp.Compare(m[b], m[a]), cmp.Compare(a, b)) })
		keys = slices.Sorted(slices.Values(byCount[:limit]))
		more = len(m) - limit
	}
	var parts []string
	for _, k := range keys {
		parts = append(parts, fmt.Sprintf("%s%d:%d", prefix, k, m[k]))
	}
	s := strings.Join(parts, " ")
	if more > 0 {
		s += fmt.Sprintf(" (+%d more)", more)
	}
	return s
}

func fmtNum(f float64) string { return strconv.FormatFloat(f, 'f', -1, 64) }

// parseSize reads a byte count: digits, optionally followed by B, KiB, MiB or GiB (also
// K, M, G, KB, MB, GB, all binary).
func parseSize(s string) (int64, error) {
	t := strings.TrimSpace(s)
	mult := int64(1)
	lower := strings.ToLower(t)
	for _, u := range []struct {
		suffix string
		mult   int64
	}{{"kib", 1 << 10}, {"mib", 1 << 20}, {"gib", 1 << 30}, {"kb", 1 << 10}, {"mb", 1 << 20}, {"gb", 1 << 30},
		{"k", 1 << 10}, {"m", 1 << 20}, {"g", 1 << 30}, {"b", 1}} {
		if strings.HasSuffix(lower, u.suffix) {
			t, mult = strings.TrimSpace(t[:len(t)-len(u.suffix)]), u.mult
			break
		}
	}
	n, err := strconv.ParseInt(t, 10, 64)
	if err != nil || n < 0 || n > (1<<62)/mult {
		return 0, fmt.Errorf("bad size %q", s)
	}
	return n * mult, nil
}
