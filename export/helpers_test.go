package export

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"testing"
)

// synthFiles makes a deterministic synthetic corpus of n files, each with one or
// two pieces of a few windows. Invented data: the export stage is checked on
// its own, before any MIDI is involved.
func synthFiles(n int) []fileResult {
	var out []fileResult
	for f := 0; f < n; f++ {
		fr := fileResult{entry: FileEntry{Dataset: "synth", Source: fmt.Sprintf("dir/f%03d.mid", f), Status: "ok"}}
		if f%7 == 3 {
			fr.entry.Status, fr.entry.Reason = "skipped", "truncated"
			out = append(out, fr)
			continue
		}
		pieces := 1 + f%2
		for p := 0; p < pieces; p++ {
			hash := fmt.Sprintf("%016x", uint64(f*1000+p)*0x9e3779b97f4a7c15)
			split := SplitOf(hash, DefaultRatios)
			windows := 1 + (f+p)%4
			for w := 0; w < windows; w++ {
				n := 5 + (f*7+w*3)%40
				r := Row{Piece: fmt.Sprintf("synth:dir/f%03d.mid#%d", f, p), Dataset: "synth", Source: fr.entry.Source,
					ContentHash: hash, Split: split, Window: int32(w), Transpose: 0, Stretch: 1}
				for i := 0; i < n; i++ {
					r.Tokens = append(r.Tokens, int32((f+i*13+w)%300))
					r.Time = append(r.Time, int32(i*10+w))
					if i%3 == 0 {
						r.Pitch = append(r.Pitch, -1)
					} else {
						r.Pitch = append(r.Pitch, int16(40+(i+f)%48))
					}
					r.Inst = append(r.Inst, int16(f%129))
				}
				fr.rows = append(fr.rows, r)
			}
			fr.entry.Pieces++
			fr.entry.Windows += int64(windows)
		}
		out = append(out, fr)
	}
	return out
}

func synthSpec(dir string, workers int) outputSpec {
	cfg := DefaultConfig()
	cfg.Shards.Rows = 7
	cfg.Tokens.MaxLen = 64
	return outputSpec{dir: dir, cfg: cfg, workers: workers, toolVersion: "test",
		encoding: "synthetic", timeUnit: "ms", vocabSize: 300, maxLen: 64,
		vocabulary: json.RawMessage(`{"size":300}`), buckets: json.RawMessage(`{"token":[]}`)}
}

func feedOf(files []fileResult) func(func(fileResult) error) error {
	return func(emit func(fileResult) error) error {
		for _, f := range files {
			if err := emit(f); err != nil {
				return err
			}
		}
		return nil
	}
}

func noCoverage() (json.RawMessage, error) { return json.RawMessage(`{}`), nil }

func writeSynth(t *testing.T, dir string, workers int, files []fileResult) *Manifest {
	t.Helper()
	m, err := writeOutput(context.Background(), synthSpec(dir, workers), feedOf(files), noCoverage)
	if err != nil {
		t.Fatalf("writeOutput: %v", err)
	}
	return written(t, dir, m)
}

// written checks that a manifest returned by a run is the one written to dir but
// for its file entries, which a run leaves out, and returns the one written.
func written(t testing.TB, dir string, m *Manifest) *Manifest {
	t.Helper()
	disk, err := ReadManifest(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Files) != 0 {
		t.Errorf("the run returned %d file entries; it should leave them out", len(m.Files))
	}
	if _, err := m.Encode(); err == nil && m.Totals.Files > 0 {
		t.Error("a manifest returned by the run encodes without its file entries")
	}
	got, want := m.FileCounts(), disk.FileCounts()
	if !reflect.DeepEqual(got, want) {
		t.Errorf("file counts of the run %+v, of the manifest written %+v", got, want)
	}
	if !reflect.DeepEqual(m.Totals, disk.Totals) || !reflect.DeepEqual(m.Shards, disk.Shards) || m.ConfigHash != disk.ConfigHash {
		t.Errorf("the manifest returned differs from the one written: totals %+v, want %+v; %d shards, want %d",
			m.Totals, disk.Totals, len(m.Shards), len(disk.Shards))
	}
	return disk
}

// treeHashes maps each file under dir (relative slash path) to its SHA-256.
func treeHashes(t *testing.T, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		sum := sha256.Sum256(data)
		out[filepath.ToSlash(rel)] = hex.EncodeToString(sum[:])
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func diffTrees(a, b map[string]string) []string {
	var d []string
	for k, v := range a {
		if b[k] != v {
			d = append(d, k)
		}
	}
	for k := range b {
		if _, ok := a[k]; !ok {
			d = append(d, k)
		}
	}
	sort.Strings(d)
	return d
}

func mustVerify(t *testing.T, dir string) {
	t.Helper()
	probs, err := Verify(context.Background(), dir)
	if err != nil {
		t.Fatalf("verify: %v", err)
	}
	for _, p := range probs {
		t.Errorf("verify: %s", p)
	}
}
