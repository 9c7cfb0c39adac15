package ingest

import (
	"errors"
	"path/filepath"
	"syscall"
	"testing"
)

// TestReadRegularFIFO checks that a FIFO is refused at once, not read after waiting
// for a writer.
func TestReadRegularFIFO(t *testing.T) {
	fifo := filepath.Join(t.TempDir(), "pipe.mid")
	if err := syscall.Mkfifo(fifo, 0o644); err != nil {
		t.Skip("no FIFO:", err)
	}
	if _, err := readRegular(fifo, nil, 1<<20, func() error { return ErrTooLarge }); !errors.Is(err, ErrSpecialEntry) {
		t.Errorf("FIFO: %v, want ErrSpecialEntry", err)
	}
}
