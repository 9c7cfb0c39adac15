package relpos

import (
	"bytes"
	"flag"
	"os"
	"path/filepath"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files in testdata")

// golden compares got with testdata/name, or rewrites it under -update.
func golden(t *testing.T, name string, got []byte) {
	t.Helper()
	path := filepath.Join("testdata", name)
	if *update {
		if err := os.WriteFile(path, got, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if !bytes.Equal(got, want) {
		t.Errorf("%s differs from the golden file (go test -update rewrites it):\n%s", name, got)
	}
}

// TestReportGolden pins the text, CSV and JSON layouts of a report of two fixed
// windows with a budget, the joint table and the instrument breakdown.
func TestReportGolden(t *testing.T) {
	cfg := DefaultConfig()
	cfg.Distance = []SchemeSpec{{Scheme: TypeLinear, Width: 1, Clip: clipPtr(3)}}
	cfg.Time = []SchemeSpec{{Scheme: TypeEdges, Edges: []int64{-1000, -100, -10, 0, 1}}}
	cfg.Pitch = []SchemeSpec{{Scheme: TypeLinear, Width: 2, Clip: clipPtr(2)}}
	cfg.Budget, cfg.Joint = 5, true
	c, err := NewCounter(cfg)
	if err != nil {
		t.Fatal(err)
	}
	tally := c.NewTally()
	for _, w := range [][]struct {
		t     int32
		p, in int16
	}{
		{{0, 60, 0}, {0, 64, 0}, {0, -1, -1}, {120, 67, 0}, {120, 36, 128}, {480, -1, 0}, {480, 72, 0}},
		{{0, 38, 128}, {5, 42, 128}, {10, -1, -1}, {1500, 55, 40}},
	} {
		tokens := plainTokens(len(w))
		for i, x := range w {
			tokens[i].Time, tokens[i].Pitch, tokens[i].Inst = x.t, x.p, x.in
		}
		if err := c.Count(tally, tokens); err != nil {
			t.Fatal(err)
		}
	}
	rep := c.ReportDatasets(tally, map[string]*Tally{"demo": tally}, "ms")
	var text, csvOut bytes.Buffer
	if err := rep.WriteText(&text, TextOptions{Buckets: true}); err != nil {
		t.Fatal(err)
	}
	golden(t, "report.txt", text.Bytes())
	if err := rep.WriteCSV(&csvOut); err != nil {
		t.Fatal(err)
	}
	golden(t, "report.csv", csvOut.Bytes())
}
