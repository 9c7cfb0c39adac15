package main

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestDemo runs the main job on the embedded corpus twice into the same folder: the
// second run replaces the first and gives byte-identical shards and manifest.
func TestDemo(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "demo")
	var out, errb bytes.Buffer
	s := &streams{In: strings.NewReader(""), Out: &out, Err: &errb}
	if code := run([]string{"demo", dir}, s); code != exitOK {
		t.Fatalf("demo exit %d, stderr:\n%s\nstdout:\n%s", code, errb.String(), out.String())
	}
	for _, want := range []string{"damaged set: all", "coverage counted exactly the", "every row and checksum matches the manifest", "relshard demo: done"} {
		if !strings.Contains(out.String(), want) {
			t.Errorf("demo output lacks %q:\n%s", want, out.String())
		}
	}
	manifest := filepath.Join(dir, "shards", "manifest.json")
	first, err := os.ReadFile(manifest)
	if err != nil {
		t.Fatal(err)
	}
	html, err := os.ReadFile(filepath.Join(dir, "audit.html"))
	if err != nil || !bytes.Contains(html, []byte("<svg")) {
		t.Fatalf("audit.html missing or without charts (err %v)", err)
	}

	out.Reset()
	if code := run([]string{"demo", "--workers", "1", dir}, s); code != exitOK {
		t.Fatalf("second demo exit %d: %s", code, errb.String())
	}
	second, err := os.ReadFile(manifest)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(first, second) {
		t.Error("manifest differs between a demo with all workers and one with --workers 1")
	}
}

// TestDemoRefusesForeignFolder checks that the demo never writes into a non-empty
// folder that is not an earlier demo's.
func TestDemoRefusesForeignFolder(t *testing.T) {
	dir := t.TempDir()
	keep := filepath.Join(dir, "thesis.txt")
	if err := os.WriteFile(keep, []byte("mine"), 0o644); err != nil {
		t.Fatal(err)
	}
	var out, errb bytes.Buffer
	code := run([]string{"demo", dir}, &streams{In: strings.NewReader(""), Out: &out, Err: &errb})
	if code != exitFailed {
		t.Fatalf("exit %d, want %d", code, exitFailed)
	}
	if !strings.Contains(errb.String(), "not an earlier demo's folder") {
		t.Errorf("stderr %q lacks the reason", errb.String())
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 1 {
		t.Errorf("folder now holds %d entries, want only the user's file", len(entries))
	}
}
