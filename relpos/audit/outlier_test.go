package audit

import (
	"context"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/relshard/relshard/ingest"
)

func TestCutOff(t *testing.T) {
	o := OutlierConfig{MinJSD: 0.15, MADs: 4}
	tests := []struct {
		name string
		v    []float64
		want float64
	}{
		// Median 0.1, median absolute deviation 0: the floor MinJSD holds.
		{"floor", []float64{0.1, 0.1, 0.1, 0.2, 0.9}, 0.15},
		// Median 0.3, MAD 0.1, scaled by 1.4826 (the normal-consistency constant of the
		// MAD, common practice): 0.3 + 4 × 1.4826 × 0.1.
		{"spread", []float64{0.2, 0.3, 0.4}, 0.3 + 4*1.4826*0.1},
		{"too few", []float64{0.5, 0.6}, 0.15},
	}
	for _, tc := range tests {
		if got := cutOff(tc.v, o); math.Abs(got-tc.want) > 1e-12 {
			t.Errorf("%s: cutOff = %v, want %v", tc.name, got, tc.want)
		}
	}
}

func TestLeaveOneOut(t *testing.T) {
	// A file holding all of one bin, against the rest holding another: disjoint, ln 2.
	if got := leaveOneOut([]int64{4, 6}, []int64{4, 0}); math.Abs(got-math.Ln2) > 1e-12 {
		t.Errorf("leaveOneOut = %v, want ln 2", got)
	}
	// A file alone in its dataset has nothing to be compared with.
	if got := leaveOneOut([]int64{4, 6}, []int64{4, 6}); !math.IsNaN(got) {
		t.Errorf("leaveOneOut of the whole = %v, want NaN", got)
	}
}

// On the openttd-openmsx files, the files that midicsv's ticks show unquantized are
// listed as outliers for their grid when a clear majority of the others is on a grid,
// and no file on a grid is listed for its grid.
func TestOutliersOpenMSX(t *testing.T) {
	files := openmsxFiles(t)
	needMidicsv(t)
	unquantized := map[string]bool{}
	for _, f := range files {
		ppq, ticks := midicsvOnsets(t, f)
		if expectedGrid(ppq, ticks) == 0 {
			unquantized[filepath.Base(f)] = true
		}
	}
	cfg := DefaultConfig()
	rep, err := Run(context.Background(), []ingest.Source{{Path: filepath.Dir(files[0]), Dataset: "openmsx"}}, cfg)
	if err != nil {
		t.Fatal(err)
	}
	gridReason := map[string]string{}
	for _, o := range rep.Outliers {
		for _, why := range o.Reasons {
			if strings.Contains(why, "grid") || strings.Contains(why, "unquantized") {
				gridReason[o.Path] = why
			}
		}
	}
	n := len(files)
	for name := range unquantized {
		quantizedOthers := n - len(unquantized)
		if float64(quantizedOthers) < cfg.Outlier.GridMajority*float64(n-1) {
			continue
		}
		if why := gridReason[name]; !strings.HasPrefix(why, "unquantized") {
			t.Errorf("%s: unquantized by midicsv's ticks, but its grid reason is %q", name, why)
		}
	}
	for name, why := range gridReason {
		if !unquantized[name] {
			t.Errorf("%s: on a grid by midicsv's ticks, but listed: %q", name, why)
		}
	}
	if len(unquantized) == 0 {
		t.Error("no unquantized file: the check is too weak")
	}
}
