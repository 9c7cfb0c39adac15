package main

import (
	"bytes"
	"encoding/json"
	"strings"
	"testing"

	"github.com/relshard/relshard/relpos"
)

func runArgs(t *testing.T, args ...string) (code int, out, errOut string) {
	t.Helper()
	var o, e bytes.Buffer
	code = run(args, &streams{In: strings.NewReader(""), Out: &o, Err: &e})
	return code, o.String(), e.String()
}

// TestMemplanHuang: Huang et al. 2018 state 8.5 GB per layer materialized and 4.2 MB
// with skewing for L = 2048, D = 512, 8 heads (1.1 GB and 0.52 MB per head); in
// float32 exactly 8,589,934,592 B, 4,194,304 B, 1,073,741,824 B and 524,288 B.
func TestMemplanHuang(t *testing.T) {
	code, out, errOut := runArgs(t, "memplan", "--len", "2048", "--dim", "512", "--heads", "8", "--dtype", "f32")
	if code != exitOK {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, want := range []string{"8,589,934,592 B", "4,194,304 B", "1,073,741,824 B", "524,288 B"} {
		if !strings.Contains(out, want) {
			t.Errorf("output lacks %q:\n%s", want, out)
		}
	}
	code, out, _ = runArgs(t, "memplan", "--json", "--dtype", "bf16", "--batch", "4")
	var plan relpos.MemPlan
	if code != exitOK || json.Unmarshal([]byte(out), &plan) != nil {
		t.Fatalf("exit %d, json %q", code, out)
	}
	if plan.Methods[0].PerLayer != 2048*2048*512*2 {
		t.Errorf("bf16 materialized = %d", plan.Methods[0].PerLayer)
	}
}

func TestMemplanBadFlags(t *testing.T) {
	for _, args := range [][]string{
		{"memplan", "--dtype", "f64"},
		{"memplan", "--heads", "7"},
		{"memplan", "--len", "0"},
		{"memplan", "extra"},
	} {
		if code, _, errOut := runArgs(t, args...); code != exitUsage || errOut == "" {
			t.Errorf("%v: exit %d, stderr %q; want %d and a message", args, code, errOut, exitUsage)
		}
	}
}
