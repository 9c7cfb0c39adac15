package relpos

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"reflect"
	"testing"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/tokenize"
)

// writePiece writes a small piece as a Standard MIDI File: a melody, a bass line and a
// drum part, seeded so that files differ.
func writePiece(t *testing.T, path string, seed int) {
	t.Helper()
	p := &ingest.Piece{Format: 1, TicksPerQuarter: 480}
	for i := range 120 {
		tick := int64(i) * 240
		p.Notes = append(p.Notes,
			ingest.Note{StartTick: tick, EndTick: tick + 200, Pitch: uint8(60 + (i*seed)%17), Velocity: 80, Channel: 0, Program: 0},
			ingest.Note{StartTick: tick, EndTick: tick + 100, Pitch: 36, Velocity: 90, Channel: 9, Drum: true})
		if i%4 == 0 {
			p.Notes = append(p.Notes, ingest.Note{StartTick: tick, EndTick: tick + 900, Pitch: uint8(36 + seed%5), Velocity: 70, Channel: 1, Program: 33})
		}
	}
	var buf bytes.Buffer
	if err := tokenize.WriteSMF(&buf, p); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// corpusConfig keeps drums, cuts short windows and augments, so that every path of the
// counting is taken.
func corpusConfig() tokenize.Config {
	tc := tokenize.DefaultConfig()
	tc.Drums = tokenize.DrumsKeep
	tc.MaxLen, tc.MinLen = 200, 16
	tc.Transpose = []int{0, 3}
	return tc
}

// TestCountCorpus counts a small corpus (two pieces, an exact duplicate and a damaged
// file) and compares with an independent path: ingest.Parse, Encoder.Windows and the
// naive O(L²) count of every window. The result must not depend on the workers.
func TestCountCorpus(t *testing.T) {
	dir := t.TempDir()
	writePiece(t, filepath.Join(dir, "a.mid"), 3)
	writePiece(t, filepath.Join(dir, "b.mid"), 5)
	data, err := os.ReadFile(filepath.Join(dir, "a.mid"))
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "c.mid"), data, 0o644); err != nil { // exact duplicate of a
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "d.mid"), data[:40], 0o644); err != nil { // truncated
		t.Fatal(err)
	}
	cfg := DefaultConfig()
	cfg.Joint = true
	tc := corpusConfig()

	// Independent expectation.
	c, err := NewCounter(cfg)
	if err != nil {
		t.Fatal(err)
	}
	enc, err := tokenize.NewEncoder(tc)
	if err != nil {
		t.Fatal(err)
	}
	want, windows := naiveTotal(t, c, enc, []string{filepath.Join(dir, "a.mid"), filepath.Join(dir, "b.mid")})
	if windows < 4 {
		t.Fatalf("only %d windows", windows)
	}

	var first Counts
	for _, workers := range []int{1, 3} {
		opt := CorpusOptions{Scan: ingest.DefaultOptions(), Tokens: tc, Workers: workers}
		opt.Scan.Workers = workers
		corpus, err := CountCorpus(context.Background(), []ingest.Source{{Path: dir, Dataset: "synth"}}, cfg, opt)
		if err != nil {
			t.Fatal(err)
		}
		got := [4]int64{corpus.Files, corpus.Counted, corpus.Duplicates, int64(len(corpus.Skipped))}
		if got != [4]int64{4, 2, 1, 1} || corpus.Skipped[0].Path != "d.mid" || corpus.Total.Windows != int64(windows) {
			t.Fatalf("workers %d: files, counted, duplicates, skipped = %v (%+v), windows %d; want [4 2 1 1], d.mid, %d",
				workers, got, corpus.Skipped, corpus.Total.Windows, windows)
		}
		counts := c.Counts(corpus.Total)
		if !reflect.DeepEqual(counts, want) {
			t.Fatalf("workers %d: corpus counts differ from the naive count of the parsed windows", workers)
		}
		if ds := corpus.Datasets["synth"]; ds == nil || !reflect.DeepEqual(c.Counts(ds), want) {
			t.Fatalf("workers %d: dataset breakdown differs", workers)
		}
		if workers == 1 {
			first = counts
		} else if !reflect.DeepEqual(first, counts) {
			t.Fatal("counts depend on the number of workers")
		}
		rep := corpus.Report()
		if rep.TimeUnit != "ms" || len(rep.Datasets) != 1 || rep.Joint == nil || len(rep.Instruments) != 2 {
			t.Fatalf("report: unit %q, %d datasets, joint %v, %d classes", rep.TimeUnit, len(rep.Datasets), rep.Joint != nil, len(rep.Instruments))
		}
	}
}

// eachWindow parses each file at paths and calls fn with every window enc cuts from
// its pieces.
func eachWindow(t testing.TB, enc *tokenize.Encoder, paths []string, fn func(tokenize.Window) error) {
	t.Helper()
	for _, p := range paths {
		data, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		pieces, err := ingest.Parse(filepath.Base(p), data, ingest.DefaultParseOptions())
		if err != nil {
			t.Fatal(err)
		}
		for i := range pieces {
			if err := enc.Windows(&pieces[i], fn); err != nil {
				t.Fatal(err)
			}
		}
	}
}

// naiveTotal is the naive count (the reference) summed over every window of the
// files at paths, and the number of windows.
func naiveTotal(t testing.TB, c *Counter, enc *tokenize.Encoder, paths []string) (Counts, int) {
	t.Helper()
	var total Counts
	windows := 0
	eachWindow(t, enc, paths, func(w tokenize.Window) error {
		got, err := c.CountNaive(w.Tokens)
		if windows == 0 {
			total = got
		} else {
			total.add(got)
		}
		windows++
		return err
	})
	return total, windows
}

// openMSXDir holds the MIDI files of Debian's openttd-openmsx package.
const openMSXDir = "/usr/share/games/openttd/baseset/openmsx"

// TestCountCorpusOpenMSX counts the real files of Debian's openttd-openmsx package
// (General MIDI pieces) and checks the exact counts against the naive count of the same
// windows; it skips when the package is absent.
func TestCountCorpusOpenMSX(t *testing.T) {
	files, _ := filepath.Glob(filepath.Join(openMSXDir, "*.mid"))
	if len(files) == 0 {
		if os.Getenv("RELSHARD_REQUIRE_REFS") == "1" {
			t.Fatal("openttd-openmsx files missing (install Debian's openttd-openmsx)")
		}
		t.Skip("openttd-openmsx files missing (install Debian's openttd-openmsx)")
	}
	cfg := DefaultConfig()
	tc := corpusConfig()
	tc.MaxLen = 512
	c, err := NewCounter(cfg)
	if err != nil {
		t.Fatal(err)
	}
	enc, err := tokenize.NewEncoder(tc)
	if err != nil {
		t.Fatal(err)
	}
	// Naive counts are O(L²): keep to the first three files.
	want, n := naiveTotal(t, c, enc, files[:3])
	var sources []ingest.Source
	for _, f := range files[:3] {
		sources = append(sources, ingest.Source{Path: f, Dataset: "openmsx"})
	}
	opt := CorpusOptions{Scan: ingest.DefaultOptions(), Tokens: tc, Workers: 2}
	corpus, err := CountCorpus(context.Background(), sources, cfg, opt)
	if err != nil {
		t.Fatal(err)
	}
	if corpus.Total.Windows != int64(n) || !reflect.DeepEqual(c.Counts(corpus.Total), want) {
		t.Fatalf("openmsx: %d windows counted, naive %d; counts equal %v", corpus.Total.Windows, n,
			reflect.DeepEqual(c.Counts(corpus.Total), want))
	}
}
