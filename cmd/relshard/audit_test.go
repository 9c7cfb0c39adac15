package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gitlab.com/gomidi/midi/v2"
	"gitlab.com/gomidi/midi/v2/smf"
)

// auditRun runs the CLI on buffers.
func auditRun(args ...string) (int, string, string) {
	var out, errb bytes.Buffer
	code := run(args, &streams{In: strings.NewReader(""), Out: &out, Err: &errb})
	return code, out.String(), errb.String()
}

// auditSMF writes, with gomidi's SMF writer (an independent SMF 1.0 implementation),
// a one-track file of n quarter-length notes, one every step ticks from tick 0.
func auditSMF(t *testing.T, ppq uint16, step uint32, n int) []byte {
	t.Helper()
	s := smf.New()
	s.TimeFormat = smf.MetricTicks(ppq)
	var tr smf.Track
	tr.Add(0, smf.MetaMeter(4, 4))
	for i := range n {
		tr.Add(0, midi.NoteOn(0, uint8(60+i%12), 90))
		tr.Add(step, midi.NoteOff(0, uint8(60+i%12)))
	}
	tr.Close(0)
	s.Add(tr)
	var buf bytes.Buffer
	if _, err := s.WriteTo(&buf); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

type auditJSON struct {
	Datasets []struct {
		Name    string `json:"name"`
		Files   int    `json:"files"`
		Read    int    `json:"read"`
		Skipped int    `json:"skipped"`
	} `json:"datasets"`
	Files []struct {
		Path string `json:"path"`
		PPQ  int    `json:"ppq"`
		Grid struct {
			Division int    `json:"division"`
			Label    string `json:"label"`
		} `json:"grid"`
	} `json:"files"`
	Skipped []struct {
		Path   string `json:"path"`
		Reason string `json:"reason"`
	} `json:"skipped"`
	Coverage []struct {
		Kind  string `json:"kind"`
		Pairs int64  `json:"pairs"`
	} `json:"coverage"`
}

func TestAuditCommand(t *testing.T) {
	dir := t.TempDir()
	src := filepath.Join(dir, "corpus")
	// Sixteenth notes at 480 PPQ (120 ticks, common practice) and eighth-note
	// triplets (160 ticks) in two datasets; a file cut short in the middle of its
	// track chunk (SMF 1.0: the chunk length promises more bytes) is skipped.
	files := map[string][]byte{
		"straight/a.mid": auditSMF(t, 480, 120, 64),
		"triplets/b.mid": auditSMF(t, 480, 160, 64),
	}
	files["straight/broken.mid"] = files["straight/a.mid"][:30]
	for name, data := range files {
		p := filepath.Join(src, filepath.FromSlash(name))
		if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	html := filepath.Join(dir, "report.html")
	charts := filepath.Join(dir, "charts")
	code, out, errOut := auditRun("audit", src, "--json", "--html", html, "--charts", charts, "--max-len", "64")
	if code != exitSkipped {
		t.Fatalf("exit %d, want %d (a file skipped); stderr %s", code, exitSkipped, errOut)
	}
	if !strings.Contains(errOut, "1 of 3 input files skipped") {
		t.Errorf("stderr %q does not say what was skipped", errOut)
	}
	var rep auditJSON
	if err := json.Unmarshal([]byte(out), &rep); err != nil {
		t.Fatalf("--json output: %v\n%s", err, out)
	}
	if len(rep.Datasets) != 2 || rep.Datasets[0].Name != "straight" || rep.Datasets[1].Name != "triplets" ||
		rep.Datasets[0].Files != 2 || rep.Datasets[0].Skipped != 1 {
		t.Errorf("datasets %+v", rep.Datasets)
	}
	if len(rep.Skipped) != 1 || rep.Skipped[0].Path != "straight/broken.mid" || rep.Skipped[0].Reason == "" {
		t.Errorf("skipped %+v", rep.Skipped)
	}
	grids := map[string]string{}
	for _, f := range rep.Files {
		grids[f.Path] = f.Grid.Label
	}
	if grids["straight/a.mid"] != "on a 1/16 grid" || grids["triplets/b.mid"] != "triplet grid (1/8 triplets)" {
		t.Errorf("grids %v", grids)
	}
	if len(rep.Coverage) == 0 || rep.Coverage[0].Pairs == 0 {
		t.Errorf("coverage %+v", rep.Coverage)
	}
	page, err := os.ReadFile(html)
	if err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(string(page), `<svg class="chart"`); n != 18 {
		t.Errorf("HTML report has %d charts, want 18", n)
	}
	names, err := filepath.Glob(filepath.Join(charts, "*"))
	if err != nil || len(names) != 36 {
		t.Errorf("charts dir holds %d files, want 36 (18 charts as SVG and PNG): %v", len(names), err)
	}

	// Tables by default.
	code, out, _ = auditRun("audit", filepath.Join(src, "triplets"))
	if code != exitOK || !strings.Contains(out, "Grids (pieces per detected grid)") || !strings.Contains(out, "triplet grid (1/8 triplets)") {
		t.Errorf("text run: exit %d\n%s", code, out)
	}
}

func TestAuditUsage(t *testing.T) {
	for _, args := range [][]string{
		{"audit"},
		{"audit", "x", "--grid-threshold", "1.5"},
		{"audit", "x", "--tempo-min", "500"},
		{"audit", "x", "--time", "linear:width=0"},
		{"audit", "x", "--bogus"},
	} {
		if code, _, errOut := auditRun(args...); code != exitUsage {
			t.Errorf("%v: exit %d, want %d; stderr %s", args, code, exitUsage, errOut)
		}
	}
}
