package audit

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"html"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// probeWidths are the viewport widths the report is measured at: a common laptop
// width in CSS pixels, a small one, and about the width of a printed A4 page
// (21 cm at 96 CSS pixels per inch, less margins).
var probeWidths = []int{1366, 1024, 700}

// probeHarness loads the report into one iframe per width (srcdoc frames share the
// harness's origin, so its script can measure inside them) and, once everything is
// laid out, writes what it measured into the DOM as JSON for --dump-dom to carry out:
// the charts present and drawn, and every element whose box pokes out to the right of
// the frame's viewport. A self-test adds an element too wide on purpose and checks that
// it is caught.
const probeHarness = `<!DOCTYPE html><html><head><meta charset="utf-8"></head><body style="margin:0">
{{FRAMES}}
<script>
function probe(frame) {
  var doc = frame.contentDocument, root = doc.documentElement;
  // Grow the frame to its content, so the report never scrolls inside it and no
  // scroll bar takes width from the viewport.
  frame.style.height = (Math.ceil(doc.body.getBoundingClientRect().bottom) + 40) + 'px';
  var vw = root.clientWidth;
  var charts = doc.querySelectorAll('svg.chart'), drawn = 0;
  charts.forEach(function (c) {
    var r = c.getBoundingClientRect();
    if (r.width > 200 && r.height > 100 && c.querySelectorAll('path').length > 10) drawn++;
  });
  function overflowing() {
    var over = [];
    doc.querySelectorAll('body *').forEach(function (el) {
      var r = el.getBoundingClientRect();
      if (r.width > 0 && r.right > vw + 1 && over.length < 20) {
        over.push(el.tagName.toLowerCase() + (typeof el.className === 'string' && el.className ? '.' + el.className : '') + ' right=' + Math.round(r.right));
      }
    });
    return over;
  }
  var result = {viewport: vw, scrollWidth: root.scrollWidth, height: Math.ceil(doc.body.getBoundingClientRect().bottom),
    charts: charts.length, drawn: drawn, figures: doc.querySelectorAll('figure').length, overflowing: overflowing()};
  var wide = doc.createElement('div');
  wide.style.width = (vw + 300) + 'px';
  wide.textContent = 'x';
  doc.querySelector('section').appendChild(wide);
  result.selfTest = overflowing().length > 0 && root.scrollWidth > vw;
  wide.remove();
  return result;
}
window.addEventListener('load', function () {
  var out = [];
  document.querySelectorAll('iframe').forEach(function (f) { out.push(probe(f)); });
  var pre = document.createElement('pre');
  pre.id = 'relshard-probe';
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});
</script></body></html>`

type probe struct {
	Viewport    int      `json:"viewport"`
	ScrollWidth int      `json:"scrollWidth"`
	Height      int      `json:"height"`
	Charts      int      `json:"charts"`
	Drawn       int      `json:"drawn"`
	Figures     int      `json:"figures"`
	Overflowing []string `json:"overflowing"`
	SelfTest    bool     `json:"selfTest"`
}

// chromiumArgs are the flags for a quiet, offline, throw-away headless run.
func chromiumArgs(profile string, width, height int) []string {
	return []string{"--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
		"--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--hide-scrollbars", "--user-data-dir=" + profile, fmt.Sprintf("--window-size=%d,%d", width, height)}
}

func runChromium(t *testing.T, args ...string) []byte {
	t.Helper()
	start := time.Now()
	defer func() { t.Logf("chromium ran %v", time.Since(start).Round(time.Millisecond)) }()
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, chromiumPath, args...)
	var stderr bytes.Buffer
	cmd.Stderr = &stderr
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("chromium %s: %v\n%s", strings.Join(args, " "), err, stderr.String())
	}
	return out
}

var probeRE = regexp.MustCompile(`(?s)<pre id="relshard-probe">(.*?)</pre>`)

// The HTML report rendered in a real browser (Debian's chromium): its charts are
// present and drawn, and nothing overflows horizontally at laptop widths. A
// screenshot of the whole page is kept in RELSHARD_ARTIFACTS (or a temporary
// folder). RELSHARD_AUDIT_HTML names a report to check instead of the one built here
// (.ci/browser-check passes the demo's).
func TestHTMLInBrowser(t *testing.T) {
	_, err := exec.LookPath(chromiumPath)
	needRef(t, "Debian package chromium ("+chromiumPath+")", err == nil)

	var page []byte
	wantCharts := -1
	if p := os.Getenv("RELSHARD_AUDIT_HTML"); p != "" {
		if page, err = os.ReadFile(p); err != nil {
			t.Fatal(err)
		}
	} else {
		rep := demoReport(t)
		var buf bytes.Buffer
		if err := rep.WriteHTML(&buf); err != nil {
			t.Fatal(err)
		}
		page = buf.Bytes()
		charts, err := rep.Charts()
		if err != nil {
			t.Fatal(err)
		}
		wantCharts = len(charts)
	}
	if wantCharts < 0 {
		wantCharts = strings.Count(string(page), `<svg class="chart"`)
	}
	if wantCharts == 0 {
		t.Fatal("the report has no charts")
	}

	dir := t.TempDir()
	var frames strings.Builder
	for _, w := range probeWidths {
		fmt.Fprintf(&frames, `<iframe style="display:block;border:0;width:%dpx;height:800px" srcdoc="%s"></iframe>`,
			w, html.EscapeString(string(page)))
	}
	harness := strings.Replace(probeHarness, "{{FRAMES}}", frames.String(), 1)
	probePath := filepath.Join(dir, "probe.html")
	if err := os.WriteFile(probePath, []byte(harness), 0o644); err != nil {
		t.Fatal(err)
	}
	out := runChromium(t, append(chromiumArgs(filepath.Join(dir, "profile-probe"), 1400, 800),
		"--dump-dom", "file://"+probePath)...)
	m := probeRE.FindSubmatch(out)
	if m == nil {
		t.Fatalf("the probe left no result in the DOM (%d bytes dumped)", len(out))
	}
	var probes []probe
	if err := json.Unmarshal([]byte(htmlUnescape(string(m[1]))), &probes); err != nil {
		t.Fatalf("probe result %q: %v", m[1], err)
	}
	if len(probes) != len(probeWidths) {
		t.Fatalf("%d probe results, want %d", len(probes), len(probeWidths))
	}
	height := 0
	for i, p := range probes {
		width := probeWidths[i]
		t.Logf("width %d: %+v", width, p)
		if p.Viewport != width {
			t.Errorf("width %d: the frame's viewport is %d px", width, p.Viewport)
		}
		if p.Charts != wantCharts || p.Drawn != wantCharts {
			t.Errorf("width %d: %d charts in the DOM, %d drawn; want %d", width, p.Charts, p.Drawn, wantCharts)
		}
		if !p.SelfTest {
			t.Errorf("width %d: the probe did not catch an element made too wide on purpose", width)
		}
		if p.ScrollWidth > p.Viewport || len(p.Overflowing) > 0 {
			t.Errorf("width %d: page overflows horizontally: scroll width %d > viewport %d; elements: %v",
				width, p.ScrollWidth, p.Viewport, p.Overflowing)
		}
		if i == 0 {
			height = p.Height
		}
	}

	// A screenshot at laptop width, kept for people to look at: of the whole page
	// when RELSHARD_ARTIFACTS names where to keep it, else (into a temporary folder,
	// which goes away) of its first screens only, to keep the test fast.
	shot := filepath.Join(artifactDir(t), "audit-report.png")
	shotHeight := min(max(height, 800), 16000)
	if os.Getenv("RELSHARD_ARTIFACTS") == "" {
		shotHeight = min(shotHeight, 2400)
	}
	htmlPath := filepath.Join(dir, "report.html")
	if err := os.WriteFile(htmlPath, page, 0o644); err != nil {
		t.Fatal(err)
	}
	runChromium(t, append(chromiumArgs(filepath.Join(dir, "profile-shot"), 1366, shotHeight),
		"--screenshot="+shot, "file://"+htmlPath)...)
	if st, err := os.Stat(shot); err != nil || st.Size() < 10_000 {
		t.Errorf("screenshot %s missing or tiny: %v", shot, err)
	} else {
		t.Logf("screenshot: %s", shot)
	}
}

// htmlUnescape undoes the escaping --dump-dom applies to text inside <pre>.
func htmlUnescape(s string) string {
	return strings.NewReplacer("&quot;", `"`, "&lt;", "<", "&gt;", ">", "&#39;", "'", "&amp;", "&").Replace(s)
}
