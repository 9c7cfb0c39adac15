package sampledata_test

import (
	"bytes"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/sampledata"
)

// midicsvPath is where Debian's midicsv package installs the converter.
const midicsvPath = "/usr/bin/midicsv"

func requireTool(t *testing.T, path string) string {
	t.Helper()
	p, err := exec.LookPath(path)
	if err != nil {
		if os.Getenv("RELSHARD_REQUIRE_REFS") == "1" {
			t.Fatalf("%s not found and RELSHARD_REQUIRE_REFS=1: install Debian's midicsv package", path)
		}
		t.Skipf("%s not found: install Debian's midicsv package to run this check", path)
	}
	return p
}

// TestMidicsvReadsSample converts a small sample (every kind, SMPTE and format 2
// included) with midicsv, an independent SMF reader, and checks that it reads the
// header we wrote and as many notes as ingest pairs.
func TestMidicsvReadsSample(t *testing.T) {
	tool := requireTool(t, midicsvPath)
	dir := t.TempDir()
	files := mustCollect(t, sampledata.Config{Files: 40, Seed: 11})
	for _, f := range files {
		p := filepath.Join(dir, filepath.Base(f.Path))
		if err := os.WriteFile(p, f.Data, 0o644); err != nil {
			t.Fatal(err)
		}
		var stdout, stderr bytes.Buffer
		cmd := exec.Command(tool, p)
		cmd.Stdout, cmd.Stderr = &stdout, &stderr
		if err := cmd.Run(); err != nil || stderr.Len() != 0 {
			t.Errorf("%s: midicsv: %v: %s", f.Path, err, stderr.String())
			continue
		}
		ps, err := ingest.Parse(f.Path, f.Data, ingest.ParseOptions{})
		if err != nil {
			t.Fatalf("%s: %v", f.Path, err)
		}
		// midicsv's CSV: "0, 0, Header, format, nTracks, division" and a
		// "Note_on_c, channel, note, velocity" line per note-on (velocity 0 is a note-off).
		var header []string
		noteOns := 0
		for _, line := range strings.Split(stdout.String(), "\n") {
			fields := strings.Split(line, ", ")
			if len(fields) >= 6 && fields[2] == "Header" {
				header = fields[3:6]
			}
			if len(fields) == 6 && fields[2] == "Note_on_c" && fields[5] != "0" {
				noteOns++
			}
		}
		notes := 0
		for _, p := range ps {
			notes += len(p.Notes)
		}
		p0 := ps[0]
		division := strconv.Itoa(p0.TicksPerQuarter)
		if p0.SMPTEFPS != 0 {
			fps := int(p0.SMPTEFPS) // 29.97 truncates to the drop-frame code 29 (SMF 1.0)
			division = strconv.Itoa(-256*fps + p0.TicksPerFrame)
		}
		if header == nil || header[0] != strconv.Itoa(p0.Format) || header[2] != division {
			t.Errorf("%s: midicsv header %v, want format %d division %s", f.Path, header, p0.Format, division)
		}
		if noteOns != notes {
			t.Errorf("%s: midicsv counts %d note-ons, ingest pairs %d notes", f.Path, noteOns, notes)
		}
	}
}
