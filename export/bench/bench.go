package bench

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"sync/atomic"
	"time"

	"gitlab.com/gomidi/midi/v2/smf"
	"golang.org/x/sync/errgroup"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/relpos"
	"github.com/relshard/relshard/sampledata"
	"github.com/relshard/relshard/tokenize"
)

// Config says what to measure.
type Config struct {
	// Corpus is a folder of MIDI files to measure on; empty means a corpus generated
	// with sampledata (Files files, Seed) in a temporary folder.
	Corpus string
	Files  int
	Seed   uint64
	// Workers is the worker count of the floors and the full export; 0 means all cores.
	Workers int
	// MemSmall and MemLarge are the file counts of the two peak-memory exports.
	MemSmall, MemLarge int
	// Exe is the relshard binary run as a child process for the peak-memory exports
	// (peak resident memory is only measurable per process); empty skips them.
	Exe string
	// TempDir holds the generated corpora and exports; empty means os.TempDir.
	TempDir string
	// Smoke runs everything on a small corpus and enforces no target.
	Smoke bool
	// Rounds is how many times the ingest ÷ read, the memory and the workers ratios
	// are measured, the two sides alternating; the median ratio is reported (0 means
	// 3). On a shared machine one measurement of a sub-second stage can be off by a
	// third, and one peak-memory reading by a tenth.
	Rounds int
}

// DefaultConfig is the full suite: 10,000 generated files, memory at 2,000 vs 20,000.
func DefaultConfig() Config {
	return Config{Files: 10_000, Seed: 1, MemSmall: 2_000, MemLarge: 20_000}
}

// SmokeConfig is the suite on a small corpus, targets not enforced.
func SmokeConfig() Config {
	return Config{Files: 200, Seed: 1, MemSmall: 100, MemLarge: 400, Smoke: true, Rounds: 1}
}

// Measure is one line of the report.
type Measure struct {
	Name   string  `json:"name"`
	Value  float64 `json:"value"`
	Unit   string  `json:"unit"`
	Detail string  `json:"detail,omitempty"`
	Target string  `json:"target,omitempty"` // e.g. "≤ 0.5"; empty for figures kept for the record
	Status string  `json:"status,omitempty"` // PASS, FAIL, or "not enforced" in smoke runs
}

// Report is the outcome of Run.
type Report struct {
	Corpus   string    `json:"corpus"`
	Files    int       `json:"files"`
	Bytes    int64     `json:"bytes"`
	Workers  int       `json:"workers"`
	Measures []Measure `json:"measures"`
}

// Failed reports whether an enforced target failed.
func (r *Report) Failed() bool {
	return slices.ContainsFunc(r.Measures, func(m Measure) bool { return m.Status == "FAIL" })
}

// Run measures the suite. progress, when set, is told what is being measured.
func Run(ctx context.Context, cfg Config, progress func(string)) (*Report, error) {
	if progress == nil {
		progress = func(string) {}
	}
	workers := cfg.Workers
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	tmp, err := os.MkdirTemp(cfg.TempDir, "relshard-bench-")
	if err != nil {
		return nil, fmt.Errorf("bench: %w", err)
	}
	defer os.RemoveAll(tmp)

	corpus := cfg.Corpus
	if corpus == "" {
		corpus = filepath.Join(tmp, "corpus")
		progress(fmt.Sprintf("generating %d sample files", cfg.Files))
		if _, err := sampledata.WriteDir(ctx, corpus, sampledata.Config{Files: cfg.Files, Seed: cfg.Seed}, false); err != nil {
			return nil, fmt.Errorf("bench: %w", err)
		}
	}
	paths, size, err := midiFiles(corpus)
	if err != nil {
		return nil, err
	}
	if len(paths) == 0 {
		return nil, fmt.Errorf("bench: no MIDI files under %s", corpus)
	}
	rep := &Report{Corpus: corpus, Files: len(paths), Bytes: size, Workers: workers}
	add := func(m Measure) { rep.Measures = append(rep.Measures, m) }
	judge := func(ok bool) string {
		if cfg.Smoke {
			return "not enforced"
		}
		if ok {
			return "PASS"
		}
		return "FAIL"
	}
	sources := []ingest.Source{{Path: corpus, Dataset: filepath.Base(corpus)}}

	rounds := cfg.Rounds
	if rounds <= 0 {
		rounds = 3
	}
	// a. Floors, then the stages on the same files with the same workers, after a
	// warm-up read that puts the files in the page cache. Reading and ingest alternate
	// for the rounds; gomidi and the full export, far apart, run once.
	progress("reading the bytes")
	if _, err := readAll(ctx, paths, workers, nil); err != nil {
		return nil, err
	}
	var notes int64
	opts := ingest.DefaultOptions()
	opts.Workers = workers
	var reads, ingests []time.Duration
	for round := range rounds {
		progress(fmt.Sprintf("read and ingest (parse, note pairing, hashing, duplicates), round %d of %d", round+1, rounds))
		read, err := timed(func() error { _, err := readAll(ctx, paths, workers, nil); return err })
		if err != nil {
			return nil, err
		}
		notes = 0
		ingestT, err := timed(func() error {
			return ingest.Scan(ctx, sources, opts, func(r *ingest.Result) error {
				notes += int64(r.Record.Notes)
				r.Release() // as relshard scan does
				return nil
			})
		})
		if err != nil {
			return nil, err
		}
		reads, ingests = append(reads, read), append(ingests, ingestT)
	}
	progress("parsing with gomidi smf.ReadFrom")
	var events atomic.Int64
	gomidi, err := timed(func() error {
		_, err := readAll(ctx, paths, workers, func(data []byte) {
			events.Add(int64(gomidiEvents(data)))
		})
		return err
	})
	if err != nil {
		return nil, err
	}
	progress("full export")
	exportT, man, err := exportOnce(ctx, sources, filepath.Join(tmp, "export-w"), workers)
	if err != nil {
		return nil, err
	}
	add(Measure{Name: "read bytes", Value: median(reads).Seconds(), Unit: "s", Detail: fmt.Sprintf("%d files, %.1f MB; median of %d", len(paths), float64(size)/1e6, rounds)})
	add(Measure{Name: "gomidi smf.ReadFrom", Value: gomidi.Seconds(), Unit: "s", Detail: fmt.Sprintf("%d events", events.Load())})
	add(Measure{Name: "ingest stage", Value: median(ingests).Seconds(), Unit: "s", Detail: fmt.Sprintf("median of %d", rounds)})
	add(Measure{Name: "full export", Value: exportT.Seconds(), Unit: "s", Detail: fmt.Sprintf("%d windows, %d tokens", man.Totals.Windows, man.Totals.Tokens)})
	r := ratio(exportT, gomidi)
	add(Measure{Name: "full export ÷ gomidi parse", Value: r, Unit: "×", Target: "≤ 0.5", Status: judge(r <= 0.5)})
	r, detail := medianRatio(ingests, reads)
	add(Measure{Name: "ingest ÷ read bytes", Value: r, Unit: "×", Detail: detail, Target: "≤ 3", Status: judge(r <= 3)})

	// b. Exact coverage counting against the naive pair loop.
	progress("coverage counting, fast vs naive")
	fast, naive, same, err := countingRatio(ctx, sources, workers)
	if err != nil {
		return nil, err
	}
	r = ratio(naive, fast)
	st := judge(r >= 20 && same)
	detail = "identical counts"
	if !same {
		detail, st = "COUNTS DIFFER", "FAIL"
	}
	add(Measure{Name: "naive ÷ fast counting (L=2048, 64 buckets)", Value: r, Unit: "×", Detail: detail, Target: "≥ 20", Status: st})

	// c. Peak resident memory of export, small vs large corpus, as child processes.
	if cfg.Exe != "" {
		smalls, larges, err := memoryRatio(ctx, cfg, tmp, rounds, progress)
		if err != nil {
			return nil, err
		}
		small, large := median(smalls), slices.Max(larges)
		r, detail = medianRatio(larges, smalls)
		add(Measure{Name: fmt.Sprintf("peak RSS, %d files", cfg.MemSmall), Value: float64(small) / (1 << 20), Unit: "MiB", Detail: fmt.Sprintf("median of %d", rounds)})
		add(Measure{Name: fmt.Sprintf("peak RSS, %d files", cfg.MemLarge), Value: float64(large) / (1 << 20), Unit: "MiB", Detail: fmt.Sprintf("highest of %d", rounds), Target: "< 512", Status: judge(large < 512<<20)})
		add(Measure{Name: "peak RSS large ÷ small", Value: r, Unit: "×", Detail: detail, Target: "≤ 1.25", Status: judge(r <= 1.25)})
	}

	// d. Workers 2 vs 1.
	var ones, twos []time.Duration
	for round := range rounds {
		progress(fmt.Sprintf("export with --workers 1 and 2, round %d of %d", round+1, rounds))
		for _, w := range []int{1, 2} {
			dir := filepath.Join(tmp, fmt.Sprintf("export-%d-%d", w, round))
			d, _, err := exportOnce(ctx, sources, dir, w)
			if err != nil {
				return nil, err
			}
			if w == 1 {
				ones = append(ones, d)
			} else {
				twos = append(twos, d)
			}
			if err := os.RemoveAll(dir); err != nil {
				return nil, fmt.Errorf("bench: %w", err)
			}
		}
	}
	r, detail = medianRatio(ones, twos)
	add(Measure{Name: "export speed-up, 2 workers ÷ 1", Value: r, Unit: "×", Detail: fmt.Sprintf("%d cores; %s", runtime.NumCPU(), detail), Target: "≥ 1.7", Status: judge(r >= 1.7)})

	// e. Throughput of the full export, for the record.
	s := exportT.Seconds()
	add(Measure{Name: "throughput: files", Value: float64(len(paths)) / s, Unit: "files/s"})
	add(Measure{Name: "throughput: notes", Value: float64(notes) / s, Unit: "notes/s"})
	add(Measure{Name: "throughput: tokens", Value: float64(man.Totals.Tokens) / s, Unit: "tokens/s"})
	add(Measure{Name: "throughput: input", Value: float64(size) / 1e6 / s, Unit: "MB/s"})
	return rep, nil
}

// gomidiEvents parses data with gomidi and counts its events. gomidi v2.3.23 panics
// on some valid files (SMPTE division: a failed type assertion while it computes
// absolute times), so the baseline recovers and counts such a file as zero events.
func gomidiEvents(data []byte) (n int) {
	defer func() {
		if recover() != nil {
			n = 0
		}
	}()
	s, err := smf.ReadFrom(bytes.NewReader(data))
	if err != nil {
		return 0
	}
	for _, tr := range s.Tracks {
		n += len(tr)
	}
	return n
}

func ratio(a, b time.Duration) float64 {
	if b <= 0 {
		return 0
	}
	return a.Seconds() / b.Seconds()
}

// median is the middle of ds (the mean of the two middle ones for an even count).
func median[T ~int64 | ~float64](ds []T) T {
	s := slices.Sorted(slices.Values(ds))
	if len(s) == 0 {
		return 0
	}
	if len(s)%2 == 0 {
		return (s[len(s)/2-1] + s[len(s)/2]) / 2
	}
	return s[len(s)/2]
}

// medianRatio is the median of a[i]/b[i] (durations or bytes), each a round's ratio
// of two measurements taken back to back, and a detail listing every round's ratio.
func medianRatio[T ~int64](a, b []T) (float64, string) {
	rs := make([]float64, len(a))
	parts := make([]string, len(a))
	for i := range a {
		if b[i] > 0 {
			rs[i] = float64(a[i]) / float64(b[i])
		}
		parts[i] = fmt.Sprintf("%.2f", rs[i])
	}
	return median(rs), "rounds " + strings.Join(parts, ", ")
}

func timed(f func() error) (time.Duration, error) {
	start := time.Now()
	err := f()
	return time.Since(start), err
}

// midiFiles lists the MIDI files under dir in sorted order, with their total size.
func midiFiles(dir string) ([]string, int64, error) {
	var paths []string
	var size int64
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		switch strings.ToLower(filepath.Ext(p)) {
		case ".mid", ".midi", ".smf", ".rmi":
		default:
			return nil
		}
		if !d.Type().IsRegular() {
			return nil
		}
		info, err := d.Info()
		if err != nil {
			return err
		}
		size += info.Size()
		paths = append(paths, p)
		return nil
	})
	if err != nil {
		return nil, 0, fmt.Errorf("bench: list %s: %w", dir, err)
	}
	slices.Sort(paths)
	return paths, size, nil
}

// readAll reads every file with a pool of workers and hands each file's bytes to f.
func readAll(ctx context.Context, paths []string, workers int, f func([]byte)) (int64, error) {
	var next, total atomic.Int64
	g, ctx := errgroup.WithContext(ctx)
	for range workers {
		g.Go(func() error {
			for {
				i := int(next.Add(1) - 1)
				if i >= len(paths) {
					return nil
				}
				if err := ctx.Err(); err != nil {
					return err
				}
				data, err := os.ReadFile(paths[i])
				if err != nil {
					return fmt.Errorf("bench: %w", err)
				}
				total.Add(int64(len(data)))
				if f != nil {
					f(data)
				}
			}
		})
	}
	err := g.Wait()
	return total.Load(), err
}

func exportOnce(ctx context.Context, sources []ingest.Source, out string, workers int) (time.Duration, *export.Manifest, error) {
	var man *export.Manifest
	d, err := timed(func() error {
		var err error
		man, err = export.Run(ctx, sources, export.DefaultConfig(), export.Options{Out: out, Workers: workers, ToolVersion: "bench"})
		return err
	})
	if err != nil {
		return 0, nil, fmt.Errorf("bench: export: %w", err)
	}
	return d, man, nil
}

// countingRatio times the exact counter and the naive pair loop on the same
// 2,048-token window (the first full window of the corpus in the default
// performance encoding), with 64 linear buckets per offset kind.
func countingRatio(ctx context.Context, sources []ingest.Source, workers int) (fast, naive time.Duration, same bool, err error) {
	enc, err := tokenize.NewEncoder(tokenize.DefaultConfig())
	if err != nil {
		return 0, 0, false, err
	}
	const L = 2048
	var win []tokenize.Token
	errFound := errors.New("found")
	opts := ingest.DefaultOptions()
	opts.Workers = workers
	err = ingest.Scan(ctx, sources, opts, func(r *ingest.Result) error {
		defer r.Release()
		for i := range r.Pieces {
			err := enc.Windows(&r.Pieces[i], func(w tokenize.Window) error {
				if len(w.Tokens) == L {
					win = slices.Clone(w.Tokens)
					return errFound
				}
				return nil
			})
			if err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil && !errors.Is(err, errFound) {
		return 0, 0, false, err
	}
	if win == nil {
		return 0, 0, false, fmt.Errorf("bench: no piece long enough for a %d-token window", L)
	}
	cfg, err := Buckets64()
	if err != nil {
		return 0, 0, false, err
	}
	c, err := relpos.NewCounter(cfg)
	if err != nil {
		return 0, 0, false, err
	}
	const reps = 5
	var got relpos.Counts
	fast, err = timed(func() error {
		for range reps {
			t := c.NewTally()
			if err := c.Count(t, win); err != nil {
				return err
			}
			got = c.Counts(t)
		}
		return nil
	})
	if err != nil {
		return 0, 0, false, err
	}
	var want relpos.Counts
	naive, err = timed(func() error {
		for range reps {
			var err error
			if want, err = c.CountNaive(win); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		return 0, 0, false, err
	}
	return fast, naive, fmt.Sprint(got) == fmt.Sprint(want), nil
}

// memoryRatio exports the first MemSmall and the first MemLarge files of one
// generated corpus in child processes and returns their peak resident memory.
func memoryRatio(ctx context.Context, cfg Config, tmp string, rounds int, progress func(string)) (smalls, larges []int64, err error) {
	dir := filepath.Join(tmp, "mem-corpus")
	if _, err := sampledata.WriteDir(ctx, dir, sampledata.Config{Files: cfg.MemLarge, Seed: cfg.Seed + 1}, false); err != nil {
		return nil, nil, fmt.Errorf("bench: %w", err)
	}
	paths, _, err := midiFiles(dir)
	if err != nil {
		return nil, nil, err
	}
	run := func(n int) (int64, error) {
		list := filepath.Join(tmp, fmt.Sprintf("mem-%d.txt", n))
		k := min(n, len(paths))
		if err := os.WriteFile(list, []byte(strings.Join(paths[:k], "\n")+"\n"), 0o644); err != nil {
			return 0, fmt.Errorf("bench: %w", err)
		}
		out := filepath.Join(tmp, fmt.Sprintf("mem-out-%d", n))
		if err := os.RemoveAll(out); err != nil {
			return 0, fmt.Errorf("bench: %w", err)
		}
		peak := filepath.Join(tmp, fmt.Sprintf("mem-peak-%d.txt", n))
		cmd := exec.CommandContext(ctx, cfg.Exe, "export", list, "--out", out)
		cmd.Env = append(os.Environ(), PeakRSSEnv+"="+peak)
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		if err := cmd.Run(); err != nil {
			return 0, fmt.Errorf("bench: export of %d files: %w: %s", n, err, strings.TrimSpace(stderr.String()))
		}
		// Not the child's rusage, which starts from this process's own peak (see PeakRSSEnv).
		rss, err := readPeakRSS(peak)
		if err != nil {
			return 0, fmt.Errorf("bench: export of %d files: %w", n, err)
		}
		return rss, nil
	}
	for round := range rounds {
		progress(fmt.Sprintf("peak memory: export of %d vs %d files, round %d of %d", cfg.MemSmall, cfg.MemLarge, round+1, rounds))
		small, err := run(cfg.MemSmall)
		if err != nil {
			return nil, nil, err
		}
		large, err := run(cfg.MemLarge)
		if err != nil {
			return nil, nil, err
		}
		smalls, larges = append(smalls, small), append(larges, large)
	}
	return smalls, larges, nil
}

// Buckets64 is the bucket config of the counting measure: 64 log buckets for token
// distance (up to 2048) and for time (up to 30 s), 65 linear buckets for pitch
// (clip 32), the instrument breakdown on.
func Buckets64() (relpos.Config, error) {
	cfg := relpos.DefaultConfig()
	clip := 32
	cfg.Distance = []relpos.SchemeSpec{{Scheme: relpos.TypeLog, Buckets: 64, Max: 2048}}
	cfg.Time = []relpos.SchemeSpec{{Scheme: relpos.TypeLog, Buckets: 64, Max: 30000}}
	cfg.Pitch = []relpos.SchemeSpec{{Scheme: relpos.TypeLinear, Width: 1, Clip: &clip}}
	return cfg, cfg.Validate()
}
