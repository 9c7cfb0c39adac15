package audit

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
	"time"
)

// probeScript runs inside the page once it is laid out and writes what it measured
// into the DOM as JSON, for --dump-dom to carry out: the charts present and drawn,
// and every element whose box pokes out to the right of the viewport.
const probeScript = `<script>
(function () {
  var vw = document.documentElement.clientWidth;
  var charts = document.querySelectorAll('svg.chart');
  var drawn = 0;
  charts.forEach(function (c) {
    var r = c.getBoundingClientRect();
    if (r.width > 200 && r.height > 100 && c.querySelectorAll('path').length > 10) drawn++;
  });
  function overflowing() {
    var over = [];
    document.querySelectorAll('body *').forEach(function (el) {
      var r = el.getBoundingClientRect();
      if (r.width > 0 && r.right > vw + 1 && over.length < 20) {
        over.push(el.tagName.toLowerCase() + (typeof el.className === 'string' && el.className ? '.' + el.className : '') + ' right=' + Math.round(r.right));
      }
    });
    return over;
  }
  var over = overflowing();
  var scrollWidth = document.documentElement.scrollWidth;
  // Self-test: a table cell too wide for the page must be caught.
  var wide = document.createElement('div');
  wide.style.width = (vw + 300) + 'px';
  wide.textContent = 'x';
  document.querySelector('section').appendChild(wide);
  var caught = overflowing().length > 0 && document.documentElement.scrollWidth > vw;
  wide.remove();
  var out = document.createElement('pre');
  out.id = 'relshard-probe';
  out.textContent = JSON.stringify({
    viewport: vw,
    scrollWidth: scrollWidth,
    selfTest: caught,
    height: document.documentElement.scrollHeight,
    charts: charts.length,
    drawn: drawn,
    figures: document.querySelectorAll('figure').length,
    overflowing: over
  });
  document.body.appendChild(out);
})();
</script>`

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
	probed := bytes.Replace(page, []byte("</body>"), []byte(probeScript+"</body>"), 1)
	probePath := filepath.Join(dir, "probe.html")
	if err := os.WriteFile(probePath, probed, 0o644); err != nil {
		t.Fatal(err)
	}
	var height int
	// A common laptop width in CSS pixels, and a small one.
	for _, width := range []int{1366, 1024} {
		out := runChromium(t, append(chromiumArgs(filepath.Join(dir, fmt.Sprint("profile", width)), width, 800),
			"--dump-dom", "file://"+probePath)...)
		m := probeRE.FindSubmatch(out)
		if m == nil {
			t.Fatalf("width %d: the probe left no result in the DOM (%d bytes dumped)", width, len(out))
		}
		var p probe
		if err := json.Unmarshal([]byte(htmlUnescape(string(m[1]))), &p); err != nil {
			t.Fatalf("width %d: probe result %q: %v", width, m[1], err)
		}
		t.Logf("width %d: %+v", width, p)
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
		if width == 1366 {
			height = p.Height
		}
	}

	// A screenshot of the whole page at laptop width, kept for people to look at.
	shot := filepath.Join(artifactDir(t), "audit-report.png")
	htmlPath := filepath.Join(dir, "report.html")
	if err := os.WriteFile(htmlPath, page, 0o644); err != nil {
		t.Fatal(err)
	}
	runChromium(t, append(chromiumArgs(filepath.Join(dir, "profile-shot"), 1366, min(max(height, 800), 16000)),
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
