package export

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/sampledata"
)

var (
	corpusOnce sync.Once
	corpusDir  string
	corpusErr  error
)

// testCorpus writes the generated demo corpus (with a few damaged files) once per
// test binary.
func testCorpus(t *testing.T) []ingest.Source { return testCorpusB(t) }

func testCorpusB(t testing.TB) []ingest.Source {
	t.Helper()
	corpusOnce.Do(func() {
		corpusDir, corpusErr = os.MkdirTemp("", "relshard-export-corpus-")
		if corpusErr == nil {
			_, corpusErr = sampledata.WriteDir(context.Background(), corpusDir, sampledata.Config{Files: 24, Damaged: 4, Seed: 7}, true)
		}
	})
	if corpusErr != nil {
		t.Fatalf("generate corpus: %v", corpusErr)
	}
	return []ingest.Source{{Path: corpusDir, Dataset: "demo"}}
}

func TestMain(m *testing.M) {
	code := m.Run()
	if corpusDir != "" {
		os.RemoveAll(corpusDir)
	}
	os.Exit(code)
}

// smallConfig cuts short windows and small shards, so a small corpus gives many
// of both.
func smallConfig() Config {
	cfg := DefaultConfig()
	cfg.Tokens.MaxLen = 128
	cfg.Tokens.MinLen = 8
	cfg.Tokens.Transpose = []int{0, 2}
	cfg.Shards.Rows = 40
	return cfg
}

func runExport(t *testing.T, dir string, cfg Config, opt Options) *Manifest {
	t.Helper()
	opt.Out = dir
	if opt.ToolVersion == "" {
		opt.ToolVersion = "test"
	}
	m, err := Run(context.Background(), testCorpus(t), cfg, opt)
	if err != nil {
		t.Fatalf("Run: %v", err)
	}
	return written(t, dir, m)
}

func TestRunDeterministicAcrossWorkers(t *testing.T) {
	var ref map[string]string
	for _, w := range []int{1, 2, 8} {
		dir := t.TempDir()
		m := runExport(t, dir, smallConfig(), Options{Workers: w})
		mustVerify(t, dir)
		if w == 1 {
			if m.Totals.Windows == 0 || len(m.Shards) < 3 {
				t.Fatalf("totals %+v with %d shards: the corpus should give several shards", m.Totals, len(m.Shards))
			}
			if m.Totals.FilesSkipped == 0 {
				t.Errorf("no skipped files; the corpus has damaged ones")
			}
		}
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

func TestRunEveryInputOnce(t *testing.T) {
	dir := t.TempDir()
	m := runExport(t, dir, smallConfig(), Options{Workers: 2})
	var n int
	filepath.WalkDir(corpusDir, func(p string, d os.DirEntry, err error) error {
		if err == nil && !d.IsDir() {
			n++
		}
		return nil
	})
	if len(m.Files) != n {
		t.Errorf("manifest lists %d files, the corpus folder holds %d", len(m.Files), n)
	}
}

// TestRunDuplicates copies one corpus file under another name: by default the
// copy is listed as a duplicate and not exported; with keep_duplicates it is
// exported too, into the split of the original.
func TestRunDuplicates(t *testing.T) {
	src := testCorpus(t)[0].Path
	var first string
	filepath.WalkDir(src, func(p string, d os.DirEntry, err error) error {
		if err == nil && first == "" && !d.IsDir() && filepath.Ext(p) == ".mid" {
			first = p
		}
		return nil
	})
	data, err := os.ReadFile(first)
	if err != nil {
		t.Fatal(err)
	}
	dup := t.TempDir()
	os.WriteFile(filepath.Join(dup, "copy.mid"), data, 0o644)
	sources := []ingest.Source{{Path: first, Dataset: "orig"}, {Path: dup, Dataset: "copies"}}
	for _, keep := range []bool{false, true} {
		cfg := smallConfig()
		cfg.Shards.KeepDuplicates = keep
		out := t.TempDir()
		m, err := Run(context.Background(), sources, cfg, Options{Out: out, Workers: 2, ToolVersion: "test"})
		if err != nil {
			t.Fatal(err)
		}
		m = written(t, out, m)
		if len(m.Files) != 2 {
			t.Fatalf("%d files listed, want 2", len(m.Files))
		}
		orig, cp := m.Files[0], m.Files[1]
		if orig.Status != "ok" || orig.Windows == 0 {
			t.Fatalf("original %+v", orig)
		}
		if cp.Status != "duplicate" || !strings.Contains(cp.Reason, "orig/") {
			t.Errorf("keep=%v: copy %+v, want a duplicate naming the original", keep, cp)
		}
		if keep && (cp.Windows != orig.Windows || !strings.Contains(cp.Reason, "kept")) {
			t.Errorf("keep: copy %+v exported %d windows, original %d", cp, cp.Windows, orig.Windows)
		}
		if !keep && (cp.Windows != 0 || cp.Pieces != 0) {
			t.Errorf("copy exported by default: %+v", cp)
		}
		if m.Totals.FilesDuplicate != 1 {
			t.Errorf("keep=%v: %d duplicates in totals", keep, m.Totals.FilesDuplicate)
		}
	}
}

func TestRunMissingSource(t *testing.T) {
	out := filepath.Join(t.TempDir(), "ds")
	_, err := Run(context.Background(), []ingest.Source{{Path: filepath.Join(t.TempDir(), "nope")}}, smallConfig(), Options{Out: out})
	if err == nil || !strings.Contains(err.Error(), "nope") {
		t.Fatalf("err %v, want one naming the missing source", err)
	}
	if _, err := os.Stat(out); err == nil {
		t.Error("the output folder was created for a run that could not start")
	}
}
