package ingest

import (
	"archive/tar"
	"archive/zip"
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// TestRepeatedEntryNames checks that an archive holding two entries of one name gives
// each its own record: the first is read, the later one is skipped with
// ErrRepeatedPath under a name of its own, so no two records share a path.
func TestRepeatedEntryNames(t *testing.T) {
	smfA := specFormat0() // SMF 1.0 example file, format-0 rendition
	smfB := append([]byte(nil), smfA...)
	dir := t.TempDir()

	var zb bytes.Buffer
	zw := zip.NewWriter(&zb)
	for _, data := range [][]byte{smfA, smfB} {
		w, err := zw.Create("same.mid")
		if err != nil {
			t.Fatal(err)
		}
		w.Write(data)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	var tb bytes.Buffer
	tw := tar.NewWriter(&tb)
	for _, data := range [][]byte{smfA, smfB} {
		tw.WriteHeader(&tar.Header{Name: "same.mid", Mode: 0o644, Size: int64(len(data)), Typeflag: tar.TypeReg})
		tw.Write(data)
	}
	if err := tw.Close(); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		data []byte
	}{{"set.zip", zb.Bytes()}, {"set.tar", tb.Bytes()}} {
		t.Run(tc.name, func(t *testing.T) {
			p := filepath.Join(dir, tc.name)
			if err := os.WriteFile(p, tc.data, 0o644); err != nil {
				t.Fatal(err)
			}
			var got []FileRecord
			var errs []error
			err := Scan(context.Background(), []Source{{Path: p}}, DefaultOptions(), func(r *Result) error {
				got = append(got, r.Record)
				errs = append(errs, r.Err)
				return nil
			})
			if err != nil {
				t.Fatal(err)
			}
			if len(got) != 2 {
				t.Fatalf("%d records, want 2: %+v", len(got), got)
			}
			if got[0].Path != "same.mid" || got[0].Status != StatusOK {
				t.Errorf("first record %q %s, want same.mid ok", got[0].Path, got[0].Status)
			}
			if got[1].Path != "same.mid (repeat 2)" || got[1].Status != StatusSkipped || !errors.Is(errs[1], ErrRepeatedPath) {
				t.Errorf("second record %q %s (%v), want \"same.mid (repeat 2)\" skipped with ErrRepeatedPath", got[1].Path, got[1].Status, errs[1])
			}
		})
	}
}

// TestRepeatedPathAcrossSources checks two sources of one dataset name that hold the
// same relative path: the later file keeps a record of its own, skipped with
// ErrRepeatedPath, so every input is accounted for under a distinct name.
func TestRepeatedPathAcrossSources(t *testing.T) {
	root := t.TempDir()
	for _, sub := range []string{"one/songs", "two/songs"} {
		if err := os.MkdirAll(filepath.Join(root, sub), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(root, sub, "a.mid"), specFormat0(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	type rec struct {
		dataset, path string
		status        Status
		repeated      bool
	}
	var got []rec
	err := Scan(context.Background(), []Source{{Path: filepath.Join(root, "one/songs")}, {Path: filepath.Join(root, "two/songs")}},
		DefaultOptions(), func(r *Result) error {
			got = append(got, rec{r.Record.Dataset, r.Record.Path, r.Record.Status, errors.Is(r.Err, ErrRepeatedPath)})
			return nil
		})
	if err != nil {
		t.Fatal(err)
	}
	want := []rec{{"songs", "a.mid", StatusOK, false}, {"songs", "a.mid (repeat 2)", StatusSkipped, true}}
	if !slices.Equal(got, want) {
		t.Errorf("records %+v, want %+v", got, want)
	}
}
