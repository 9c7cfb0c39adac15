package audit

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
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

// demoReport audits a small corpus of two datasets made in the test: the
// openttd-openmsx files when present, split by name into two datasets, else skip.
func demoReport(t *testing.T) *Report {
	t.Helper()
	files := openmsxFiles(t)
	dir := t.TempDir()
	for _, f := range files {
		sub := "straight"
		if strings.Contains(filepath.Base(f), "redfarn") {
			sub = "redfarn"
		}
		if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
			t.Fatal(err)
		}
		data, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, sub, filepath.Base(f)), data, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	rep, err := Run(context.Background(), []ingest.Source{{Path: dir}}, DefaultConfig())
	if err != nil {
		t.Fatal(err)
	}
	return rep
}
