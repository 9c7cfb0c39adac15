package ingest

import (
	"bytes"
	"errors"
	"io/fs"
	"os"
	"path/filepath"
	"testing"
)

// TestReadRegular checks the file reader of folder and file sources against
// os.ReadFile, at sizes around its buffer's edges and with buffers too small, exact
// and roomy, and its errors: missing, too large, not regular.
func TestReadRegular(t *testing.T) {
	dir := t.TempDir()
	tooBig := func() error { return ErrTooLarge }
	for _, size := range []int{0, 1, 511, 512, 513, 4095, 4096, 70000} {
		data := bytes.Repeat([]byte("MThd\x00\x00\x00\x06"), size/8+1)[:size]
		path := filepath.Join(dir, "f.mid")
		if err := os.WriteFile(path, data, 0o644); err != nil {
			t.Fatal(err)
		}
		want, err := os.ReadFile(path) // the standard library's reader as the reference
		if err != nil {
			t.Fatal(err)
		}
		for _, bufCap := range []int{0, 16, size, size + 512, 1 << 17} {
			got, err := readRegular(path, make([]byte, 3, bufCap+3)[:0], 1<<20, tooBig)
			if err != nil || !bytes.Equal(got, want) {
				t.Errorf("size %d, buffer %d: %d bytes, %v; want %d bytes", size, bufCap, len(got), err, len(want))
			}
		}
		// The size limit: at the size the file is read, one byte below it is refused.
		if _, err := readRegular(path, nil, int64(size), tooBig); err != nil {
			t.Errorf("size %d at the limit: %v", size, err)
		}
		if size > 0 {
			if _, err := readRegular(path, nil, int64(size-1), tooBig); !errors.Is(err, ErrTooLarge) {
				t.Errorf("size %d over the limit: %v, want ErrTooLarge", size, err)
			}
		}
	}
	if _, err := readRegular(filepath.Join(dir, "missing.mid"), nil, 1<<20, tooBig); !errors.Is(err, fs.ErrNotExist) {
		t.Errorf("missing file: %v, want fs.ErrNotExist", err)
	}
	if _, err := readRegular(dir, nil, 1<<20, tooBig); err == nil {
		t.Errorf("a folder was read as a file")
	}
}

// BenchmarkReadRegular compares the reader of folder sources with os.ReadFile on the
// openttd-openmsx files, in one run.
func BenchmarkReadRegular(b *testing.B) {
	scanNeedsRefs(b, scanOpenMSXDir, "openttd-openmsx")
	paths, _ := filepath.Glob(filepath.Join(scanOpenMSXDir, "*.mid"))
	var total int64
	for _, p := range paths {
		fi, err := os.Stat(p)
		if err != nil {
			b.Fatal(err)
		}
		total += fi.Size()
	}
	b.Run("os.ReadFile", func(b *testing.B) {
		b.SetBytes(total)
		b.ReportAllocs()
		for b.Loop() {
			for _, p := range paths {
				if _, err := os.ReadFile(p); err != nil {
					b.Fatal(err)
				}
			}
		}
	})
	b.Run("readRegular", func(b *testing.B) {
		b.SetBytes(total)
		b.ReportAllocs()
		var buf []byte
		for b.Loop() {
			for _, p := range paths {
				var err error
				if buf, err = readRegular(p, buf, 64<<20, func() error { return ErrTooLarge }); err != nil {
					b.Fatal(err)
				}
			}
		}
	})
}
