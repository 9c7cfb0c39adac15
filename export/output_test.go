package export

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"sync/atomic"
	"testing"
)

func TestOutputDeterministicAcrossWorkers(t *testing.T) {
	files := synthFiles(60)
	var ref map[string]string
	for _, w := range []int{1, 2, 8} {
		dir := t.TempDir()
		m := writeSynth(t, dir, w, files)
		if len(m.Shards) < 5 {
			t.Fatalf("only %d shards; the test needs several per split", len(m.Shards))
		}
		mustVerify(t, dir)
		got := treeHashes(t, dir)
		if ref == nil {
			ref = got
			continue
		}
		if d := diffTrees(ref, got); len(d) > 0 {
			t.Errorf("workers %d: files differ from workers 1: %v", w, d)
		}
	}
}

func TestOutputTotals(t *testing.T) {
	files := synthFiles(20)
	dir := t.TempDir()
	m := writeSynth(t, dir, 2, files)
	var want Totals
	want.Splits = map[string]SplitTotals{}
	for _, f := range files {
		want.Files++
		switch f.entry.Status {
		case "ok":
			want.FilesOK++
		case "skipped":
			want.FilesSkipped++
		}
		want.Pieces += f.entry.Pieces
		want.Windows += f.entry.Windows
		for _, r := range f.rows {
			want.Tokens += int64(len(r.Tokens))
		}
	}
	got := m.Totals
	if got.Files != want.Files || got.FilesOK != want.FilesOK || got.FilesSkipped != want.FilesSkipped ||
		got.Pieces != want.Pieces || got.Windows != want.Windows || got.Tokens != want.Tokens {
		t.Errorf("totals %+v, want %+v", got, want)
	}
	if len(m.Files) != len(files) {
		t.Errorf("%d file entries, want %d", len(m.Files), len(files))
	}
}

// TestResumeAfterCrash stops a run part way (as a kill would: shards written,
// temporaries left, no manifest), checks nothing looks complete, reruns, and
// compares the result with an uninterrupted run byte for byte.
func TestResumeAfterCrash(t *testing.T) {
	files := synthFiles(60)
	clean := t.TempDir()
	writeSynth(t, clean, 2, files)
	want := treeHashes(t, clean)

	for _, stopAt := range []int{0, 9, 31} {
		dir := t.TempDir()
		ctx, cancel := context.WithCancel(context.Background())
		n := 0
		feed := func(emit func(fileResult) error) error {
			for _, f := range files {
				if n == stopAt {
					cancel()
					return ctx.Err()
				}
				n++
				if err := emit(f); err != nil {
					return err
				}
			}
			return nil
		}
		_, err := writeOutput(ctx, synthSpec(dir, 2), feed, noCoverage)
		if !errors.Is(err, context.Canceled) {
			t.Fatalf("stop at %d: err %v, want context.Canceled", stopAt, err)
		}
		// A kill leaves temporaries too.
		os.MkdirAll(filepath.Join(dir, "train"), 0o755)
		os.WriteFile(filepath.Join(dir, "train", "train-000001.parquet"+TempSuffix), []byte("PAR1 half"), 0o644)
		os.WriteFile(filepath.Join(dir, ManifestName+TempSuffix), []byte("{"), 0o644)
		if _, err := os.Stat(filepath.Join(dir, ManifestName)); err == nil {
			t.Fatalf("stop at %d: manifest exists after an interrupted run", stopAt)
		}
		if _, err := Verify(context.Background(), dir); err == nil {
			t.Errorf("stop at %d: verify accepted an interrupted run", stopAt)
		}
		var reused atomic.Int64
		sp := synthSpec(dir, 8)
		sp.onReuse = func() { reused.Add(1) }
		if stopAt == 31 {
			// One completed shard damaged after the crash: it must be written again.
			data, _ := os.ReadFile(filepath.Join(dir, "train", "train-000000.parquet"))
			if len(data) > 0 {
				data[10] ^= 1
				os.WriteFile(filepath.Join(dir, "train", "train-000000.parquet"), data, 0o644)
			}
		}
		if _, err := writeOutput(context.Background(), sp, feedOf(files), noCoverage); err != nil {
			t.Fatal(err)
		}
		if d := diffTrees(want, treeHashes(t, dir)); len(d) > 0 {
			t.Errorf("stop at %d: resumed output differs from an uninterrupted run: %v", stopAt, d)
		}
		if stopAt == 31 && reused.Load() == 0 {
			t.Errorf("stop at %d: the rerun kept none of the shards the first run completed", stopAt)
		}
		t.Logf("stop at %d: %d shards kept", stopAt, reused.Load())
		if _, err := os.Stat(filepath.Join(dir, JournalName)); err == nil {
			t.Errorf("stop at %d: the journal outlived the run", stopAt)
		}
	}
}

func TestOutputFolderGuard(t *testing.T) {
	files := synthFiles(12)
	t.Run("foreign folder refused", func(t *testing.T) {
		dir := t.TempDir()
		os.WriteFile(filepath.Join(dir, "notes.txt"), []byte("mine"), 0o644)
		_, err := writeOutput(context.Background(), synthSpec(dir, 1), feedOf(files), noCoverage)
		if !errors.Is(err, ErrFolderInUse) {
			t.Fatalf("err %v, want ErrFolderInUse", err)
		}
		sp := synthSpec(dir, 1)
		sp.overwrite = true
		if _, err := writeOutput(context.Background(), sp, feedOf(files), noCoverage); !errors.Is(err, ErrFolderInUse) {
			t.Fatalf("with overwrite: err %v, want ErrFolderInUse", err)
		}
		if data, _ := os.ReadFile(filepath.Join(dir, "notes.txt")); string(data) != "mine" {
			t.Fatal("foreign file touched")
		}
	})
	t.Run("other config refused, overwrite removes only listed files", func(t *testing.T) {
		dir := t.TempDir()
		writeSynth(t, dir, 1, files)
		os.WriteFile(filepath.Join(dir, "train", "README"), []byte("user file"), 0o644)
		sp := synthSpec(dir, 1)
		sp.cfg.Shards.Rows = 3
		_, err := writeOutput(context.Background(), sp, feedOf(files), noCoverage)
		if !errors.Is(err, ErrFolderInUse) || !strings.Contains(err.Error(), "--overwrite") {
			t.Fatalf("err %v, want ErrFolderInUse naming --overwrite", err)
		}
		mustVerify(t, dir) // the refused run left the old dataset intact
		sp.overwrite = true
		m, err := writeOutput(context.Background(), sp, feedOf(files), noCoverage)
		if err != nil {
			t.Fatal(err)
		}
		mustVerify(t, dir)
		if m.Config.Shards.Rows != 3 {
			t.Fatalf("manifest config rows %d", m.Config.Shards.Rows)
		}
		if data, _ := os.ReadFile(filepath.Join(dir, "train", "README")); string(data) != "user file" {
			t.Fatal("overwrite removed a file the old manifest did not list")
		}
	})
	t.Run("same config reruns in place", func(t *testing.T) {
		dir := t.TempDir()
		writeSynth(t, dir, 1, files)
		before := treeHashes(t, dir)
		writeSynth(t, dir, 2, files)
		if d := diffTrees(before, treeHashes(t, dir)); len(d) > 0 {
			t.Fatalf("rerun changed %v", d)
		}
		// Fewer inputs: the shards beyond the new run's are removed.
		writeSynth(t, dir, 2, files[:3])
		mustVerify(t, dir)
	})
}
