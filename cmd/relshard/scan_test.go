package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest"
	"github.com/relshard/relshard/ingest/ingesttest"
	"github.com/spf13/pflag"
)

// Fixtures: valid SMF bytes from gomidi's writer (an independent SMF 1.0
// implementation), archives from the standard library's writers, through package
// ingesttest.

// note is a fixture note at velocity 100: its start and duration in ticks, key and
// channel.
func note(start, dur uint32, key, ch uint8) ingesttest.Note {
	return ingesttest.Note{Start: start, Dur: dur, Key: key, Vel: 100, Channel: ch}
}

// runCmd runs the CLI on buffers and returns the exit code and outputs.
func runCmd(t *testing.T, args ...string) (int, string, string) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(args, &streams{In: strings.NewReader(""), Out: &out, Err: &errb})
	return code, out.String(), errb.String()
}

// scanJSON is the part of relshard scan --json these tests read.
type scanJSON struct {
	Files    []fileJSON `json:"files"`
	Datasets []struct {
		Dataset string `json:"dataset"`
		Files   int    `json:"files"`
		OK      int    `json:"ok"`
	} `json:"datasets"`
	Total struct {
		Files      int            `json:"files"`
		OK         int            `json:"ok"`
		Skipped    int            `json:"skipped"`
		Duplicates int            `json:"duplicates"`
		SkippedBy  map[string]int `json:"skipped_by"`
		Hours      float64        `json:"hours"`
	} `json:"total"`
	Error string `json:"error"`
}

// mixedCorpus writes a folder mixing valid, gzip-compressed, zipped, tarred and broken
// files, and returns it with the status of each input file in the stable order.
func mixedCorpus(t *testing.T) (string, []fileJSON) {
	dir := filepath.Join(t.TempDir(), "corpus")
	a := ingesttest.SMF(t, 96, false, []ingesttest.Note{note(0, 96, 60, 0), note(96, 96, 64, 0), note(192, 192, 67, 0)})
	b := ingesttest.SMF(t, 480, false, []ingesttest.Note{note(0, 240, 50, 1), note(480, 240, 52, 1)})
	c := ingesttest.SMF(t, 120, false, []ingesttest.Note{note(0, 60, 36, 9), note(60, 60, 38, 9), note(120, 60, 40, 3)})
	d := ingesttest.SMF(t, 192, false, []ingesttest.Note{note(0, 192, 70, 2)})
	transposed := ingesttest.SMF(t, 96, false, []ingesttest.Note{note(0, 96, 62, 0), note(96, 96, 66, 0), note(192, 192, 69, 0)})
	set := ingesttest.Zip(t,
		ingesttest.ZipEntry{Name: "c.mid", Data: c},
		ingesttest.ZipEntry{Name: "notes.txt", Data: []byte("x")},
		ingesttest.ZipEntry{Name: "copy.mid", Data: a})
	set2 := ingesttest.Tar(t, false,
		ingesttest.TarEntry{Name: "d.mid", Data: d},
		ingesttest.TarEntry{Name: "../escape.mid", Data: d},
		ingesttest.TarEntry{Name: "t.mid", Data: transposed})
	ingesttest.WriteFiles(t, dir, map[string][]byte{
		"a.mid":           a,
		"b.mid.gz":        ingesttest.Gzip(t, b),
		"broken.mid":      a[:20],
		"magic.midi":      []byte("this is not MIDI at all"),
		"readme.md":       []byte("ignored in folders"),
		"set.zip":         set,
		"more/set2.tar":   set2,
		"more/z.MID":      b,
		"more/bad.mid.gz": a,
	})
	want := []fileJSON{
		{"corpus", "a.mid", "ok", "", "", ""},
		{"corpus", "b.mid.gz", "ok", "", "", ""},
		{"corpus", "broken.mid", "skipped", "*", "", ""},
		{"corpus", "magic.midi", "skipped", "*", "", ""},
		{"corpus", "more/bad.mid.gz", "skipped", "*", "", ""},
		{"corpus", "more/set2.tar/../escape.mid", "skipped", "*", "", ""},
		{"corpus", "more/set2.tar/d.mid", "ok", "", "", ""},
		{"corpus", "more/set2.tar/t.mid", "duplicate", "transposed duplicate of corpus/a.mid", "corpus/a.mid", "transposed"},
		{"corpus", "more/z.MID", "duplicate", "exact duplicate of corpus/b.mid.gz", "corpus/b.mid.gz", "exact"},
		{"corpus", "set.zip/c.mid", "ok", "", "", ""},
		{"corpus", "set.zip/copy.mid", "duplicate", "exact duplicate of corpus/a.mid", "corpus/a.mid", "exact"},
		{"corpus", "set.zip/notes.txt", "skipped", "*", "", ""},
	}
	return dir, want
}

// TestScanCommandMixed: every input file is accounted for with its status, and the exit
// status is 3 (some files skipped), as documented in exitCodesHelp.
func TestScanCommandMixed(t *testing.T) {
	dir, want := mixedCorpus(t)
	code, out, errOut := runCmd(t, "scan", "--json", dir)
	if code != exitSkipped {
		t.Errorf("exit %d, want %d; stderr %s", code, exitSkipped, errOut)
	}
	if !strings.Contains(errOut, "4 of 12 input files skipped") {
		t.Errorf("stderr %q", errOut)
	}
	var got scanJSON
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatalf("output is not JSON: %v\n%s", err, out)
	}
	for i := range got.Files {
		if i < len(want) && want[i].Reason == "*" && got.Files[i].Reason != "" {
			got.Files[i].Reason = "*"
		}
	}
	if !reflect.DeepEqual(got.Files, want) {
		t.Errorf("files:\n got %+v\nwant %+v", got.Files, want)
	}
	if got.Total.Files != 12 || got.Total.OK != 4 || got.Total.Skipped != 5 || got.Total.Duplicates != 3 {
		t.Errorf("total %+v", got.Total)
	}
	if got.Total.SkippedBy["not MIDI"] != 1 || got.Total.SkippedBy["not gzip data"] != 1 {
		t.Errorf("skipped_by %v", got.Total.SkippedBy)
	}
	// The same with a named dataset, and the text table.
	code, out, _ = runCmd(t, "scan", "mine="+dir)
	if code != exitSkipped || !strings.Contains(out, "mine ") || !strings.Contains(out, "skipped by reason:") {
		t.Errorf("text: exit %d\n%s", code, out)
	}
	lines := strings.Split(out, "\n")
	if len(lines) < 3 || !strings.HasPrefix(lines[0], "dataset  files  ok  skipped") || !strings.HasPrefix(lines[2], "total    12") {
		t.Errorf("table:\n%s", out)
	}
}

func TestScanCommandExitCodes(t *testing.T) {
	good := filepath.Join(t.TempDir(), "good")
	ingesttest.WriteFiles(t, good, map[string][]byte{"a.mid": ingesttest.SMF(t, 96, false, []ingesttest.Note{note(0, 96, 60, 0)})})
	dir, _ := mixedCorpus(t)
	tests := []struct {
		name string
		args []string
		want int
	}{
		{"all read", []string{"scan", good}, exitOK},
		{"all read, json", []string{"scan", "--json", good}, exitOK},
		{"some skipped", []string{"scan", dir}, exitSkipped},
		{"strict", []string{"scan", "--strict", dir}, exitFailed},
		{"missing source", []string{"scan", filepath.Join(good, "nope")}, exitFailed},
		{"no source", []string{"scan"}, exitUsage},
		{"bad flag", []string{"scan", "--workers", "x", good}, exitUsage},
		{"bad size", []string{"scan", "--max-file-size", "lots", good}, exitUsage},
		{"no tar buffer", []string{"scan", "--max-tar-buffer", "0", good}, exitUsage},
		{"bad dataset", []string{"scan", "--dataset", good}, exitUsage},
		{"filtered", []string{"scan", "--min-notes", "2", good}, exitSkipped},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			code, _, errOut := runCmd(t, tt.args...)
			if code != tt.want {
				t.Errorf("exit %d, want %d; stderr %s", code, tt.want, errOut)
			}
		})
	}
}

// TestScanLimitFlags: the archive caps reach the scan's limits, and their defaults
// are the library's.
func TestScanLimitFlags(t *testing.T) {
	for _, tc := range []struct {
		name string
		args []string
		want ingest.Limits
	}{
		{"defaults", nil, ingest.DefaultLimits()},
		{"set", []string{"--max-entries", "7", "--max-entry-size", "1MiB", "--max-archive-size", "2GiB", "--max-tar-buffer", "16MiB"},
			ingest.Limits{MaxEntries: 7, MaxEntrySize: 1 << 20, MaxTotalSize: 2 << 30, MaxBuffered: 16 << 20}},
	} {
		var o scanOptions
		fs := pflag.NewFlagSet("scan", pflag.ContinueOnError)
		o.AddFlags(fs)
		if err := fs.Parse(tc.args); err != nil {
			t.Fatal(err)
		}
		o.sources = []string{"x"}
		if err := o.Validate(); err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if got := o.ingestOptions().Limits; got != tc.want {
			t.Errorf("%s: limits %+v, want %+v", tc.name, got, tc.want)
		}
	}
}

// TestScanCommandStrictJSON: a failed run still prints valid JSON, with the error.
func TestScanCommandStrictJSON(t *testing.T) {
	dir, _ := mixedCorpus(t)
	code, out, _ := runCmd(t, "scan", "--json", "--strict", dir)
	var got scanJSON
	if err := json.Unmarshal([]byte(out), &got); err != nil || code != exitFailed || !strings.Contains(got.Error, "broken.mid") {
		t.Errorf("exit %d, err %v, error field %q", code, err, got.Error)
	}
}

// TestScanCommandDeterministic: byte-identical output for --workers 1, 2 and 8.
func TestScanCommandDeterministic(t *testing.T) {
	dir, _ := mixedCorpus(t)
	var first string
	for _, w := range []string{"1", "2", "8"} {
		_, out, _ := runCmd(t, "scan", "--json", "--workers", w, dir, "again="+filepath.Join(dir, "set.zip"))
		if first == "" {
			first = out
		} else if out != first {
			t.Errorf("--workers %s output differs", w)
		}
	}
}

func TestParseSize(t *testing.T) {
	tests := []struct {
		in      string
		want    int64
		wantErr bool
	}{
		{"0", 0, false}, {"123", 123, false}, {"64MiB", 64 << 20, false}, {"1 GiB", 1 << 30, false},
		{"5k", 5 << 10, false}, {"7MB", 7 << 20, false}, {"12B", 12, false},
		{"", 0, true}, {"-1", 0, true}, {"MiB", 0, true}, {"1.5MiB", 0, true}, {"99999999999GiB", 0, true},
	}
	for _, tt := range tests {
		got, err := parseSize(tt.in)
		if got != tt.want || (err != nil) != tt.wantErr {
			t.Errorf("parseSize(%q) = %d, %v; want %d, err %v", tt.in, got, err, tt.want, tt.wantErr)
		}
	}
}

// openmsx holds Debian's openttd-openmsx MIDI files (freely licensed game music made by
// others), installed by .ci/run.
const openmsx = "/usr/share/games/openttd/baseset/openmsx"

// needRef skips a test whose outside reference is absent, or fails it when
// RELSHARD_REQUIRE_REFS=1.
func needRef(t *testing.T, path, what string) {
	t.Helper()
	if _, err := os.Stat(path); err != nil {
		if os.Getenv("RELSHARD_REQUIRE_REFS") == "1" {
			t.Fatalf("%s required at %s (RELSHARD_REQUIRE_REFS=1): %v", what, path, err)
		}
		t.Skipf("%s not installed at %s (apt-get install openttd-openmsx midicsv)", what, path)
	}
}

// TestScanCommandOpenMSX: relshard scan over Debian's openttd-openmsx folder reports
// every file ok and exits 0.
func TestScanCommandOpenMSX(t *testing.T) {
	needRef(t, openmsx, "openttd-openmsx")
	code, out, errOut := runCmd(t, "scan", "--json", openmsx)
	if code != exitOK {
		t.Errorf("exit %d: %s", code, errOut)
	}
	var got scanJSON
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	mids, _ := filepath.Glob(filepath.Join(openmsx, "*.mid"))
	if len(got.Files) != len(mids) || len(mids) == 0 {
		t.Fatalf("%d files reported for %d .mid files", len(got.Files), len(mids))
	}
	for _, f := range got.Files {
		if f.Status != "ok" {
			t.Errorf("%s: %s %s", f.Path, f.Status, f.Reason)
		}
	}
}

// TestScanCommandProgress: the progress bar goes to stderr only when it is a terminal,
// and never changes stdout.
func TestScanCommandProgress(t *testing.T) {
	dir, _ := mixedCorpus(t)
	var outs []string
	for _, term := range []bool{false, true} {
		var out, errb bytes.Buffer
		code := run([]string{"scan", "--json", dir}, &streams{In: strings.NewReader(""), Out: &out, Err: &errb, ErrIsTerminal: term})
		if code != exitSkipped {
			t.Errorf("terminal %v: exit %d", term, code)
		}
		hasBar := strings.Contains(errb.String(), "scanning")
		if hasBar != term {
			t.Errorf("terminal %v: progress shown %v: %q", term, hasBar, errb.String())
		}
		outs = append(outs, out.String())
	}
	if outs[0] != outs[1] {
		t.Errorf("stdout differs with a progress bar")
	}
}
