package main

import (
	"encoding/json"
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
