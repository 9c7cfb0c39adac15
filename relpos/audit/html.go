package audit

import (
	"embed"
	"fmt"
	"html/template"
	"io"
	"math"
	"strings"
)

//go:embed assets/report.html.tmpl assets/report.css
var assets embed.FS

var reportTemplate = template.Must(template.New("report.html.tmpl").Funcs(template.FuncMap{
	"thousands": func(v any) string {
		switch x := v.(type) {
		case int:
			return thousands(int64(x))
		case int64:
			return thousands(x)
		}
		return fmt.Sprint(v)
	},
	"pct": pct,
	"num": func(v any, prec int) string {
		switch x := v.(type) {
		case JSONFloat:
			return num(float64(x), prec)
		case float64:
			return num(x, prec)
		}
		return fmt.Sprint(v)
	},
	"share": func(n, of int) float64 {
		if of == 0 {
			return math.NaN()
		}
		return float64(n) / float64(of)
	},
	// meter is the width of a share bar; a number we format, so it is safe CSS.
	"meter": func(v float64) template.CSS {
		if math.IsNaN(v) {
			v = 0
		}
		return template.CSS(fmt.Sprintf("width:%.1f%%", 100*min(max(v, 0), 1)))
	},
}).ParseFS(assets, "assets/report.html.tmpl"))

type htmlChart struct {
	SVG     template.HTML
	Caption string
}

type htmlRow struct {
	Name string
	D    *Dist
}

type htmlSet struct {
	D       *Dataset
	Anchor  string
	TopGrid string
	Charts  []htmlChart
	Rows    []htmlRow
}

type htmlComparison struct {
	C          Comparison
	Name, Unit string
}

type htmlFile struct {
	F     *File
	PPQ   string
	Notes int
	Tempo string
}

type htmlData struct {
	R           *Report
	CSS         template.CSS
	Title       string
	Inputs      int
	Pieces      int
	Sets        []htmlSet
	Overlay     []htmlChart
	Comparisons []htmlComparison
	Files       []htmlFile
	FilesLeft   int
}

// maxHTMLFiles caps the rows of the page's file table; every file is in the JSON
// and text reports, and every outlier is listed on the page.
const maxHTMLFiles = 2000

// WriteHTML writes the report as one self-contained HTML page: styles inline,
// charts inline as SVG, nothing loaded from the network, readable on a laptop screen
// and in print.
func (r *Report) WriteHTML(w io.Writer) error {
	css, err := assets.ReadFile("assets/report.css")
	if err != nil {
		return fmt.Errorf("write audit html: %w", err)
	}
	charts, err := r.Charts()
	if err != nil {
		return fmt.Errorf("write audit html: %w", err)
	}
	data := htmlData{R: r, CSS: template.CSS(css)}
	names := make([]string, 0, len(r.Datasets))
	for _, d := range r.Datasets {
		names = append(names, d.Name)
		data.Inputs += d.Files
		data.Pieces += d.Pieces
	}
	switch {
	case len(names) == 0:
		data.Title = "an empty corpus"
	case len(names) <= 3:
		data.Title = strings.Join(names, ", ")
	default:
		data.Title = fmt.Sprintf("%s and %d more datasets", strings.Join(names[:2], ", "), len(names)-2)
	}
	byDataset := map[string][]htmlChart{}
	for _, c := range charts {
		svg, err := c.inlineSVG()
		if err != nil {
			return fmt.Errorf("write audit html: %w", err)
		}
		hc := htmlChart{SVG: template.HTML(svg), Caption: c.Caption}
		if c.Dataset == "" {
			data.Overlay = append(data.Overlay, hc)
		} else {
			byDataset[c.Dataset] = append(byDataset[c.Dataset], hc)
		}
	}
	for _, d := range r.Datasets {
		s := htmlSet{D: d, Anchor: fileStem(d.Name), Charts: byDataset[d.Name], TopGrid: "-"}
		if len(d.Grids) > 0 {
			s.TopGrid = fmt.Sprintf("%s (%s)", d.Grids[0].Label, pct(float64(d.Grids[0].N)/float64(max(d.Pieces, 1))))
		}
		for _, row := range d.dists(r.TimeUnit) {
			s.Rows = append(s.Rows, htmlRow{Name: row.name, D: row.d})
		}
		data.Sets = append(data.Sets, s)
	}
	for _, c := range r.Comparisons {
		hc := htmlComparison{C: c, Name: "|Δt|", Unit: r.TimeUnit}
		if c.Kind == "dp" {
			hc.Name, hc.Unit = "Δp", "semitones"
		}
		data.Comparisons = append(data.Comparisons, hc)
	}
	for i := range r.Files {
		if i == maxHTMLFiles {
			data.FilesLeft = len(r.Files) - maxHTMLFiles
			break
		}
		f := &r.Files[i]
		hf := htmlFile{F: f, PPQ: fmt.Sprint(f.PPQ), Notes: f.Notes, Tempo: bpm(f.Tempo.MinBPM)}
		if f.Tempo.MaxBPM != f.Tempo.MinBPM {
			hf.Tempo += "–" + bpm(f.Tempo.MaxBPM)
		}
		if f.SMPTE {
			hf.PPQ, hf.Tempo = "SMPTE", "-" // time is in frames, not beats
		}
		data.Files = append(data.Files, hf)
	}
	if err := reportTemplate.Execute(w, data); err != nil {
		return fmt.Errorf("write audit html: %w", err)
	}
	return nil
}
