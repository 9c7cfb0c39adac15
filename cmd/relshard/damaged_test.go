package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/relshard/relshard/sampledata"
)

// TestScanDamagedSet runs `relshard scan --json` over the embedded demo corpus with
// its damaged set beside it: each damaged file is skipped with the error its case
// documents, every other file is read, and the exit status says some were skipped.
func TestScanDamagedSet(t *testing.T) {
	root := t.TempDir()
	want := map[string]sampledata.DamagedCase{}
	files := append(sampledata.Demo(), sampledata.DemoDamaged()...)
	for _, f := range files {
		p := filepath.Join(root, filepath.FromSlash(f.Path))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, f.Data, 0o644); err != nil {
			t.Fatal(err)
		}
		if c, ok := f.Damaged(); ok {
			_, rest, _ := strings.Cut(f.Path, "/")
			want[rest] = c
		}
	}
	salvage := filepath.Join(root, sampledata.DatasetSalvage)
	args := []string{"scan", "--json", salvage}
	for _, ds := range []string{sampledata.DatasetRecitals, sampledata.DatasetBand, sampledata.DatasetStudio} {
		args = append(args, filepath.Join(root, ds))
	}
	code, out, errOut := runArgs(t, args...)
	if code != exitSkipped {
		t.Fatalf("exit %d, want %d (some skipped): %s", code, exitSkipped, errOut)
	}
	var got struct {
		Files []fileJSON `json:"files"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	if len(got.Files) != len(files) {
		t.Fatalf("%d file records, want one per input file, %d", len(got.Files), len(files))
	}
	seen := 0
	for _, f := range got.Files {
		c, damaged := want[f.Path]
		switch {
		case damaged && f.Dataset == sampledata.DatasetSalvage:
			seen++
			if f.Status != "skipped" || !strings.Contains(f.Reason, c.WantText) {
				t.Errorf("%s (%s): %s %q, want skipped with %q", f.Path, c.Name, f.Status, f.Reason, c.WantText)
			}
		case f.Status != "ok" && f.Status != "duplicate":
			t.Errorf("%s/%s: %s %q, want it read", f.Dataset, f.Path, f.Status, f.Reason)
		}
	}
	if seen != len(want) {
		t.Errorf("%d damaged files reported, want %d", seen, len(want))
	}
}
