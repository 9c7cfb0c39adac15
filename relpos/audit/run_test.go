package audit

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
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
