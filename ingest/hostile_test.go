package ingest

import (
	"archive/tar"
	"archive/zip"
	"bytes"
	"context"
	"errors"
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
	"reflect"
	"runtime"
	"runtime/metrics"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/relshard/relshard/ingest/mutate"
	"github.com/relshard/relshard/sampledata"
)

// hostileBases are the valid files the hostile corpus is made from: the first twelve
// files of a generated corpus (one of each kind first, so formats 0, 1 and 2 and
// SMPTE division are among them) and the SMF 1.0 example files of testdata.
func hostileBases(t testing.TB) []mutate.Base {
	t.Helper()
	var bases []mutate.Base
	err := sampledata.Generate(context.Background(), sampledata.Config{Files: 12, Seed: 21, Workers: 1}, func(f sampledata.File) error {
		bases = append(bases, mutate.Base{Name: filepath.Base(f.Path), Data: f.Data})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"spec-format0.mid", "spec-format1.mid", "riff.rmi"} {
		data, err := os.ReadFile(filepath.Join("testdata", name))
		if err != nil {
			t.Fatal(err)
		}
		bases = append(bases, mutate.Base{Name: name, Data: data})
	}
	return bases
}

// heapPeak samples the bytes of live and not yet swept heap objects every
// millisecond until stop is called, and returns the largest value seen.
func heapPeak() (stop func() uint64) {
	const name = "/memory/classes/heap/objects:bytes"
	var peak atomic.Uint64
	done := make(chan struct{})
	var wg sync.WaitGroup
	wg.Add(1)
	go func() {
		defer wg.Done()
		s := []metrics.Sample{{Name: name}}
		tick := time.NewTicker(time.Millisecond)
		defer tick.Stop()
		for {
			metrics.Read(s)
			if v := s[0].Value.Uint64(); v > peak.Load() {
				peak.Store(v)
			}
			select {
			case <-done:
				return
			case <-tick.C:
			}
		}
	}()
	return func() uint64 {
		close(done)
		wg.Wait()
		return peak.Load()
	}
}

func totalAlloc() uint64 {
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	return ms.TotalAlloc
}

// TestHostileCorpusParse feeds every damaged file to Parse on its own: no panic, a
// positional error naming the file with an offset inside it, and an allocation that
// is a bounded multiple of the input (the rule: never allocate from a length before
// checking it against what remains; a 0x0FFFFFFF meta length must not cost 256 MiB).
func TestHostileCorpusParse(t *testing.T) {
	cases := mutate.Corpus(1, hostileBases(t))
	if len(cases) < 500 {
		t.Fatalf("%d hostile files, want at least 500", len(cases))
	}
	var failed, worst int
	var worstRatio float64
	for i, c := range cases {
		before := totalAlloc()
		_, err := Parse(c.Name, c.Data, DefaultParseOptions())
		alloc := totalAlloc() - before
		// Parse's doc promises about 24 bytes per input byte at most; 32x plus a
		// fixed 256 KiB for the pooled parser's first growth leaves room.
		if limit := 32*uint64(len(c.Data)) + 256<<10; alloc > limit {
			t.Errorf("%s (%s): allocated %d bytes for %d input bytes", c.Name, c.Detail, alloc, len(c.Data))
		}
		if r := float64(alloc) / float64(len(c.Data)+1); r > worstRatio {
			worstRatio, worst = r, i
		}
		if err == nil {
			continue
		}
		failed++
		var pe *ParseError
		if !errors.As(err, &pe) {
			t.Errorf("%s (%s): error %v is not a *ParseError", c.Name, c.Detail, err)
			continue
		}
		if pe.File != c.Name || !strings.HasPrefix(err.Error(), c.Name+": ") {
			t.Errorf("%s (%s): error %q does not name the file first", c.Name, c.Detail, err)
		}
		if pe.Offset > int64(len(c.Data)) {
			t.Errorf("%s (%s): offset %d past the end (%d bytes)", c.Name, c.Detail, pe.Offset, len(c.Data))
		}
	}
	t.Logf("%d hostile files, %d refused; worst allocation %.1f bytes per input byte (%s)",
		len(cases), failed, worstRatio, cases[worst].Name)
	// Bit flips in note data and a few cuts of trailing bytes can leave a file valid;
	// nearly all of them must be refused.
	if failed < len(cases)*3/4 {
		t.Errorf("only %d of %d hostile files refused", failed, len(cases))
	}
}

// TestHostileCorpusScan scans a folder of the valid bases, the damaged files, and
// gzip-compressed and damaged gzip copies: Scan never fails, every file gets exactly
// one record, every skip has a reason that names the file, the valid files are ok,
// memory stays bounded (total allocation a small multiple of the input bytes, the
// heap's peak within a fixed margin of what it held before), and no input changes.
func TestHostileCorpusScan(t *testing.T) {
	bases := hostileBases(t)
	cases := mutate.Corpus(2, bases)
	dir := filepath.Join(t.TempDir(), "hostile")
	files := map[string][]byte{}
	for _, b := range bases {
		files["valid/"+b.Name] = b.Data
	}
	for i, c := range cases {
		name := c.Name
		if i%10 == 0 {
			// Through the gzip path too: hostile content inside good gzip.
			name, c.Data = name+".gz", fxGzip(t, c.Data)
		}
		files["damaged/"+name] = c.Data
	}
	for i, b := range bases[:4] {
		gz := fxGzip(t, b.Data)
		files[fmt.Sprintf("gzip/cut-%d.mid.gz", i)] = gz[:len(gz)/2]
		flipped := slices.Clone(gz)
		flipped[len(flipped)-6] ^= 0x10 // inside the CRC-32 trailer (RFC 1952, section 2.3.1)
		files[fmt.Sprintf("gzip/crc-%d.mid.gz", i)] = flipped
	}
	fxWrite(t, dir, files)
	var inputBytes uint64
	for _, d := range files {
		inputBytes += uint64(len(d))
	}

	inputs := treeState(t, dir)
	defer func() {
		if after := treeState(t, dir); !reflect.DeepEqual(after, inputs) {
			t.Errorf("the scans changed their inputs")
		}
	}()
	for _, workers := range []int{1, 2} {
		opts := DefaultOptions()
		opts.Workers = workers
		runtime.GC()
		var base runtime.MemStats
		runtime.ReadMemStats(&base)
		stop := heapPeak()
		got := map[string]int{}
		var recs []FileRecord
		err := Scan(context.Background(), []Source{{Path: dir}}, opts, func(r *Result) error {
			got[r.Record.Path]++
			recs = append(recs, r.Record)
			return nil
		})
		peak := stop()
		var after runtime.MemStats
		runtime.ReadMemStats(&after)
		if err != nil {
			t.Fatalf("workers %d: Scan: %v", workers, err)
		}
		for name := range files {
			if got[name] != 1 {
				t.Errorf("workers %d: %s has %d records, want 1", workers, name, got[name])
			}
		}
		if len(recs) != len(files) {
			t.Errorf("workers %d: %d records for %d files", workers, len(recs), len(files))
		}
		for _, r := range recs {
			switch {
			case r.Status == StatusSkipped && !strings.Contains(r.Reason, r.Path):
				t.Errorf("%s: reason %q does not name the file", r.Path, r.Reason)
			case strings.HasPrefix(r.Path, "valid/") && r.Status == StatusSkipped:
				t.Errorf("%s: a valid file skipped: %s", r.Path, r.Reason)
			case strings.HasPrefix(r.Path, "gzip/") && r.Status != StatusSkipped:
				t.Errorf("%s: damaged gzip %s", r.Path, r.Status)
			}
		}
		// Every file is read once and parsed into notes, so a few times the input
		// bytes is expected; a reader that trusted a declared length would allocate
		// 256 MiB for a single 0x0FFFFFFF meta length.
		alloc := after.TotalAlloc - base.TotalAlloc
		if limit := 40*inputBytes + 16<<20; alloc > limit {
			t.Errorf("workers %d: allocated %d bytes for %d input bytes", workers, alloc, inputBytes)
		}
		grow := int64(peak) - int64(base.HeapAlloc)
		if grow > 64<<20 {
			t.Errorf("workers %d: heap peaked %d MiB above its start", workers, grow>>20)
		}
		t.Logf("workers %d: %d files, %d input bytes; allocated %.1fx the input, heap peak +%d KiB",
			workers, len(files), inputBytes, float64(alloc)/float64(inputBytes), grow>>10)
	}
}

// TestHostileCorpusSameAcrossWorkers: the records of the hostile corpus do not depend
// on the number of workers.
func TestHostileCorpusSameAcrossWorkers(t *testing.T) {
	cases := mutate.Corpus(3, hostileBases(t))
	dir := t.TempDir()
	files := map[string][]byte{}
	for _, c := range cases {
		files[c.Name] = c.Data
	}
	fxWrite(t, dir, files)
	var ref []FileRecord
	for _, w := range []int{1, 3} {
		opts := DefaultOptions()
		opts.Workers = w
		var recs []FileRecord
		for _, r := range scanAll(t, []Source{{Path: dir}}, opts) {
			recs = append(recs, r.Record)
		}
		if ref == nil {
			ref = recs
		} else if !reflect.DeepEqual(recs, ref) {
			t.Errorf("workers %d: records differ from workers 1", w)
		}
	}
}

// treeState lists every file and folder under dir with its SHA-256, size, mode and
// modification time.
func treeState(t testing.TB, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	err := filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		fi, err := d.Info()
		if err != nil {
			return err
		}
		sum := ""
		if fi.Mode().IsRegular() {
			data, err := os.ReadFile(p)
			if err != nil {
				return err
			}
			sum = fileSHA256(data)
		}
		out[p] = fmt.Sprintf("%s %d %v %d", sum, fi.Size(), fi.Mode(), fi.ModTime().UnixNano())
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// fxZipDeflated writes a zip of one deflated entry whose header claims the given
// uncompressed size; CreateRaw takes the sizes as given.
func fxZipDeflated(t testing.TB, name string, data []byte, claimed uint64) []byte {
	t.Helper()
	var comp bytes.Buffer
	{
		zw := zip.NewWriter(&comp)
		w, err := zw.Create("x")
		if err != nil {
			t.Fatal(err)
		}
		w.Write(data)
		zw.Close()
	}
	// Take the deflated bytes of that entry and re-wrap them with a lying header.
	zr, err := zip.NewReader(bytes.NewReader(comp.Bytes()), int64(comp.Len()))
	if err != nil {
		t.Fatal(err)
	}
	off, err := zr.File[0].DataOffset()
	if err != nil {
		t.Fatal(err)
	}
	raw := comp.Bytes()[off : off+int64(zr.File[0].CompressedSize64)]
	var buf bytes.Buffer
	zw := zip.NewWriter(&buf)
	w, err := zw.CreateRaw(&zip.FileHeader{Name: name, Method: zip.Deflate, CRC32: zr.File[0].CRC32,
		CompressedSize64: uint64(len(raw)), UncompressedSize64: claimed})
	if err != nil {
		t.Fatal(err)
	}
	w.Write(raw)
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// TestHostileArchiveBombs adds to TestHostileArchives what it leaves out: compressed
// bombs (deflate and gzip, 16 MiB of zeros in about 16 KiB), headers that lie about
// sizes in both directions, a tar entry that declares more bytes than the archive
// holds, and for each the allocation: refusing one must cost a small multiple of the
// per-file cap, never what a header declares or what a bomb inflates to.
func TestHostileArchiveBombs(t *testing.T) {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	zeros := make([]byte, 16<<20)
	gzBomb := fxGzip(t, zeros)
	const maxFile = 1 << 20
	const declared = 30 << 20 // what the lying headers claim: under the entry cap
	lim := Limits{MaxEntries: 16, MaxEntrySize: 32 << 20, MaxTotalSize: 40 << 20, MaxBuffered: 1 << 20}
	// A tar header declaring a .mid.gz entry of 30 MiB (a .gz name is held to the entry
	// cap, not to MaxFileSize, before decompression) followed by only 100 bytes.
	var short bytes.Buffer
	{
		tw := tar.NewWriter(&short)
		tw.WriteHeader(&tar.Header{Name: "short.mid.gz", Typeflag: tar.TypeReg, Mode: 0o644, Size: declared})
		tw.Write(make([]byte, 100))
		// Not closed: the stream ends inside the entry.
	}
	tests := []struct {
		name string
		data []byte
		want []outcome
	}{
		{"bomb.mid.gz", gzBomb, []outcome{{"bomb.mid.gz", StatusSkipped, ErrTooLarge.Error(), "", ""}}},
		{"deflate-bomb.zip", fxZip(t, fxZipEntry{Name: "zeros.mid", Data: zeros}, fxZipEntry{Name: "ok.mid", Data: tune}), []outcome{
			{"deflate-bomb.zip/ok.mid", StatusOK, "", "", ""},
			{"deflate-bomb.zip/zeros.mid", StatusSkipped, ErrTooLarge.Error(), "", ""}, // declared 16 MiB, over MaxFileSize
		}},
		{"understated.zip", fxZipDeflated(t, "zeros.mid", zeros, 1000), []outcome{
			{"understated.zip/zeros.mid", StatusSkipped, ErrBadArchive.Error(), "", ""}, // inflates past its declared size
		}},
		{"overstated.zip", fxZipDeflated(t, "tune.mid.gz", fxGzip(t, tune), declared), []outcome{
			{"overstated.zip/tune.mid.gz", StatusSkipped, ErrBadArchive.Error(), "", ""}, // ends before its declared size
		}},
		{"gzbomb-in.zip", fxZip(t, fxZipEntry{Name: "bomb.mid.gz", Data: gzBomb}), []outcome{
			{"gzbomb-in.zip/bomb.mid.gz", StatusSkipped, ErrTooLarge.Error(), "", ""},
		}},
		{"gzbomb-in.tgz", fxTar(t, true, fxTarEntry{Name: "bomb.mid.gz", Data: gzBomb}, fxTarEntry{Name: "ok.mid", Data: tune}), []outcome{
			{"gzbomb-in.tgz/bomb.mid.gz", StatusSkipped, ErrTooLarge.Error(), "", ""},
			{"gzbomb-in.tgz/ok.mid", StatusOK, "", "", ""},
		}},
		{"zeros.tgz", fxTar(t, true, fxTarEntry{Name: "zeros.mid", Data: zeros}, fxTarEntry{Name: "ok.mid", Data: tune}), []outcome{
			{"zeros.tgz/ok.mid", StatusOK, "", "", ""},
			{"zeros.tgz/zeros.mid", StatusSkipped, ErrTooLarge.Error(), "", ""},
		}},
		{"zeros3.tgz", fxTar(t, true, fxTarEntry{Name: "a.mid", Data: zeros}, fxTarEntry{Name: "b.mid", Data: zeros}, fxTarEntry{Name: "c.mid", Data: zeros}), []outcome{
			{"zeros3.tgz", StatusSkipped, ErrArchiveTooLarge.Error(), "", ""}, // 48 MiB, over the 40 MiB total
		}},
		{"short.tar", short.Bytes(), []outcome{
			{"short.tar/short.mid.gz", StatusSkipped, ErrBadArchive.Error(), "", ""},
			{"short.tar", StatusSkipped, ErrBadArchive.Error(), "", ""},
		}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			root := t.TempDir()
			dir := filepath.Join(root, "in")
			fxWrite(t, dir, map[string][]byte{tt.name: tt.data})
			before := treeState(t, root)
			opts := DefaultOptions()
			opts.Workers = 2
			opts.MaxFileSize = maxFile
			opts.Limits = lim
			runtime.GC()
			a0 := totalAlloc()
			got := scanAll(t, []Source{{Path: dir}}, opts)
			alloc := totalAlloc() - a0
			if g := outcomes(got); !reflect.DeepEqual(g, tt.want) {
				t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(tt.want))
			}
			for _, r := range got {
				if r.Record.Status == StatusSkipped && !strings.Contains(r.Record.Reason, r.Record.Path) {
					t.Errorf("reason %q does not name %q", r.Record.Reason, r.Record.Path)
				}
			}
			// A gunzip buffer doubles its way up to the 1 MiB cap (about 2 MiB in all);
			// the rest is the archive readers' own state and the input's bytes.
			if limit := uint64(6*maxFile + 64*len(tt.data)); alloc > limit {
				t.Errorf("allocated %d KiB for %d input bytes, more than %d KiB", alloc>>10, len(tt.data), limit>>10)
			}
			if after := treeState(t, root); !reflect.DeepEqual(after, before) {
				t.Errorf("the scan changed the folder:\nbefore %v\nafter  %v", before, after)
			}
			t.Logf("%d input bytes, allocated %d KiB", len(tt.data), alloc>>10)
		})
	}
}

// TestHostileArchiveNames: hostile archives inside a folder source (not given as
// sources themselves) get the same treatment, and an entry whose name passes through
// a symlink entry of the same archive is read from the archive's own bytes, never
// through the file system. Nothing appears anywhere: not next to the archives, not in
// their parent, not in the working directory.
func TestHostileArchiveNames(t *testing.T) {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	other := fxSMF(t, 480, false, fxOther(480))
	root := t.TempDir()
	dir := filepath.Join(root, "in")
	fxWrite(t, dir, map[string][]byte{
		"a.zip": fxZip(t,
			fxZipEntry{Name: "../../escape.mid", Data: tune},
			fxZipEntry{Name: "/tmp/abs.mid", Data: tune},
			fxZipEntry{Name: "evil", Data: []byte("/"), Mode: os.ModeSymlink | 0o777},
			fxZipEntry{Name: "evil/etc.mid", Data: other},
		),
		"b.tar": fxTar(t, false,
			fxTarEntry{Name: "../escape.mid", Data: tune},
			fxTarEntry{Name: "/abs.mid", Data: tune},
			fxTarEntry{Name: "lnk", Type: tar.TypeSymlink, Link: "/"},
			fxTarEntry{Name: "lnk/etc.mid", Data: other},
			fxTarEntry{Name: "hard.mid", Type: tar.TypeLink, Link: "../../etc/passwd"},
			fxTarEntry{Name: "dir/../../x.mid", Data: tune},
		),
	})
	cwd, err := os.Getwd()
	if err != nil {
		t.Fatal(err)
	}
	listing := func(d string) []string {
		ents, _ := os.ReadDir(d)
		var out []string
		for _, e := range ents {
			out = append(out, e.Name())
		}
		return out
	}
	before, beforeCwd := treeState(t, root), listing(cwd)
	got := scanAll(t, []Source{{Path: dir}}, DefaultOptions())
	want := []outcome{
		{"a.zip/../../escape.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
		{"a.zip//tmp/abs.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
		{"a.zip/evil", StatusSkipped, ErrLinkEntry.Error(), "", ""},
		{"a.zip/evil/etc.mid", StatusOK, "", "", ""},
		{"b.tar/../escape.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
		{"b.tar//abs.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
		{"b.tar/dir/../../x.mid", StatusSkipped, ErrUnsafePath.Error(), "", ""},
		{"b.tar/hard.mid", StatusSkipped, ErrLinkEntry.Error(), "", ""},
		{"b.tar/lnk", StatusSkipped, ErrLinkEntry.Error(), "", ""},
		{"b.tar/lnk/etc.mid", StatusDuplicate, "", "in/a.zip/evil/etc.mid", DupExact},
	}
	if g := outcomes(got); !reflect.DeepEqual(g, want) {
		t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
	}
	for _, r := range got {
		if r.Record.Path == "a.zip/evil/etc.mid" && r.Record.SHA256 != fileSHA256(other) {
			t.Errorf("the entry behind a symlink entry was not read from the archive")
		}
	}
	if after := treeState(t, root); !reflect.DeepEqual(after, before) {
		t.Errorf("the scan changed the folder:\nbefore %v\nafter  %v", before, after)
	}
	if after := listing(cwd); !slices.Equal(after, beforeCwd) {
		t.Errorf("the working directory changed: %v -> %v", beforeCwd, after)
	}
}

// TestArchiveLimitsExact: each cap accepts an archive exactly at it and refuses one
// just over it, for zip and tar alike, so the limits are what they are configured to.
func TestArchiveLimitsExact(t *testing.T) {
	tune := fxSMF(t, 96, false, fxTune(96, 0))
	n := len(tune)
	entries := func(k int) ([]fxZipEntry, []fxTarEntry) {
		var z []fxZipEntry
		var tr []fxTarEntry
		for i := range k {
			d := slices.Clone(tune)
			d[len(d)-5] = byte(i) // distinct bytes, so no entry is an exact duplicate
			z = append(z, fxZipEntry{Name: fmt.Sprintf("%02d.mid", i), Data: d})
			tr = append(tr, fxTarEntry{Name: fmt.Sprintf("%02d.mid", i), Data: d})
		}
		return z, tr
	}
	tests := []struct {
		name    string
		entries int
		lim     Limits
		refused error // nil: every entry gets its own record
	}{
		{"entries at cap", 5, Limits{MaxEntries: 5}, nil},
		{"entries over cap", 6, Limits{MaxEntries: 5}, ErrTooManyEntries},
		{"total at cap", 3, Limits{MaxTotalSize: int64(3 * n)}, nil},
		{"total over cap", 3, Limits{MaxTotalSize: int64(3*n - 1)}, ErrArchiveTooLarge},
		{"entry size at cap", 2, Limits{MaxEntrySize: int64(n)}, nil},
	}
	for _, tt := range tests {
		z, tr := entries(tt.entries)
		for _, kind := range []string{"zip", "tar"} {
			t.Run(tt.name+" "+kind, func(t *testing.T) {
				dir := t.TempDir()
				p := filepath.Join(dir, "a."+kind)
				data := fxTar(t, false, tr...)
				if kind == "zip" {
					data = fxZip(t, z...)
				}
				if err := os.WriteFile(p, data, 0o644); err != nil {
					t.Fatal(err)
				}
				opts := DefaultOptions()
				opts.Limits = tt.lim
				got := scanAll(t, []Source{{Path: p}}, opts)
				if tt.refused != nil {
					if len(got) != 1 || got[0].Record.Path != "" || !errors.Is(got[0].Err, tt.refused) {
						t.Errorf("got %s, want the archive refused with %v", fmtOutcomes(outcomes(got)), tt.refused)
					}
					return
				}
				if len(got) != tt.entries {
					t.Fatalf("%d records, want %d", len(got), tt.entries)
				}
				for _, r := range got {
					if r.Record.Status == StatusSkipped { // some are musical duplicates of the first
						t.Errorf("%s: %s %s", r.Record.Path, r.Record.Status, r.Record.Reason)
					}
				}
			})
		}
	}
	// One byte over the entry cap: that entry alone is skipped.
	t.Run("entry size over cap", func(t *testing.T) {
		z, _ := entries(2)
		z[1].Data = append(z[1].Data, 0)
		p := filepath.Join(t.TempDir(), "a.zip")
		os.WriteFile(p, fxZip(t, z...), 0o644)
		opts := DefaultOptions()
		opts.Limits = Limits{MaxEntrySize: int64(n)}
		got := scanAll(t, []Source{{Path: p}}, opts)
		want := []outcome{{"00.mid", StatusOK, "", "", ""}, {"01.mid", StatusSkipped, ErrEntryTooLarge.Error(), "", ""}}
		if g := outcomes(got); !reflect.DeepEqual(g, want) {
			t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
		}
	})
}

// TestListSourceRepeatedPath: a path list naming the same path twice (a concatenated
// list, say) gives that file one record; two records of one path made an export's
// manifest list it twice, which its verify rejects.
func TestListSourceRepeatedPath(t *testing.T) {
	dir := t.TempDir()
	fxWrite(t, dir, map[string][]byte{
		"a.mid":     fxSMF(t, 96, false, fxTune(96, 0)),
		"files.lst": []byte("a.mid\nb.mid\na.mid\n  a.mid\n"),
	})
	got := scanAll(t, []Source{{Path: filepath.Join(dir, "files.lst")}}, DefaultOptions())
	want := []outcome{
		{"a.mid", StatusOK, "", "", ""},
		{"b.mid", StatusSkipped, "no such file or directory", "", ""},
	}
	if g := outcomes(got); !reflect.DeepEqual(g, want) {
		t.Errorf("got %s\nwant %s", fmtOutcomes(g), fmtOutcomes(want))
	}
}
