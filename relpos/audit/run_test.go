package audit

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"github.com/relshard/relshard/ingest"
)

func TestRunOpenMSXText(t *testing.T) {
	files := openmsxFiles(t)
	cfg := DefaultConfig()
	rep, err := Run(context.Background(), []ingest.Source{{Path: filepath.Dir(files[0])}}, cfg)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := rep.WriteText(&buf); err != nil {
		t.Fatal(err)
	}
	if os.Getenv("AUDIT_SHOW") != "" {
		t.Log("\n" + buf.String())
	}
}

var (
	demoOnce sync.Once
	demoRep  *Report
	demoErr  error
)

// demoReport audits a small corpus of two datasets made from the openttd-openmsx
// files (split by name: one composer's files and the rest), once per test binary;
// it skips when they are missing.
func demoReport(t *testing.T) *Report {
	t.Helper()
	files := openmsxFiles(t)
	demoOnce.Do(func() { demoRep, demoErr = buildDemoReport(files) })
	if demoErr != nil {
		t.Fatal(demoErr)
	}
	return demoRep
}

func buildDemoReport(files []string) (*Report, error) {
	dir, err := os.MkdirTemp("", "audit-demo")
	if err != nil {
		return nil, err
	}
	defer os.RemoveAll(dir)
	for _, f := range files {
		sub := "straight"
		if strings.Contains(filepath.Base(f), "redfarn") {
			sub = "redfarn"
		}
		if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
			return nil, err
		}
		data, err := os.ReadFile(f)
		if err != nil {
			return nil, err
		}
		if err := os.WriteFile(filepath.Join(dir, sub, filepath.Base(f)), data, 0o644); err != nil {
			return nil, err
		}
	}
	return Run(context.Background(), []ingest.Source{{Path: dir}}, DefaultConfig())
}

// The report is byte-identical for any number of workers.
func TestRunDeterministic(t *testing.T) {
	files := openmsxFiles(t)
	var outs [][]byte
	for _, workers := range []int{1, 3} {
		cfg := DefaultConfig()
		cfg.Workers, cfg.Scan.Workers = workers, workers
		rep, err := Run(context.Background(), []ingest.Source{{Path: filepath.Dir(files[0])}}, cfg)
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := rep.WriteJSON(&buf); err != nil {
			t.Fatal(err)
		}
		if err := rep.WriteText(&buf); err != nil {
			t.Fatal(err)
		}
		outs = append(outs, buf.Bytes())
	}
	if !bytes.Equal(outs[0], outs[1]) {
		t.Error("reports differ between 1 and 3 workers")
	}
}

func TestRunEmptyAndNamed(t *testing.T) {
	dir := t.TempDir()
	rep, err := Run(context.Background(), []ingest.Source{{Path: dir}}, DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	for _, w := range []func() error{func() error { return rep.WriteText(&buf) }, func() error { return rep.WriteJSON(&buf) }, func() error { return rep.WriteHTML(&buf) }} {
		if err := w(); err != nil {
			t.Fatalf("empty report: %v", err)
		}
	}
	if _, err := Run(context.Background(), nil, DefaultConfig()); err == nil {
		t.Error("no sources: no error")
	}
	if _, err := Run(context.Background(), []ingest.Source{{Path: filepath.Join(dir, "missing")}}, DefaultConfig()); err == nil {
		t.Error("missing source: no error")
	}
	bad := DefaultConfig()
	bad.Grid.Tolerance = 0.7
	if _, err := Run(context.Background(), []ingest.Source{{Path: dir}}, bad); err == nil || !strings.Contains(err.Error(), "tolerance") {
		t.Errorf("bad config: %v", err)
	}
}

func TestDatasetOf(t *testing.T) {
	tests := []struct {
		path     string
		byFolder bool
		want     string
	}{
		{"piano/a.mid", true, "piano"},
		{"piano/deep/a.mid", true, "piano"},
		{"a.mid", true, "src"},
		{"piano/a.mid", false, "src"},
	}
	for _, tc := range tests {
		rec := ingest.FileRecord{Dataset: "src", Path: tc.path}
		if got := datasetOf(&rec, tc.byFolder); got != tc.want {
			t.Errorf("datasetOf(%q, %v) = %q, want %q", tc.path, tc.byFolder, got, tc.want)
		}
	}
}
