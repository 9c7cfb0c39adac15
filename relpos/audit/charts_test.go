package audit

import (
	"bytes"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// artifactDir is where tests leave pictures for people to look at: RELSHARD_ARTIFACTS
// when set, else a temporary folder.
func artifactDir(t *testing.T) string {
	t.Helper()
	if d := os.Getenv("RELSHARD_ARTIFACTS"); d != "" {
		if err := os.MkdirAll(d, 0o755); err != nil {
			t.Fatal(err)
		}
		return d
	}
	return t.TempDir()
}

func TestChartsRender(t *testing.T) {
	rep := demoReport(t)
	charts, err := rep.Charts()
	if err != nil {
		t.Fatal(err)
	}
	// Two datasets: eight charts each, and two overlays.
	if got, want := len(charts), 8*len(rep.Datasets)+2; got != want {
		t.Fatalf("%d charts, want %d", got, want)
	}
	dir := artifactDir(t)
	for _, c := range charts {
		var svg, pngBuf bytes.Buffer
		if err := c.WriteSVG(&svg); err != nil {
			t.Fatal(err)
		}
		if !strings.Contains(svg.String(), "<svg") || !strings.Contains(svg.String(), "</svg>") {
			t.Errorf("%s: not an SVG document", c.Name)
		}
		if err := c.WritePNG(&pngBuf); err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(bytes.NewReader(pngBuf.Bytes()))
		if err != nil {
			t.Fatalf("%s: PNG does not decode: %v", c.Name, err)
		}
		if b := img.Bounds(); b.Dx() < 600 || b.Dy() < 300 {
			t.Errorf("%s: PNG of %v, too small", c.Name, b)
		}
		for ext, data := range map[string][]byte{".svg": svg.Bytes(), ".png": pngBuf.Bytes()} {
			if err := os.WriteFile(filepath.Join(dir, c.Name+ext), data, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	// The Δt charts carry the clip of the default time scheme.
	for _, c := range charts {
		if c.Kind == "dt" && c.Style == "cdf" {
			var svg bytes.Buffer
			_ = c.WriteSVG(&svg)
			if !strings.Contains(svg.String(), "clip: saturates from 2,048") {
				t.Errorf("%s: no clip line in the legend", c.Name)
			}
		}
	}
}

func TestWriteHTMLSelfContained(t *testing.T) {
	rep := demoReport(t)
	var buf bytes.Buffer
	if err := rep.WriteHTML(&buf); err != nil {
		t.Fatal(err)
	}
	page := buf.String()
	if n := strings.Count(page, `<svg class="chart"`); n != 18 {
		t.Errorf("%d inline charts, want 18", n)
	}
	// Nothing may be fetched: no external scripts, styles, images or fonts.
	for _, bad := range []string{"<script src", "<link", "<img", "@import", "url(http", `href="http`, `src="http`} {
		if strings.Contains(page, bad) {
			t.Errorf("page contains %q", bad)
		}
	}
	if err := os.WriteFile(filepath.Join(artifactDir(t), "audit-report.html"), buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}
