package main

import (
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/relshard/relshard/relpos"
)

// TestBucketsJSON: the printed table of the log scheme holds the bucket values of
// Raffel et al. 2020 (32 buckets, max 128, bidirectional): −12 → 9, +16 → 26.
func TestBucketsJSON(t *testing.T) {
	code, out, errOut := runArgs(t, "buckets", "--json", "--kind", "distance", "--pairs", "bidirectional",
		"--distance", "log:buckets=32,max=128")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var tables []relpos.Table
	if err := json.Unmarshal([]byte(out), &tables); err != nil {
		t.Fatal(err)
	}
	if len(tables) != 1 || tables[0].Kind != "distance" || tables[0].Buckets != 32 {
		t.Fatalf("tables = %+v", tables)
	}
	bucketOf := func(d int64) int {
		for _, r := range tables[0].Ranges {
			if (r.From == nil || *r.From <= d) && (r.To == nil || d <= *r.To) {
				return r.Bucket
			}
		}
		return -1
	}
	if got := [2]int{bucketOf(-12), bucketOf(16)}; got != [2]int{9, 26} {
		t.Errorf("buckets of −12, +16 = %v, want [9 26]", got)
	}
}

func TestBucketsText(t *testing.T) {
	code, out, _ := runArgs(t, "buckets", "--distance", "linear:width=1,clip=2", "--kind", "distance")
	want := "distance linear:width=1,clip=2: 5 buckets, offset = key - query\n" +
		"from  to    bucket  saturated\n" +
		"-inf  -3    0       low\n" +
		"-2    -2    0       -\n"
	if code != exitOK || !strings.HasPrefix(out, want) {
		t.Errorf("exit %d, output\n%s\nwant prefix\n%s", code, out, want)
	}
	if code, _, _ := runArgs(t, "buckets", "--time", "log:buckets=3"); code != exitUsage {
		t.Errorf("bad spec: exit %d, want %d", code, exitUsage)
	}
}

func TestBucketsConfigFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "c.yaml")
	if err := os.WriteFile(path, []byte("tokens:\n  encoding: grid\nbuckets:\n  time: [\"linear:width=12,clip=4\"]\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, errOut := runArgs(t, "buckets", "--config", path, "--kind", "time", "--json")
	var tables []relpos.Table
	if code != exitOK || json.Unmarshal([]byte(out), &tables) != nil {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	if len(tables) != 1 || tables[0].Name != "linear:width=12,clip=4" || tables[0].Unit != "grid steps" || tables[0].Buckets != 9 {
		t.Errorf("tables = %+v", tables)
	}
	// The flag wins over the file.
	code, out, _ = runArgs(t, "buckets", "--config", path, "--kind", "time", "--json", "--time", "log:buckets=16,max=96")
	tables = nil
	if code != exitOK || json.Unmarshal([]byte(out), &tables) != nil || len(tables) != 1 || tables[0].Scheme != "log" {
		t.Errorf("flag did not win: exit %d, %+v", code, tables)
	}
}
