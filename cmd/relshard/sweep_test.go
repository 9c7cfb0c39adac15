package main

import (
	"encoding/json"
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
