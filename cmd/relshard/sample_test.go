package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/relshard/relshard/sampledata"
)

func TestSampleCommand(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "corpus")
	code, out, errOut := runSampleCmd(t, "sample", "--out", dir, "--files", "20", "--damaged", "15", "--seed", "4", "--workers", "2")
	if code != exitOK {
		t.Fatalf("exit %d, stderr %q", code, errOut)
	}
	for _, want := range []string{"wrote 35 files (15 damaged", "velmora-recitals", "tollemere-band", "kestrel-lane",
		"tollemere-salvage  15", "damaged 15"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	// The files are those of the library, byte for byte.
	err := sampledata.Generate(context.Background(), sampledata.Config{Files: 20, Damaged: 15, Seed: 4}, func(f sampledata.File) error {
		got, err := os.ReadFile(filepath.Join(dir, filepath.FromSlash(f.Path)))
		if err != nil || !bytes.Equal(got, f.Data) {
			t.Errorf("%s: read %d bytes (%v), want the %d generated", f.Path, len(got), err, len(f.Data))
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}

	code, _, errOut = runSampleCmd(t, "sample", "--out", dir, "--files", "3")
	if code != exitFailed || !strings.Contains(errOut, "is not empty (use --force") {
		t.Errorf("non-empty folder: exit %d, stderr %q; want %d and a hint to --force", code, errOut, exitFailed)
	}
	if code, _, errOut = runSampleCmd(t, "sample", "--out", dir, "--files", "3", "--force"); code != exitOK {
		t.Errorf("--force: exit %d, stderr %q", code, errOut)
	}
}

func TestSampleFlags(t *testing.T) {
	tests := []struct {
		name string
		args []string
		want string
	}{
		{"no out", []string{"sample", "--files", "3"}, "--out DIR is required"},
		{"negative files", []string{"sample", "--out", "x", "--files", "-1"}, "files -1"},
		{"negative damaged", []string{"sample", "--out", "x", "--damaged", "-1"}, "damaged -1"},
		{"bad seed", []string{"sample", "--out", "x", "--seed", "abc"}, "invalid argument"},
		{"argument", []string{"sample", "--out", "x", "extra"}, "unknown command"},
	}
	for _, tc := range tests {
		code, _, errOut := runSampleCmd(t, tc.args...)
		if code != exitUsage || !strings.Contains(errOut, tc.want) {
			t.Errorf("%s: exit %d, stderr %q; want %d and %q", tc.name, code, errOut, exitUsage, tc.want)
		}
	}
}

// runSampleCmd runs the CLI on buffers and returns the exit code and outputs.
func runSampleCmd(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, &streams{In: strings.NewReader(""), Out: &out, Err: &errb})
	return code, out.String(), errb.String()
}
