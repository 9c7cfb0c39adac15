package sampledata_test

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/sampledata"
)

// sentinels maps the names DamagedCase.WantErr uses to package ingest's errors.
var sentinels = map[string]error{
	"ErrTruncated":         ingest.ErrTruncated,
	"ErrBadMagic":          ingest.ErrBadMagic,
	"ErrEmpty":             ingest.ErrEmpty,
	"ErrChunkLength":       ingest.ErrChunkLength,
	"ErrBadVLQ":            ingest.ErrBadVLQ,
	"ErrRunningStatus":     ingest.ErrRunningStatus,
	"ErrUnterminatedSysEx": ingest.ErrUnterminatedSysEx,
	"ErrNoTracks":          ingest.ErrNoTracks,
	"ErrZeroDivision":      ingest.ErrZeroDivision,
	"ErrBadHeader":         ingest.ErrBadHeader,
	"ErrNotGzip":           ingest.ErrNotGzip,
}

// TestSampleParsesWithIngest reads every file of the sample with the project's reader:
// no error, no warning, the header's division and format, one piece per track for
// format 2.
func TestSampleParsesWithIngest(t *testing.T) {
	for _, f := range sample(t) {
		ps, err := ingest.Parse(f.Path, f.Data, ingest.DefaultParseOptions())
		if err != nil {
			t.Errorf("%s: %v", f.Path, err)
			continue
		}
		notes := 0
		for _, p := range ps {
			notes += len(p.Notes)
			if len(p.Warnings) != 0 {
				t.Errorf("%s: piece %d warnings %v", f.Path, p.Index, p.Warnings)
			}
		}
		if notes == 0 {
			t.Errorf("%s: no notes", f.Path)
		}
		p := ps[0]
		_, _, isSMPTE := smpteHeader(f.Data)
		if isSMPTE != (p.SMPTEFPS != 0) || (f.Kind == sampledata.KindPatternBank) != (p.Format == 2) {
			t.Errorf("%s (%s): format %d, SMPTE fps %v", f.Path, f.Kind, p.Format, p.SMPTEFPS)
		}
		if p.Format == 2 && len(ps) < 3 {
			t.Errorf("%s: format 2 with %d pieces, want one per pattern (3 to 6)", f.Path, len(ps))
		}
	}
}

func TestDamagedParse(t *testing.T) {
	files := append(sampledata.DemoDamaged(), mustCollect(t, sampledata.Config{Files: 3, Damaged: 30, Seed: 99})[3:]...)
	for _, f := range files {
		c, ok := f.Damaged()
		if !ok {
			t.Fatalf("%s: kind %s is not a damaged case", f.Path, f.Kind)
		}
		if c.Ext == ".mid.gz" {
			continue // decompression belongs to reading a source; see TestDamagedScan
		}
		want, ok := sentinels[c.WantErr]
		if !ok {
			t.Fatalf("case %s: unknown sentinel %s", c.Name, c.WantErr)
		}
		_, err := ingest.Parse(f.Path, f.Data, ingest.DefaultParseOptions())
		var pe *ingest.ParseError
		if !errors.Is(err, want) || !strings.Contains(err.Error(), c.WantText) || !errors.As(err, &pe) || pe.File != f.Path || pe.Track != c.WantTrack {
			t.Errorf("%s: Parse error %v, want %s containing %q naming the file and track %d", f.Path, err, c.WantErr, c.WantText, c.WantTrack)
		}
	}
}

// TestDamagedScan scans the demo corpus with the damaged set beside it: each damaged
// file is skipped with its documented error, every other file is read, and the
// near-duplicates are found as the kind of duplicate they are.
func TestDamagedScan(t *testing.T) {
	dir := t.TempDir()
	files := append(sampledata.Demo(), sampledata.DemoDamaged()...)
	byPath := map[string]sampledata.File{}
	for _, f := range files {
		p := filepath.Join(dir, filepath.FromSlash(f.Path))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, f.Data, 0o644); err != nil {
			t.Fatal(err)
		}
		byPath[f.Path] = f
	}
	seen := 0
	err := ingest.Scan(context.Background(), []ingest.Source{{Path: dir, Dataset: "demo"}}, ingest.DefaultOptions(), func(r *ingest.Result) error {
		f, ok := byPath[r.Record.Path]
		if !ok {
			t.Errorf("scan reports %s, which was not written", r.Record.Path)
			return nil
		}
		seen++
		rec := r.Record
		if c, ok := f.Damaged(); ok {
			if rec.Status != ingest.StatusSkipped || !errors.Is(r.Err, sentinels[c.WantErr]) || !strings.Contains(rec.Reason, c.WantText) {
				t.Errorf("%s: status %s reason %q err %v, want skipped with %s containing %q", rec.Path, rec.Status, rec.Reason, r.Err, c.WantErr, c.WantText)
			}
			return nil
		}
		want, wantKind := ingest.StatusOK, ingest.DuplicateKind("")
		switch f.Kind {
		case sampledata.KindTransposed:
			want, wantKind = ingest.StatusDuplicate, ingest.DupTransposed
		case sampledata.KindResaved:
			want, wantKind = ingest.StatusDuplicate, ingest.DupMusical
		}
		if rec.Status != want || rec.DuplicateKind != wantKind {
			t.Errorf("%s (%s): status %s %s (reason %q, of %s), want %s %s", rec.Path, f.Kind, rec.Status, rec.DuplicateKind, rec.Reason, rec.DuplicateOf, want, wantKind)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if seen != len(files) {
		t.Errorf("scan reported %d files, want %d", seen, len(files))
	}
}
