package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"github.com/relshard/relshard/relpos"
)

// A sweep setting gives the same coverage as the coverage command with that scheme.
func TestSweepMatchesCoverage(t *testing.T) {
	corpus := demoCorpus(t)
	code, out, errOut := runArgs(t, "sweep", corpus, "--json", "--max-len", "256", "--budget", "40",
		"--time-widths", "10,50", "--time-clips", "8,32", "--time-log", "32:4000")
	if code != exitSkipped {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var sw sweepJSON
	if err := json.Unmarshal([]byte(out), &sw); err != nil {
		t.Fatal(err)
	}
	var row *relpos.SweepRow
	for i, r := range sw.Settings {
		if r.Rows > 40 {
			t.Errorf("%s has %d rows, over the budget", r.Scheme, r.Rows)
		}
		if r.Kind == "time" && r.Scheme == "linear:width=50,clip=32" {
			row = &sw.Settings[i]
		}
	}
	if row == nil || row.Rows != 33 {
		t.Fatalf("no time linear:width=50,clip=32 row with 33 rows in %+v", sw.Settings)
	}
	code, out, _ = runArgs(t, "coverage", corpus, "--json", "--max-len", "256", "--time", "linear:width=50,clip=32")
	var rep relpos.Report
	if code != exitSkipped || json.Unmarshal([]byte(out), &rep) != nil {
		t.Fatalf("coverage exit %d", code)
	}
	s := rep.Time.Schemes[0]
	if s.Pairs != row.Pairs || s.InsideShare != row.Inside || s.Effective != row.Effective || rep.Windows != sw.Windows {
		t.Errorf("sweep %+v, coverage pairs %d inside %v effective %v", *row, s.Pairs, s.InsideShare, s.Effective)
	}
	if code, _, _ := runArgs(t, "sweep", corpus, "--time-log", "32"); code != exitUsage {
		t.Errorf("bad --time-log: exit %d", code)
	}
}

// The config file's sweep section gives the grid, with the same keys as the flags;
// a flag that is set wins over the file for its own list only.
func TestSweepGridFromConfig(t *testing.T) {
	corpus := demoCorpus(t)
	cfg := filepath.Join(t.TempDir(), "sweep.yaml")
	if err := os.WriteFile(cfg, []byte("sweep:\n  time:\n    widths: [20]\n    clips: [5]\n    log: []\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	timeSchemes := func(args ...string) []string {
		t.Helper()
		code, out, errOut := runArgs(t, append([]string{"sweep", corpus, "--json", "--max-len", "256", "--config", cfg}, args...)...)
		if code != exitSkipped {
			t.Fatalf("exit %d: %s", code, errOut)
		}
		var sw sweepJSON
		if err := json.Unmarshal([]byte(out), &sw); err != nil {
			t.Fatal(err)
		}
		var got []string
		for _, r := range sw.Settings {
			if r.Kind == "time" {
				got = append(got, r.Scheme)
			}
		}
		return got
	}
	if got, want := timeSchemes(), []string{"linear:width=20,clip=5"}; !slices.Equal(got, want) {
		t.Errorf("time settings from the file %v, want %v", got, want)
	}
	if got, want := timeSchemes("--time-clips", "7"), []string{"linear:width=20,clip=7"}; !slices.Equal(got, want) {
		t.Errorf("time settings with --time-clips 7 %v, want %v", got, want)
	}
}
