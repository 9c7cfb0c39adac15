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
