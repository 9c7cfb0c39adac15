package export

import (
	"archive/tar"
	"archive/zip"
	"bytes"
	"compress/gzip"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"reflect"
	"runtime"
	"runtime/metrics"
	"slices"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/parquet-go/parquet-go"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/ingest/mutate"
	"github.com/relshard/relshard/sampledata"
)

// hostileCorpus writes 30 valid generated files under root/valid and the damaged
// variants of the first ten under root/hostile (over 500 files).
func hostileCorpus(t testing.TB, root string) (valid, hostile ingest.Source) {
	t.Helper()
	ctx := context.Background()
	vdir, hdir := filepath.Join(root, "valid"), filepath.Join(root, "hostile")
	if _, err := sampledata.WriteDir(ctx, vdir, sampledata.Config{Files: 30, Seed: 13}, false); err != nil {
		t.Fatal(err)
	}
	var bases []mutate.Base
	err := sampledata.Generate(ctx, sampledata.Config{Files: 10, Seed: 13}, func(f sampledata.File) error {
		bases = append(bases, mutate.Base{Name: filepath.Base(f.Path), Data: f.Data})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if err := os.MkdirAll(hdir, 0o755); err != nil {
		t.Fatal(err)
	}
	for _, c := range mutate.Corpus(13, bases) {
		if err := os.WriteFile(filepath.Join(hdir, c.Name), c.Data, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return ingest.Source{Path: vdir, Dataset: "valid"}, ingest.Source{Path: hdir, Dataset: "hostile"}
}

// TestReliability runs the reliability checks on one hostile corpus, written once;
// the inputs' bytes, sizes, modes and modification times are checked after all of
// them (no export may modify an input).
func TestReliability(t *testing.T) {
	root := filepath.Join(t.TempDir(), "corpus")
	valid, hostile := hostileCorpus(t, root)
	inputs := fileStates(t, root)
	t.Run("hostile mixed", func(t *testing.T) { testHostileMixed(t, valid, hostile) })
	t.Run("deterministic", func(t *testing.T) { testHostileDeterministic(t, valid, hostile) })
	t.Run("foreign folder untouched", func(t *testing.T) { testForeignFolderUntouched(t, valid) })
	t.Run("hostile archives", func(t *testing.T) { testHostileArchives(t, valid) })
	t.Run("killed and resumed", func(t *testing.T) { testKilledAndResumed(t, valid, hostile) })
	sameStates(t, "inputs", inputs, fileStates(t, root))
}

// inputFiles lists the files under a folder, relative slash paths.
func inputFiles(t testing.TB, dir string) []string {
	t.Helper()
	var out []string
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		out = append(out, filepath.ToSlash(rel))
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// fileStates maps every file and folder under dir to its SHA-256 (files), size, mode
// and modification time, to show that nothing under dir changed.
func fileStates(t testing.TB, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		fi, err := os.Lstat(p)
		if err != nil {
			return err
		}
		sum := ""
		if fi.Mode().IsRegular() {
			data, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			h := sha256.Sum256(data)
			sum = hex.EncodeToString(h[:])
		}
		out[p] = fmt.Sprintf("%s %d %v %d", sum, fi.Size(), fi.Mode(), fi.ModTime().UnixNano())
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func sameStates(t testing.TB, what string, before, after map[string]string) {
	t.Helper()
	for p, s := range before {
		if after[p] != s {
			t.Errorf("%s: %s changed: %q -> %q", what, p, s, after[p])
		}
	}
	for p := range after {
		if _, ok := before[p]; !ok {
			t.Errorf("%s: %s appeared", what, p)
		}
	}
}

// shardRows reads every row of a dataset, as sorted comparable strings, keeping only
// the rows of one dataset name ("" for all).
func shardRows(t testing.TB, dir, dataset string) []string {
	t.Helper()
	m, err := ReadManifest(dir)
	if err != nil {
		t.Fatal(err)
	}
	var keys []string
	for _, sh := range m.Shards {
		f, err := os.Open(filepath.Join(dir, filepath.FromSlash(sh.Path)))
		if err != nil {
			t.Fatal(err)
		}
		r := parquet.NewGenericReader[Row](f)
		batch := make([]Row, 64)
		for {
			n, err := r.Read(batch)
			for _, row := range batch[:n] {
				if dataset != "" && row.Dataset != dataset {
					continue
				}
				keys = append(keys, fmt.Sprintf("%s|%s|%s|%s|%s|%d|%d|%g|%v|%v|%v|%v", row.Piece, row.Dataset, row.Source,
					row.ContentHash, row.Split, row.Window, row.Transpose, row.Stretch, row.Tokens, row.Time, row.Pitch, row.Inst))
			}
			if errors.Is(err, io.EOF) {
				break
			}
			if err != nil {
				t.Fatalf("%s: %v", sh.Path, err)
			}
		}
		r.Close()
		f.Close()
	}
	slices.Sort(keys)
	return keys
}

func runSources(t testing.TB, dir string, sources []ingest.Source, workers int) *Manifest {
	t.Helper()
	m, err := Run(context.Background(), sources, smallConfig(), Options{Out: dir, Workers: workers, ToolVersion: "test"})
	if err != nil {
		t.Fatalf("Run: %v", err)
	}
	return written(t, dir, m)
}

// testHostileMixed: an export of valid and damaged files lists every input
// file exactly once, with a reason for each skip, verifies, and holds for the valid
// files exactly the rows (and entries) of an export of the valid files alone.
func testHostileMixed(t *testing.T, valid, hostile ingest.Source) {
	base := t.TempDir()
	mixedDir, aloneDir := filepath.Join(base, "mixed"), filepath.Join(base, "alone")
	start := time.Now()
	runtime.GC()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	stop := heapPeak()
	mixed := runSources(t, mixedDir, []ingest.Source{valid, hostile}, 2)
	grow := int64(stop()) - int64(ms.HeapAlloc)
	t.Logf("mixed export of %d files took %v; heap peak +%d MiB", len(mixed.Files), time.Since(start), grow>>20)
	// Memory is bounded by shards in flight (40 rows of at most 128 tokens here) and
	// files in flight per worker, not by the corpus; a damaged length trusted anywhere
	// would cost hundreds of MiB.
	if grow > 96<<20 {
		t.Errorf("heap peaked %d MiB above its start", grow>>20)
	}
	alone := runSources(t, aloneDir, []ingest.Source{valid}, 2)
	mustVerify(t, mixedDir)
	mustVerify(t, aloneDir)

	want := map[string]int{}
	for _, s := range []ingest.Source{valid, hostile} {
		for _, p := range inputFiles(t, s.Path) {
			want[s.Dataset+"/"+p] = 1
		}
	}
	got := map[string]int{}
	skipped := 0
	for _, f := range mixed.Files {
		got[f.Dataset+"/"+f.Source]++
		switch f.Status {
		case string(ingest.StatusSkipped):
			skipped++
			if f.Reason == "" {
				t.Errorf("%s/%s skipped without a reason", f.Dataset, f.Source)
			}
		case string(ingest.StatusOK), string(ingest.StatusDuplicate):
		default:
			t.Errorf("%s/%s: status %q", f.Dataset, f.Source, f.Status)
		}
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("manifest lists %d distinct files (%d entries), the corpus holds %d", len(got), len(mixed.Files), len(want))
	}
	if len(want) < 530 || skipped < 400 {
		t.Errorf("%d files, %d skipped: the hostile corpus should hold over 500 damaged files", len(want), skipped)
	}
	validEntries := func(m *Manifest) []FileEntry {
		var out []FileEntry
		for _, f := range m.Files {
			if f.Dataset == valid.Dataset {
				out = append(out, f)
			}
		}
		return out
	}
	if g, w := validEntries(mixed), validEntries(alone); !reflect.DeepEqual(g, w) {
		t.Errorf("the valid files' entries differ with damaged files beside them:\n%+v\n%+v", g, w)
	}
	g, w := shardRows(t, mixedDir, valid.Dataset), shardRows(t, aloneDir, "")
	if len(w) == 0 || !slices.Equal(g, w) {
		t.Errorf("the valid files' rows (%d) differ from an export of them alone (%d)", len(g), len(w))
	}
}

// testHostileDeterministic: byte-identical output for 1, 2 and 8 workers (three runs
// in a row into new folders), and for a rerun in place over the first one.
func testHostileDeterministic(t *testing.T, valid, hostile ingest.Source) {
	sources := []ingest.Source{valid, hostile}
	base := t.TempDir()
	var ref map[string]string
	for i, w := range []int{1, 2, 8} {
		dir := filepath.Join(base, fmt.Sprintf("run-%d-workers-%d", i, w))
		runSources(t, dir, sources, w)
		got := treeHashes(t, dir)
		if ref == nil {
			mustVerify(t, dir)
			ref = got
			continue
		}
		if d := diffTrees(ref, got); len(d) > 0 {
			t.Errorf("run %d with %d workers: files differ from the first run: %v", i, w, d)
		}
	}
	again := filepath.Join(base, "run-0-workers-1")
	runSources(t, again, sources, 8)
	if d := diffTrees(ref, treeHashes(t, again)); len(d) > 0 {
		t.Errorf("a rerun in place changed %v", d)
	}
}

// testForeignFolderUntouched: a non-empty output folder that is not our own previous
// output is refused, with and without Overwrite, and left exactly as it was: not one
// file added, removed or touched.
func testForeignFolderUntouched(t *testing.T, valid ingest.Source) {
	foreignManifest := `{"name": "a web app", "version": "1.0.0"}` + "\n"
	ours := `{"format": "` + ManifestKind + `"}` // our format tag, nothing else
	cases := []struct {
		name          string
		files         map[string]string
		oursWhenForce bool // Overwrite may replace it: it claims to be our dataset
	}{
		{"a file", map[string]string{"thesis.tex": "x"}, false},
		{"a hidden file only", map[string]string{".DS_Store": ""}, false},
		{"an empty subfolder", map[string]string{"sub/": ""}, false},
		{"a shard-like file without a manifest", map[string]string{"train/train-000000.parquet": "PAR1 mine PAR1"}, false},
		{"another tool's manifest.json", map[string]string{ManifestName: foreignManifest, "train/train-000000.parquet": "PAR1"}, false},
		{"a manifest with only our format tag", map[string]string{ManifestName: ours, "notes.md": "mine"}, true},
		{"an unreadable run marker", map[string]string{MarkerName: "garbage", "train/train-000001.parquet.partial": "x"}, false},
	}
	for _, tc := range cases {
		for _, overwrite := range []bool{false, true} {
			if overwrite && tc.oursWhenForce {
				continue
			}
			t.Run(fmt.Sprintf("%s overwrite=%v", tc.name, overwrite), func(t *testing.T) {
				dir := t.TempDir()
				for name, body := range tc.files {
					p := filepath.Join(dir, filepath.FromSlash(name))
					if strings.HasSuffix(name, "/") {
						os.MkdirAll(p, 0o755)
						continue
					}
					os.MkdirAll(filepath.Dir(p), 0o755)
					if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
						t.Fatal(err)
					}
				}
				// Old modification times, so that a rewrite with the same bytes shows.
				old := time.Date(2001, 2, 3, 4, 5, 6, 0, time.UTC)
				filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
					if err == nil && p != dir {
						os.Chtimes(p, old, old)
					}
					return nil
				})
				before := fileStates(t, dir)
				_, err := Run(context.Background(), []ingest.Source{valid}, smallConfig(), Options{Out: dir, Workers: 2, Overwrite: overwrite, ToolVersion: "test"})
				if !errors.Is(err, ErrFolderInUse) {
					t.Errorf("err %v, want ErrFolderInUse", err)
				}
				sameStates(t, "foreign folder", before, fileStates(t, dir))
			})
		}
	}
	t.Run("a file as output", func(t *testing.T) {
		p := filepath.Join(t.TempDir(), "out")
		os.WriteFile(p, []byte("mine"), 0o644)
		before := fileStates(t, p)
		if _, err := Run(context.Background(), []ingest.Source{valid}, smallConfig(), Options{Out: p, ToolVersion: "test"}); err == nil {
			t.Error("exported into a regular file")
		}
		sameStates(t, "output file", before, fileStates(t, p))
	})
}

// testHostileArchives exports a folder of hostile archives (unsafe names, links, an
// entry over the size cap, a gzip bomb, an archive over the entry cap) beside good
// entries, with the caps set in the config: every entry is listed once with its
// reason, the good ones are exported, the dataset verifies, and nothing is written
// outside the output folder: not beside it, not in the working directory, not into
// the inputs.
func testHostileArchives(t *testing.T, valid ingest.Source) {
	var good [][]byte
	for _, p := range inputFiles(t, valid.Path)[:3] {
		data, err := os.ReadFile(filepath.Join(valid.Path, filepath.FromSlash(p)))
		if err != nil {
			t.Fatal(err)
		}
		good = append(good, data)
	}
	zipOf := func(entries ...any) []byte { // name, data (nil: a symlink to /etc), ...
		var buf bytes.Buffer
		zw := zip.NewWriter(&buf)
		for i := 0; i < len(entries); i += 2 {
			h := &zip.FileHeader{Name: entries[i].(string), Method: zip.Deflate}
			data, _ := entries[i+1].([]byte)
			if data == nil {
				h.SetMode(os.ModeSymlink | 0o777)
				data = []byte("/etc")
			}
			w, err := zw.CreateHeader(h)
			if err != nil {
				t.Fatal(err)
			}
			w.Write(data)
		}
		if err := zw.Close(); err != nil {
			t.Fatal(err)
		}
		return buf.Bytes()
	}
	var tarBuf bytes.Buffer
	tw := tar.NewWriter(&tarBuf)
	for _, e := range []struct {
		name, link string
		typ        byte
		data       []byte
	}{
		{name: "../escape.mid", typ: tar.TypeReg, data: good[0]},
		{name: "/abs.mid", typ: tar.TypeReg, data: good[0]},
		{name: "sym.mid", typ: tar.TypeSymlink, link: "/etc/passwd"},
		{name: "hard.mid", typ: tar.TypeLink, link: "ok.mid"},
		{name: "ok.mid", typ: tar.TypeReg, data: good[2]},
	} {
		if err := tw.WriteHeader(&tar.Header{Name: e.name, Typeflag: e.typ, Linkname: e.link, Mode: 0o644, Size: int64(len(e.data))}); err != nil {
			t.Fatal(err)
		}
		tw.Write(e.data)
	}
	tw.Close()
	var gz bytes.Buffer
	zw := gzip.NewWriter(&gz)
	zw.Write(make([]byte, 8<<20))
	zw.Close()
	var many []any
	for i := range 6 {
		many = append(many, fmt.Sprintf("%d.mid", i), good[0])
	}
	base := t.TempDir()
	in, out := filepath.Join(base, "in"), filepath.Join(base, "out")
	os.MkdirAll(in, 0o755)
	for name, data := range map[string][]byte{
		"evil.zip":    zipOf("../../escape.mid", good[0], "/abs.mid", good[0], "lnk", nil, "zeros.mid", make([]byte, 4<<20), "ok.mid", good[1]),
		"evil.tar":    tarBuf.Bytes(),
		"bomb.mid.gz": gz.Bytes(),
		"many.zip":    zipOf(many...),
	} {
		if err := os.WriteFile(filepath.Join(in, name), data, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	cwd, _ := os.Getwd()
	cwdBefore, _ := os.ReadDir(cwd)
	inputs := fileStates(t, in)
	cfg := smallConfig()
	cfg.Input.MaxFileMB = 1
	cfg.Input.MaxEntryMB = 2
	cfg.Input.MaxArchiveEntries = 5
	m, err := Run(context.Background(), []ingest.Source{{Path: in, Dataset: "in"}}, cfg, Options{Out: out, Workers: 2, ToolVersion: "test"})
	if err != nil {
		t.Fatal(err)
	}
	m = written(t, out, m)
	mustVerify(t, out)
	type entry struct{ Source, Status, Class string }
	var got []entry
	for _, f := range m.Files {
		e := entry{f.Source, f.Status, ""}
		for _, sentinel := range []error{ingest.ErrUnsafePath, ingest.ErrLinkEntry, ingest.ErrEntryTooLarge, ingest.ErrTooLarge, ingest.ErrTooManyEntries} {
			if strings.Contains(f.Reason, sentinel.Error()) {
				e.Class = sentinel.Error()
				break
			}
		}
		if f.Status == "skipped" && !strings.Contains(f.Reason, strings.TrimSuffix(f.Source, "/")) {
			t.Errorf("%s: reason %q does not name it", f.Source, f.Reason)
		}
		got = append(got, e)
	}
	unsafe, link := ingest.ErrUnsafePath.Error(), ingest.ErrLinkEntry.Error()
	want := []entry{
		{"bomb.mid.gz", "skipped", ingest.ErrTooLarge.Error()},
		{"evil.tar/../escape.mid", "skipped", unsafe},
		{"evil.tar//abs.mid", "skipped", unsafe},
		{"evil.tar/hard.mid", "skipped", link},
		{"evil.tar/ok.mid", "ok", ""},
		{"evil.tar/sym.mid", "skipped", link},
		{"evil.zip/../../escape.mid", "skipped", unsafe},
		{"evil.zip//abs.mid", "skipped", unsafe},
		{"evil.zip/lnk", "skipped", link},
		{"evil.zip/ok.mid", "ok", ""},
		{"evil.zip/zeros.mid", "skipped", ingest.ErrEntryTooLarge.Error()},
		{"many.zip", "skipped", ingest.ErrTooManyEntries.Error()},
	}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("manifest entries\n%+v\nwant\n%+v", got, want)
	}
	if m.Totals.Windows == 0 {
		t.Error("the good entries gave no rows")
	}
	if ents, _ := os.ReadDir(base); len(ents) != 2 {
		t.Errorf("%d entries beside the output folder, want only in and out", len(ents))
	}
	if after, _ := os.ReadDir(cwd); len(after) != len(cwdBefore) {
		t.Errorf("the working directory changed: %d entries, then %d", len(cwdBefore), len(after))
	}
	sameStates(t, "inputs", inputs, fileStates(t, in))
	filepath.WalkDir(out, func(p string, d fs.DirEntry, err error) error {
		if err == nil && !d.IsDir() && !strings.HasSuffix(d.Name(), ".parquet") && d.Name() != ManifestName {
			t.Errorf("output folder holds %s", p)
		}
		return nil
	})
}

// heapPeak samples the bytes of heap objects (live and not yet swept) every
// millisecond until stop is called, and returns the largest value seen.
func heapPeak() (stop func() uint64) {
	s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	var peak uint64
	done, finished := make(chan struct{}), make(chan struct{})
	go func() {
		defer close(finished)
		tick := time.NewTicker(time.Millisecond)
		defer tick.Stop()
		for {
			metrics.Read(s)
			peak = max(peak, s[0].Value.Uint64())
			select {
			case <-done:
				return
			case <-tick.C:
			}
		}
	}()
	return func() uint64 {
		close(done)
		<-finished
		return peak
	}
}

// relshardBinary builds the relshard command into a temporary folder.
func relshardBinary(t *testing.T) string {
	t.Helper()
	bin := filepath.Join(t.TempDir(), "relshard")
	out, err := exec.Command("go", "build", "-ldflags=-s -w", "-o", bin, "github.com/relshard/relshard/cmd/relshard").CombinedOutput()
	if err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	return bin
}

// exitCode runs or waits for a command and returns its exit status (-1 when killed
// by a signal).
func exitCode(err error) (int, error) {
	if err == nil {
		return 0, nil
	}
	var ee *exec.ExitError
	if errors.As(err, &ee) {
		return ee.ExitCode(), nil
	}
	return 0, err
}

// leftovers counts the final-named shards and the temporary files under dir.
func leftovers(dir string) (shards, temps int) {
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		switch {
		case err != nil || d.IsDir():
		case strings.HasSuffix(d.Name(), TempSuffix):
			temps++
		case shardPattern.MatchString(d.Name()):
			shards++
		}
		return nil
	})
	return shards, temps
}

// checkInterrupted checks what a killed run left: either a complete dataset (the run
// had finished), or no manifest, a folder that does not verify, and only files a run
// makes (split folders, shards, temporaries, the marker and other ".relshard-" run
// files at the top), each final-named shard a whole Parquet file (shards appear only
// complete).
func checkInterrupted(t *testing.T, k int, dir string) (finished bool) {
	t.Helper()
	if _, err := os.Stat(dir); errors.Is(err, fs.ErrNotExist) {
		return false // killed before it made the folder
	}
	if _, err := os.Stat(filepath.Join(dir, ManifestName)); err == nil {
		mustVerify(t, dir)
		return true
	}
	if probs, err := Verify(context.Background(), dir); err == nil && len(probs) == 0 {
		t.Errorf("kill %d: an interrupted folder verifies as complete", k)
	}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil || p == dir {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		rel = filepath.ToSlash(rel)
		name := d.Name()
		switch {
		case d.IsDir():
			if !slices.Contains(Splits[:], rel) {
				t.Errorf("kill %d: stray folder %s", k, rel)
			}
		case strings.HasSuffix(name, TempSuffix), rel == MarkerName:
		case !strings.Contains(rel, "/") && strings.HasPrefix(name, ".relshard-"):
			// The run's own bookkeeping beside the marker (a journal of finished shards).
		case shardPattern.MatchString(name):
			f, err := os.Open(p)
			if err != nil {
				return err
			}
			defer f.Close()
			fi, _ := f.Stat()
			if _, err := parquet.OpenFile(f, fi.Size()); err != nil {
				t.Errorf("kill %d: %s has its final name but is not a whole Parquet file: %v", k, rel, err)
			}
		default:
			t.Errorf("kill %d: unexpected file %s", k, rel)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return false
}

// testKilledAndResumed kills `relshard export` (the built command) with SIGKILL at
// 20 moments spread over an uninterrupted run's duration (one random moment in each
// twentieth of it, from a fixed seed; a run that ends first re-times the slot), reruns
// the same command after each kill, and
// checks what every kill left (see checkInterrupted), that `relshard verify` passes
// at the end, and that the folder is byte-identical to an uninterrupted run's. The
// corpus is the hostile mixed one. cmd/relshard's TestExportKilledAndResumed does
// fewer kills through the test binary; this one runs the real command.
func testKilledAndResumed(t *testing.T, valid, hostile ingest.Source) {
	if testing.Short() {
		t.Skip("builds relshard and kills it 20 times; skipped with -short")
	}
	t0 := time.Now()
	bin := relshardBinary(t)
	t.Logf("go build took %v", time.Since(t0))
	t0 = time.Now()
	defer func() { t.Logf("kills, reruns and checks took %v", time.Since(t0)) }()
	base := t.TempDir()
	args := func(out string, workers int) []string {
		return []string{"export", "valid=" + valid.Path, "hostile=" + hostile.Path, "--out", out,
			"--max-len", "128", "--transpose", "0,3", "--shard-rows", "20", "--workers", fmt.Sprint(workers)}
	}
	clean := filepath.Join(base, "clean")
	start := time.Now()
	code, err := exitCode(exec.Command(bin, args(clean, 2)...).Run())
	full := time.Since(start)
	if err != nil || code != 3 { // 3: finished, some inputs skipped (cmd/relshard/root.go)
		t.Fatalf("clean run: exit %d, %v", code, err)
	}
	want := treeHashes(t, clean)
	t.Logf("an uninterrupted run takes %v", full)

	const kills = 20
	rng := rand.New(rand.NewPCG(20, 9))
	dir := filepath.Join(base, "killed")
	interrupted, early := 0, 0
	for k := range kills {
		frac := (float64(k) + rng.Float64()) / kills // one moment in each twentieth of a run
		// A run that ends before its moment (the machine got faster) tells how long a
		// run takes now; the slot is tried again at the same fraction of that.
		for attempt := 0; attempt < 3; attempt++ {
			delay := time.Duration(frac * float64(full))
			c := exec.Command(bin, args(dir, 1+k%3)...)
			var stderr strings.Builder
			c.Stderr = &stderr
			started := time.Now()
			if err := c.Start(); err != nil {
				t.Fatal(err)
			}
			done := make(chan error, 1)
			go func() { done <- c.Wait() }()
			var werr error
			select {
			case <-time.After(delay):
				c.Process.Signal(syscall.SIGKILL)
				werr = <-done
			case werr = <-done:
				full = time.Since(started)
				early++
			}
			if code, err := exitCode(werr); err != nil || (code != -1 && code != 3) {
				t.Fatalf("kill %d after %v: exit %d, %v\n%s", k, delay, code, err, stderr.String())
			}
			finished := checkInterrupted(t, k, dir)
			shards, temps := leftovers(dir)
			t.Logf("kill %2d at %4d ms: finished %v, %d shards, %d temporary files", k, delay.Milliseconds(), finished, shards, temps)
			// Nothing is written beside the output folder.
			ents, _ := os.ReadDir(base)
			for _, e := range ents {
				if e.Name() != "clean" && e.Name() != "killed" {
					t.Errorf("kill %d: %s appeared beside the output folder", k, e.Name())
				}
			}
			if !finished {
				interrupted++
				break
			}
		}
	}
	t.Logf("%d of %d kills interrupted a run (%d runs ended before their moment and were retried)", interrupted, kills, early)
	if interrupted < kills/2 {
		t.Errorf("only %d of %d kills interrupted a run; the kills were not spread over it", interrupted, kills)
	}
	if code, err := exitCode(exec.Command(bin, args(dir, 8)...).Run()); err != nil || code != 3 {
		t.Fatalf("resume: exit %d, %v", code, err)
	}
	out, err := exec.Command(bin, "verify", dir).CombinedOutput()
	if code, _ := exitCode(err); code != 0 {
		t.Fatalf("relshard verify: exit %d\n%s", code, out)
	}
	if d := diffTrees(want, treeHashes(t, dir)); len(d) > 0 {
		t.Errorf("resumed after %d kills, files differ from an uninterrupted run: %v", kills, d)
	}
}

// TestResumeAfterKillInMarker: a run killed while writing its marker, the first file
// it writes, leaves only the marker's temporary file; the rerun takes the folder as
// its own and gives an uninterrupted run's bytes (this was refused as a foreign
// folder, so that kill left a folder no rerun could finish).
func TestResumeAfterKillInMarker(t *testing.T) {
	files := synthFiles(12)
	clean := t.TempDir()
	writeSynth(t, clean, 1, files)
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, MarkerName+TempSuffix), []byte(`{"form`), 0o644); err != nil {
		t.Fatal(err)
	}
	writeSynth(t, dir, 2, files)
	if d := diffTrees(treeHashes(t, clean), treeHashes(t, dir)); len(d) > 0 {
		t.Errorf("files differ from an uninterrupted run: %v", d)
	}
	// The marker's temporary file beside anything else is not enough to claim a folder.
	other := t.TempDir()
	os.WriteFile(filepath.Join(other, MarkerName+TempSuffix), []byte(`{"form`), 0o644)
	os.WriteFile(filepath.Join(other, "notes.txt"), []byte("mine"), 0o644)
	before := fileStates(t, other)
	if _, err := writeOutput(context.Background(), synthSpec(other, 1), feedOf(files), noCoverage); !errors.Is(err, ErrFolderInUse) {
		t.Errorf("err %v, want ErrFolderInUse", err)
	}
	sameStates(t, "foreign folder", before, fileStates(t, other))
}

// TestRerunKeepsDatasetUntilMarked: a rerun of the same config must mark the folder
// as its own before it removes the previous manifest; otherwise a kill between the
// two leaves shards with neither a manifest nor a marker, a folder every later run
// refuses as foreign. The kill is simulated by making the marker unwritable (a
// folder in the way of its temporary file): the previous dataset must still verify.
func TestRerunKeepsDatasetUntilMarked(t *testing.T) {
	files := synthFiles(12)
	dir := t.TempDir()
	writeSynth(t, dir, 1, files)
	want := treeHashes(t, dir)
	block := filepath.Join(dir, MarkerName+TempSuffix)
	if err := os.Mkdir(block, 0o755); err != nil {
		t.Fatal(err)
	}
	if _, err := writeOutput(context.Background(), synthSpec(dir, 1), feedOf(files), noCoverage); err == nil {
		t.Fatal("the rerun wrote its marker through a folder")
	}
	os.Remove(block)
	mustVerify(t, dir)
	writeSynth(t, dir, 2, files)
	if d := diffTrees(want, treeHashes(t, dir)); len(d) > 0 {
		t.Errorf("files differ from the first run: %v", d)
	}
}
