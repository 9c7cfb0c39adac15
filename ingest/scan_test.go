package ingest

import (
	"archive/tar"
	"cmp"
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"slices"
	"strings"
	"sync/atomic"
	"testing"
	"time"

	"github.com/relshard/relshard/ingest/ingesttest"
)

// Fixture helpers: valid SMF bytes come from gomidi's writer (an independent
// implementation of SMF 1.0), archives from the standard library's writers, through
// package ingesttest; the short names keep the corpora below readable.
type (
	fxNote     = ingesttest.Note
	fxZipEntry = ingesttest.ZipEntry
	fxTarEntry = ingesttest.TarEntry
)

var (
	fxSMF   = ingesttest.SMF
	fxGzip  = ingesttest.Gzip
	fxZip   = ingesttest.Zip
	fxTar   = ingesttest.Tar
	fxWrite = ingesttest.WriteFiles
)

// fxTune is a short melody at the given PPQ, transposed by shift semitones.
func fxTune(ppq uint32, shift uint8) []fxNote {
	q := ppq
	keys := []uint8{60, 62, 64, 65, 67, 65, 64, 62}
	var ns []fxNote
	for i, k := range keys {
		ns = append(ns, fxNote{Start: uint32(i) * q, Dur: q / 2, Key: k + shift, Vel: 90})
	}
	return ns
}

// fxOther is a different melody (other rhythm and keys).
func fxOther(ppq uint32) []fxNote {
	return []fxNote{{Start: 0, Dur: ppq, Key: 48, Vel: 70}, {Start: ppq, Dur: 2 * ppq, Key: 55, Vel: 70}, {Start: 3 * ppq, Dur: ppq / 3, Key: 59, Vel: 70}}
}

// outcome is the part of a result the accounting tests compare.
type outcome struct {
	Path    string
	Status  Status
	Class   string // ReasonClass of the skip
	DupOf   string
	DupKind DuplicateKind
}

func outcomeOf(r *Result) outcome {
	return outcome{r.Record.Path, r.Record.Status, ReasonClass(r.Err), r.Record.DuplicateOf, r.Record.DuplicateKind}
}

// scanAll runs Scan and collects every result.
func scanAll(t testing.TB, sources []Source, opts Options) []*Result {
	t.Helper()
	var got []*Result
	if err := Scan(context.Background(), sources, opts, func(r *Result) error {
		got = append(got, r)
		return nil
	}); err != nil {
		t.Fatalf("Scan: %v", err)
	}
	return got
}

func outcomes(rs []*Result) []outcome {
	var out []outcome
	for _, r := range rs {
		out = append(out, outcomeOf(r))
	}
	return out
}

// mixedFolder writes the mixed fixture corpus and returns its folder and the outcomes a
// scan with maxFile = 1 MiB must give, in order.
func mixedFolder(t testing.TB) (string, []outcome) {
	dir := filepath.Join(t.TempDir(), "mixed")
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	other := fxSMF(t, 480, false, fxOther(480))
	third := fxSMF(t, 120, false, []fxNote{{Start: 0, Dur: 60, Key: 72, Vel: 100}, {Start: 60, Dur: 60, Key: 74, Vel: 100}})
	fourth := fxSMF(t, 240, false, []fxNote{{Start: 0, Dur: 30, Key: 36, Vel: 100, Channel: 9}, {Start: 30, Dur: 30, Key: 38, Vel: 100, Channel: 9}, {Start: 60, Dur: 30, Key: 42, Vel: 100, Channel: 9}})
	fifth := fxSMF(t, 192, false, []fxNote{{Start: 0, Dur: 100, Key: 40, Vel: 80, Channel: 1}, {Start: 0, Dur: 100, Key: 47, Vel: 80, Channel: 1}})
	// Split over two tracks and re-timed at another PPQ: a musical duplicate of tune.
	t1, t2 := fxTune(384, 0)[:4], fxTune(384, 0)[4:]
	for i := range t2 {
		t2[i].Channel = 3
	}
	split := fxSMF(t, 384, false, t1, t2)
	noNotes := fxSMF(t, 96, false, nil)
	files := map[string][]byte{
		"a.mid":             tune,
		"B.MIDI":            other,
		"c.mid.gz":          fxGzip(t, third),
		"d.mid.gz":          third, // named .gz but not gzip
		"e.mid":             tune[:len(tune)-7],
		"empty.smf":         nil,
		"nonotes.mid":       noNotes,
		"notes.txt":         []byte("ignored: not a MIDI name"),
		"sub/copy.mid":      tune,
		"sub/deeper/f.midi": fifth,
		"big.mid":           append(slices.Clone(tune), make([]byte, 1<<20)...),
		"bomb.mid.gz":       fxGzip(t, make([]byte, 2<<20)),
		"h.zip": fxZip(t,
			fxZipEntry{Name: "x.mid", Data: fourth},
			fxZipEntry{Name: "readme.txt", Data: []byte("hello")},
			fxZipEntry{Name: "y.mid", Data: []byte("RIFF....not midi")},
			fxZipEntry{Name: "dir/", Mode: os.ModeDir | 0o755},
		),
		"i.tar": fxTar(t, false,
			fxTarEntry{Name: "z.mid", Data: fxSMF(t, 96, false, fxTune(96, 5))},
			fxTarEntry{Name: "../evil.mid", Data: tune},
			fxTarEntry{Name: "link.mid", Type: tar.TypeSymlink, Link: "z.mid"},
		),
		"j.tgz": fxTar(t, true,
			fxTarEntry{Name: "w.mid", Data: split},
			fxTarEntry{Name: "about.txt", Data: []byte("x")},
		),
	}
	fxWrite(t, dir, files)
	want := []outcome{
		{"B.MIDI", StatusOK, "", "", ""},
		{"a.mid", StatusOK, "", "", ""},
		{"big.mid", StatusSkipped, ErrTooLarge.Error(), "", ""},
		{"bomb.mid.gz", StatusSkipped, ErrTooLarge.Error(), "", ""},
		{"c.mid.gz", StatusOK, "", "", ""},
		{"d.mid.gz", StatusSkipped, ErrNotGzip.Error(), "", ""},
		{"e.mid", StatusSkipped, ErrChunkLength.Error(), "", ""}, // last track cut short
		{"empty.smf", StatusSkipped, ErrEmpty.Error(), "", ""},
		{"h.zip/readme.txt", StatusSkipped, ErrNotMIDI.Error(), "", ""},
		{"h.zip/x.mid", StatusOK, "", "", ""},
		{"h.zip/y.mid", StatusSkipped, ErrBadMagic.Error(), "", ""},
		{"i.tar/../evil.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
		{"i.tar/link.mid", StatusSkipped, ErrLinkEntry.Error(), "", ""},
		{"i.tar/z.mid", StatusDuplicate, "", "mixed/a.mid", DupTransposed},
		{"j.tgz/about.txt", StatusSkipped, ErrNotMIDI.Error(), "", ""},
		{"j.tgz/w.mid", StatusDuplicate, "", "mixed/a.mid", DupMusical},
		{"nonotes.mid", StatusSkipped, ErrTooFewNotes.Error(), "", ""},
		{"sub/copy.mid", StatusDuplicate, "", "mixed/a.mid", DupExact},
		{"sub/deeper/f.midi", StatusOK, "", "", ""},
	}
	return dir, want
}

func mixedOptions(workers int) Options {
	opts := DefaultOptions()
	opts.Workers = workers
	opts.MaxFileSize = 1 << 20
	return opts
}

func TestScanMixedFolder(t *testing.T) {
	dir, want := mixedFolder(t)
	got := scanAll(t, []Source{{Path: dir}}, mixedOptions(2))
	if g := outcomes(got); !reflect.DeepEqual(g, want) {
		t.Errorf("outcomes:\n got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
	}
	for _, r := range got {
		rec := r.Record
		if rec.Dataset != "mixed" || rec.Source != dir {
			t.Errorf("%s: dataset %q source %q", rec.Path, rec.Dataset, rec.Source)
		}
		switch rec.Status {
		case StatusOK:
			if len(r.Pieces) == 0 || r.Pieces[0].MusicalHash == "" || r.Pieces[0].TransposedHash == "" || rec.SHA256 == "" {
				t.Errorf("%s: ok without pieces or hashes: %+v", rec.Path, rec)
			}
		case StatusSkipped:
			if rec.Reason == "" || r.Pieces != nil {
				t.Errorf("%s: skipped without reason or with pieces", rec.Path)
			}
		case StatusDuplicate:
			if r.Pieces != nil {
				t.Errorf("%s: duplicate with pieces", rec.Path)
			}
		}
	}
	// A parse error names the file (and where known the track and byte offset).
	for _, r := range got {
		if r.Record.Path == "e.mid" && !strings.HasPrefix(r.Record.Reason, "e.mid: ") {
			t.Errorf("e.mid reason %q does not name the file", r.Record.Reason)
		}
	}
}

func fmtOutcomes(os []outcome) string {
	var b strings.Builder
	for _, o := range os {
		fmt.Fprintf(&b, "\n  %+v", o)
	}
	return b.String()
}

// TestScanDeterministic checks that results are identical for 1, 2 and 8 workers and
// for two runs in a row.
func TestScanDeterministic(t *testing.T) {
	dir, _ := mixedFolder(t)
	var first []*Result
	for _, w := range []int{1, 2, 8, 8} {
		got := scanAll(t, []Source{{Path: dir}, {Path: filepath.Join(dir, "h.zip"), Dataset: "again"}}, mixedOptions(w))
		if first == nil {
			first = got
			continue
		}
		if len(got) != len(first) {
			t.Fatalf("workers %d: %d results, want %d", w, len(got), len(first))
		}
		for i := range got {
			if !reflect.DeepEqual(got[i].Record, first[i].Record) || !reflect.DeepEqual(got[i].Pieces, first[i].Pieces) {
				t.Errorf("workers %d: result %d differs:\n got %+v\nwant %+v", w, i, got[i].Record, first[i].Record)
			}
		}
	}
}

func TestScanDuplicates(t *testing.T) {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	chans := fxTune(96, 0)
	for i := range chans {
		chans[i].Channel = uint8(i % 3)
		chans[i].Vel = 30 + uint8(i)
	}
	half := fxTune(96, 0)
	split := fxSMF(t, 96, false, half[:3], half[3:])
	tests := []struct {
		name    string
		second  []byte
		wantOf  string
		want    DuplicateKind
		wantSt  Status
		keepDup bool
	}{
		{"same bytes", tune, "d/1.mid", DupExact, StatusDuplicate, false},
		{"other PPQ", fxSMF(t, 480, false, fxTune(480, 0)), "d/1.mid", DupMusical, StatusDuplicate, false},
		{"odd PPQ", fxSMF(t, 1000, false, fxTune(1000, 0)), "d/1.mid", DupMusical, StatusDuplicate, false},
		{"track split", split, "d/1.mid", DupMusical, StatusDuplicate, false},
		{"channels and velocities", fxSMF(t, 96, false, chans), "d/1.mid", DupMusical, StatusDuplicate, false},
		{"transposed up", fxSMF(t, 96, false, fxTune(96, 7)), "d/1.mid", DupTransposed, StatusDuplicate, false},
		{"transposed at other PPQ", fxSMF(t, 240, false, fxTune(240, 2)), "d/1.mid", DupTransposed, StatusDuplicate, false},
		{"different music", fxSMF(t, 96, false, fxOther(96)), "", "", StatusOK, false},
		{"kept duplicate", tune, "d/1.mid", DupExact, StatusOK, true},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			dir := filepath.Join(t.TempDir(), "d")
			fxWrite(t, dir, map[string][]byte{"1.mid": tune, "2.mid": tt.second})
			opts := DefaultOptions()
			opts.KeepDuplicates = tt.keepDup
			got := scanAll(t, []Source{{Path: dir}}, opts)
			want := []outcome{{"1.mid", StatusOK, "", "", ""}, {"2.mid", tt.wantSt, "", tt.wantOf, tt.want}}
			if g := outcomes(got); !reflect.DeepEqual(g, want) {
				t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
			}
			if tt.keepDup && got[1].Pieces == nil {
				t.Errorf("kept duplicate without pieces")
			}
		})
	}
}

// TestScanDuplicatesAcrossSources checks that the first source in the given order owns
// a piece, and that a .mid.gz is an exact duplicate of its .mid.
func TestScanDuplicatesAcrossSources(t *testing.T) {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	root := t.TempDir()
	fxWrite(t, root, map[string][]byte{"one/z.mid": tune, "two/a.mid.gz": fxGzip(t, tune)})
	got := scanAll(t, []Source{{Path: filepath.Join(root, "one")}, {Path: filepath.Join(root, "two"), Dataset: "second"}}, DefaultOptions())
	want := []outcome{{"z.mid", StatusOK, "", "", ""}, {"a.mid.gz", StatusDuplicate, "", "one/z.mid", DupExact}}
	if g := outcomes(got); !reflect.DeepEqual(g, want) {
		t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
	}
}

// TestScanFormat2Duplicates: a format-2 file is a duplicate only when all its pieces are.
func TestScanFormat2Duplicates(t *testing.T) {
	a := fxSMF(t, 96, false, fxTune(96, 0))
	b := fxSMF(t, 96, false, fxOther(96))
	both := fxSMF(t, 480, true, fxOther(480), fxTune(480, 3))
	partly := fxSMF(t, 96, true, fxTune(96, 0), []fxNote{{Start: 0, Dur: 10, Key: 99, Vel: 1}})
	dir := filepath.Join(t.TempDir(), "f2")
	fxWrite(t, dir, map[string][]byte{"1.mid": a, "2.mid": b, "3.mid": both, "4.mid": partly})
	got := scanAll(t, []Source{{Path: dir}}, DefaultOptions())
	want := []outcome{
		{"1.mid", StatusOK, "", "", ""},
		{"2.mid", StatusOK, "", "", ""},
		{"3.mid", StatusDuplicate, "", "f2/2.mid", DupTransposed}, // coarsest kind of its pieces
		{"4.mid", StatusOK, "", "", ""},
	}
	if g := outcomes(got); !reflect.DeepEqual(g, want) {
		t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
	}
	if got[2].Record.Pieces != 2 || got[2].Record.Format != 2 {
		t.Errorf("format-2 record: %+v", got[2].Record)
	}
}

func TestScanStrict(t *testing.T) {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	dir := filepath.Join(t.TempDir(), "s")
	fxWrite(t, dir, map[string][]byte{"a.mid": tune, "b.mid": []byte("MThd"), "c.mid": tune, "zz.zip": fxZip(t, fxZipEntry{Name: "n.txt"})})
	opts := DefaultOptions()
	opts.Strict = true
	var seen []string
	err := Scan(context.Background(), []Source{{Path: dir}}, opts, func(r *Result) error {
		seen = append(seen, r.Record.Path)
		return nil
	})
	if !errors.Is(err, ErrTruncated) {
		t.Fatalf("Strict: err %v, want ErrTruncated", err)
	}
	if want := []string{"a.mid", "b.mid"}; !reflect.DeepEqual(seen, want) {
		t.Errorf("Strict yielded %v, want %v", seen, want)
	}
	// Not MIDI and filter skips are no errors under Strict.
	dir2 := filepath.Join(t.TempDir(), "s2")
	fxWrite(t, dir2, map[string][]byte{"a.mid": fxSMF(t, 96, false, nil), "zz.zip": fxZip(t, fxZipEntry{Name: "n.txt"})})
	if err := Scan(context.Background(), []Source{{Path: dir2}}, opts, func(*Result) error { return nil }); err != nil {
		t.Errorf("Strict on filter and non-MIDI skips: %v", err)
	}
}

func TestScanYieldError(t *testing.T) {
	dir, _ := mixedFolder(t)
	stop := errors.New("stop here")
	n := 0
	err := Scan(context.Background(), []Source{{Path: dir}}, mixedOptions(4), func(*Result) error {
		n++
		if n == 3 {
			return stop
		}
		return nil
	})
	if !errors.Is(err, stop) || n != 3 {
		t.Errorf("err %v after %d yields, want %v after 3", err, n, stop)
	}
}

// TestScanCancel cancels mid-run and checks Scan returns promptly with the context's
// error and leaves no goroutine behind.
func TestScanCancel(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "many")
	files := map[string][]byte{}
	for i := range 300 {
		files[fmt.Sprintf("f%03d.mid", i)] = fxSMF(t, 96, false, fxTune(96, uint8(i%40)))
	}
	fxWrite(t, dir, files)
	before := runtime.NumGoroutine()
	ctx, cancel := context.WithCancel(context.Background())
	n := 0
	err := Scan(ctx, []Source{{Path: dir}}, mixedOptions(4), func(*Result) error {
		n++
		if n == 5 {
			cancel()
		}
		return nil
	})
	if !errors.Is(err, context.Canceled) {
		t.Errorf("err %v, want context.Canceled", err)
	}
	if n > 5+4*4 {
		t.Errorf("%d results yielded after cancel at 5", n)
	}
	deadline := time.Now().Add(2 * time.Second)
	for runtime.NumGoroutine() > before && time.Now().Before(deadline) {
		time.Sleep(10 * time.Millisecond)
	}
	if g := runtime.NumGoroutine(); g > before {
		t.Errorf("%d goroutines after Scan, %d before", g, before)
	}
	// Already cancelled: nothing is yielded.
	err = Scan(ctx, []Source{{Path: dir}}, mixedOptions(2), func(*Result) error {
		t.Error("yield after cancel")
		return nil
	})
	if !errors.Is(err, context.Canceled) {
		t.Errorf("pre-cancelled: err %v", err)
	}
}

func TestScanBadSource(t *testing.T) {
	dir := t.TempDir()
	fxWrite(t, dir, map[string][]byte{"x.doc": []byte("x")})
	for _, src := range []string{filepath.Join(dir, "missing"), filepath.Join(dir, "x.doc")} {
		err := Scan(context.Background(), []Source{{Path: src}}, DefaultOptions(), func(*Result) error { return nil })
		if err == nil {
			t.Errorf("%s: no error", src)
		}
	}
}

// scanOpenMSXDir holds Debian's openttd-openmsx MIDI files (freely licensed game music made
// by others), installed by .ci/run.
const scanOpenMSXDir = "/usr/share/games/openttd/baseset/openmsx"

// scanNeedsRefs skips a test needing an outside reference, or fails it when
// RELSHARD_REQUIRE_REFS=1.
func scanNeedsRefs(t testing.TB, path, what string) {
	t.Helper()
	if _, err := os.Stat(path); err != nil {
		if os.Getenv("RELSHARD_REQUIRE_REFS") == "1" {
			t.Fatalf("%s needed at %s (RELSHARD_REQUIRE_REFS=1): %v", what, path, err)
		}
		t.Skipf("%s not installed at %s (apt-get install openttd-openmsx midicsv)", what, path)
	}
}

// TestScanOpenMSX: every .mid of Debian's openttd-openmsx package reads ok (they are
// well-formed files played by the game), and non-MIDI files there are ignored.
func TestScanOpenMSX(t *testing.T) {
	scanNeedsRefs(t, scanOpenMSXDir, "openttd-openmsx")
	got := scanAll(t, []Source{{Path: scanOpenMSXDir}}, DefaultOptions())
	mids, _ := filepath.Glob(filepath.Join(scanOpenMSXDir, "*.mid"))
	if len(got) != len(mids) || len(got) == 0 {
		t.Fatalf("%d records for %d .mid files", len(got), len(mids))
	}
	for i, r := range got {
		if r.Record.Path != filepath.Base(mids[i]) {
			t.Errorf("record %d is %s, want %s (sorted)", i, r.Record.Path, filepath.Base(mids[i]))
		}
		if r.Record.Status != StatusOK || r.Record.Notes == 0 {
			t.Errorf("%s: %s %s (%d notes)", r.Record.Path, r.Record.Status, r.Record.Reason, r.Record.Notes)
		}
	}
}

// TestScanBoundedInFlight: while yield is blocked, workers process at most the in-flight
// bound (Options.Window per worker) of files ahead of it, so the reorder buffer stays
// bounded, for the default window and a smaller one.
func TestScanBoundedInFlight(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "many")
	files := map[string][]byte{}
	for i := range 100 {
		files[fmt.Sprintf("f%03d.mid", i)] = fxSMF(t, 96, false, fxTune(96, uint8(i%40)))
	}
	fxWrite(t, dir, files)
	var processed atomic.Int64
	hook := func() { processed.Add(1) }
	scanProcessedHook.Store(&hook)
	defer scanProcessedHook.Store(nil)
	const workers = 2
	for _, window := range []int{0, 3} {
		opts := mixedOptions(workers)
		opts.Window = window
		bound := int64(cmp.Or(window, DefaultWindow) * workers)
		processed.Store(0)
		var ahead int64
		n := 0
		err := Scan(context.Background(), []Source{{Path: dir}}, opts, func(*Result) error {
			if n == 0 {
				time.Sleep(300 * time.Millisecond) // let the workers run as far ahead as they may
				ahead = processed.Load()
			}
			n++
			return nil
		})
		if err != nil || n != 100 {
			t.Fatalf("window %d: Scan: %v, %d results", window, err, n)
		}
		if ahead > bound || ahead < 2 {
			t.Errorf("window %d: %d files processed while the first result waited, want 2 to %d", window, ahead, bound)
		}
	}
}
