package main

import (
	"encoding/csv"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/relshard/relshard/export"
	"github.com/relshard/relshard/relpos"
)

const coverageYAML = `tokens:
  max_len: 512
  min_len: 16
buckets:
  pairs: causal
  distance: ["linear:width=1,clip=64", {scheme: log, buckets: 32, max: 128}]
  time: ["log:buckets=32,max=4096", "linear:width=100,clip=20"]
  pitch: ["edges:-24,-12,-5,0,1,6,13,25"]
  budget: 33
`

// TestCoverageMatchesExport: coverage must count exactly the windows export writes for
// the same config; the manifest's coverage summary and coverage --json must agree on
// every scheme.
func TestCoverageMatchesExport(t *testing.T) {
	corpus := demoCorpus(t)
	dir := t.TempDir()
	cfgPath := filepath.Join(dir, "relshard.yaml")
	if err := os.WriteFile(cfgPath, []byte(coverageYAML), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	if code, _, errOut := runArgs(t, "export", corpus, "--out", out, "--config", cfgPath, "--workers", "2"); code != exitOK && code != exitSkipped {
		t.Fatalf("export: exit %d: %s", code, errOut)
	}
	data, err := os.ReadFile(filepath.Join(out, "manifest.json"))
	if err != nil {
		t.Fatal(err)
	}
	var m struct {
		Coverage export.CoverageSummary `json:"coverage"`
	}
	if err := json.Unmarshal(data, &m); err != nil {
		t.Fatal(err)
	}
	code, stdout, errOut := runArgs(t, "coverage", corpus, "--config", cfgPath, "--json", "--workers", "2")
	if code != exitSkipped || !strings.Contains(errOut, "skipped") {
		t.Fatalf("coverage: exit %d (want %d: the demo corpus has damaged files), stderr %q", code, exitSkipped, errOut)
	}
	var rep relpos.Report
	if err := json.Unmarshal([]byte(stdout), &rep); err != nil {
		t.Fatal(err)
	}
	if rep.Windows == 0 || rep.Windows != m.Coverage.Windows || rep.Tokens != m.Coverage.Tokens || rep.NoPitch != m.Coverage.NoPitch {
		t.Fatalf("windows, tokens, no pitch: coverage %d %d %d, export %d %d %d", rep.Windows, rep.Tokens, rep.NoPitch,
			m.Coverage.Windows, m.Coverage.Tokens, m.Coverage.NoPitch)
	}
	var got []export.SchemeCoverage
	for _, k := range relpos.Kinds {
		for _, s := range rep.Kind(k).Schemes {
			cov := 1.0
			if s.Pairs > 0 {
				cov = float64(s.Inside) / float64(s.Pairs)
			}
			got = append(got, export.SchemeCoverage{Kind: k.String(), Name: s.Name, Buckets: len(s.Buckets), Pairs: s.Pairs,
				Inside: s.Inside, SatLow: s.SatLow, SatHigh: s.SatHigh, Covered: cov})
		}
	}
	if len(got) != 5 || len(got) != len(m.Coverage.Schemes) {
		t.Fatalf("%d schemes in coverage, %d in the manifest", len(got), len(m.Coverage.Schemes))
	}
	for i := range got {
		if got[i] != m.Coverage.Schemes[i] {
			t.Errorf("scheme %d: coverage %+v, export %+v", i, got[i], m.Coverage.Schemes[i])
		}
	}
	// The JSON keys other tools read.
	var raw map[string]map[string]any
	json.Unmarshal([]byte(stdout), &raw)
	for _, k := range []string{"distance", "time", "pitch"} {
		schemes, _ := raw[k]["schemes"].([]any)
		if len(schemes) == 0 {
			t.Fatalf("%s: no schemes in %v", k, raw[k])
		}
		s := schemes[0].(map[string]any)
		for _, key := range []string{"pairs", "inside", "buckets"} {
			if _, ok := s[key]; !ok {
				t.Errorf("%s scheme lacks %q", k, key)
			}
		}
	}
}

func TestCoverageFlagsWinAndFormats(t *testing.T) {
	corpus := demoCorpus(t)
	dir := t.TempDir()
	cfgPath := filepath.Join(dir, "relshard.yaml")
	if err := os.WriteFile(cfgPath, []byte(coverageYAML), 0o644); err != nil {
		t.Fatal(err)
	}
	code, stdout, _ := runArgs(t, "coverage", corpus, "--config", cfgPath, "--json", "--pairs", "bidirectional",
		"--pitch", "linear:width=2,clip=5", "--sample", "0.5", "--seed", "3")
	var rep relpos.Report
	if code != exitSkipped || json.Unmarshal([]byte(stdout), &rep) != nil {
		t.Fatalf("exit %d, output %.200q", code, stdout)
	}
	if rep.Pairs != relpos.Bidirectional || len(rep.Pitch.Schemes) != 1 || rep.Pitch.Schemes[0].Name != "linear:width=2,clip=5" ||
		len(rep.Time.Schemes) != 2 || !rep.Sampled || rep.Time.Schemes[0].InsideCI == nil {
		t.Errorf("flags did not win over the config: pairs %s, pitch %+v, sampled %v", rep.Pairs, rep.Pitch.Schemes, rep.Sampled)
	}
	// buckets.sample in the file: sampled coverage (export refuses the key, coverage takes it).
	sampled := filepath.Join(dir, "sampled.yaml")
	if err := os.WriteFile(sampled, []byte(coverageYAML+"  sample: 0.2\n  seed: 5\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	code, stdout, _ = runArgs(t, "coverage", corpus, "--config", sampled, "--json")
	rep = relpos.Report{}
	if code != exitSkipped || json.Unmarshal([]byte(stdout), &rep) != nil || !rep.Sampled || rep.Sample != 0.2 {
		t.Errorf("config sample: exit %d, sampled %v %v", code, rep.Sampled, rep.Sample)
	}
	code, stdout, _ = runArgs(t, "coverage", corpus, "--config", cfgPath, "--csv")
	rows, err := csv.NewReader(strings.NewReader(stdout)).ReadAll()
	if code != exitSkipped || err != nil || len(rows) < 10 || strings.Join(rows[0], ",") != strings.Join(relpos.CSVHeader, ",") {
		t.Fatalf("csv: exit %d, err %v, %d rows", code, err, len(rows))
	}
	code, stdout, _ = runArgs(t, "coverage", corpus, "--config", cfgPath, "--per-bucket")
	for _, want := range []string{"DISTANCE (tokens)", "TIME (ms)", "PITCH (semitones)", "INSTRUMENTS", "DATASETS", "within 33 rows"} {
		if !strings.Contains(stdout, want) {
			t.Errorf("text output lacks %q", want)
		}
	}
	for _, args := range [][]string{
		{"coverage"},
		{"coverage", corpus, "--json", "--csv"},
		{"coverage", corpus, "--pairs", "sideways"},
		{"coverage", corpus, "--time", "log:buckets=3,max=1"},
	} {
		if code, _, _ := runArgs(t, args...); code != exitUsage {
			t.Errorf("%v: exit %d, want %d", args, code, exitUsage)
		}
	}
}
