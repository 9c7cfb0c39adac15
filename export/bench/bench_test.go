package bench

import (
	"context"
	"testing"
)

// TestRunSmall runs the suite on a small generated corpus without the child-process
// memory measures: every measure is present, and the exact counter agrees with the
// naive pair loop (the reference) on a real 2,048-token window.
func TestRunSmall(t *testing.T) {
	if testing.Short() {
		t.Skip("generates and exports a corpus")
	}
	cfg := SmokeConfig()
	cfg.Files = 60
	cfg.TempDir = t.TempDir()
	rep, err := Run(context.Background(), cfg, nil)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Files != 60 {
		t.Errorf("measured %d files, want 60", rep.Files)
	}
	want := map[string]bool{"read bytes": false, "gomidi smf.ReadFrom": false, "ingest stage": false, "full export": false,
		"naive ÷ fast counting (L=2048, 64 buckets)": false, "export speed-up, 2 workers ÷ 1": false}
	for _, m := range rep.Measures {
		if _, ok := want[m.Name]; ok {
			want[m.Name] = true
		}
		if m.Name == "naive ÷ fast counting (L=2048, 64 buckets)" && m.Detail != "identical counts" {
			t.Errorf("fast and naive counts differ: %s", m.Detail)
		}
		if m.Target != "" && m.Status != "not enforced" {
			t.Errorf("%s: status %q in a smoke run", m.Name, m.Status)
		}
	}
	for name, seen := range want {
		if !seen {
			t.Errorf("no measure %q", name)
		}
	}
	if rep.Failed() {
		t.Error("a smoke run reports a failed target")
	}
}
