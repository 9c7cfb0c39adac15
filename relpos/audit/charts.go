package audit

import (
	"bytes"
	"fmt"
	"html"
	"image/color"
	"io"
	"math"
	"strconv"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"
)

// Chart size: wide and low, so two fit side by side on a laptop and one spans a
// printed page.
const (
	chartW = 16 * vg.Centimeter
	chartH = 8 * vg.Centimeter
)

// The report's palette (ours): slate ink, a teal for data, a warm red for the clip,
// a quiet grey for bucket edges, and distinct hues for overlaid datasets.
var (
	inkColor   = color.RGBA{0x1e, 0x29, 0x3b, 0xff}
	barColor   = color.RGBA{0x3d, 0x8c, 0x86, 0xff}
	curveColor = color.RGBA{0x1d, 0x4e, 0x6b, 0xff}
	clipColor  = color.RGBA{0xc2, 0x41, 0x0c, 0xff}
	edgeColor  = color.RGBA{0x94, 0xa3, 0xb8, 0xff}
	gridColor  = color.RGBA{0xe2, 0xe8, 0xf0, 0xff}
	seriesHues = []color.Color{
		color.RGBA{0x1d, 0x4e, 0x6b, 0xff}, color.RGBA{0xc2, 0x41, 0x0c, 0xff},
		color.RGBA{0x3d, 0x8c, 0x86, 0xff}, color.RGBA{0x7c, 0x3a, 0xed, 0xff},
		color.RGBA{0xb4, 0x8a, 0x00, 0xff}, color.RGBA{0xbe, 0x18, 0x5d, 0xff},
		color.RGBA{0x4b, 0x55, 0x63, 0xff}, color.RGBA{0x15, 0x80, 0x3d, 0xff},
	}
)

// Chart is one picture of a report: a histogram or a cumulative curve of one
// distribution of one dataset, or the curves of every dataset overlaid.
type Chart struct {
	Name    string // file stem without extension, e.g. "piano-dt-hist"
	Title   string
	Dataset string // empty for the overlay of every dataset
	Kind    string // "dt", "dp" or "ioi"
	Style   string // "hist" or "cdf"
	Caption string // what the reader should know to read it

	p *plot.Plot
}

// svgFonts gives the font the SVG names metric-compatible fallbacks, for viewers
// without Liberation Sans.
var svgFonts = strings.NewReplacer("font-family:Liberation Sans;", `font-family:'Liberation Sans',Arimo,Arial,Helvetica,sans-serif;`)

// WriteSVG writes the chart as an SVG document.
func (c *Chart) WriteSVG(w io.Writer) error {
	cv := vgsvg.New(chartW, chartH)
	c.p.Draw(draw.New(cv))
	var buf bytes.Buffer
	if _, err := cv.WriteTo(&buf); err != nil {
		return fmt.Errorf("write chart %s: %w", c.Name, err)
	}
	if _, err := svgFonts.WriteString(w, buf.String()); err != nil {
		return fmt.Errorf("write chart %s: %w", c.Name, err)
	}
	return nil
}

// WritePNG writes the chart as a PNG image at 144 dots per inch.
func (c *Chart) WritePNG(w io.Writer) error {
	cv := vgimg.PngCanvas{Canvas: vgimg.NewWith(vgimg.UseWH(chartW, chartH), vgimg.UseDPI(144))}
	c.p.Draw(draw.New(cv))
	if _, err := cv.WriteTo(w); err != nil {
		return fmt.Errorf("write chart %s: %w", c.Name, err)
	}
	return nil
}

// inlineSVG returns the chart as an <svg> element for embedding in HTML: without
// the XML prolog, sized by CSS through its viewBox, with a title for screen readers.
func (c *Chart) inlineSVG() (string, error) {
	var buf bytes.Buffer
	if err := c.WriteSVG(&buf); err != nil {
		return "", err
	}
	s := buf.String()
	i := strings.Index(s, "<svg")
	if i < 0 {
		return "", fmt.Errorf("chart %s: no <svg> element in the SVG output", c.Name)
	}
	s = s[i:]
	// Replace the fixed size in points with a class; the viewBox keeps the aspect.
	end := strings.Index(s, ">")
	head := s[:end]
	for _, attr := range []string{"width", "height"} {
		if j := strings.Index(head, " "+attr+"=\""); j >= 0 {
			k := strings.Index(head[j+len(attr)+3:], "\"")
			head = head[:j] + head[j+len(attr)+3+k+1:]
		}
	}
	head = strings.Join(strings.Fields(strings.TrimPrefix(head, "<svg")), " ")
	title := "<title>" + html.EscapeString(c.Title) + "</title>"
	return `<svg class="chart" role="img" ` + head + ` preserveAspectRatio="xMidYMid meet">` + title + s[end+1:], nil
}

// Charts returns the report's charts: for each dataset the histogram and cumulative
// curve of pairwise |Δt| and Δp with the bucket edges and clip of the configured
// schemes, and the histogram of inter-onset intervals; then the cumulative curves of
// every dataset overlaid, one chart per offset kind.
func (r *Report) Charts() ([]*Chart, error) {
	var out []*Chart
	var ts, ps []Scheme
	for _, s := range r.Schemes {
		if s.Kind == "time" {
			ts = append(ts, s)
		} else {
			ps = append(ps, s)
		}
	}
	for _, d := range r.Datasets {
		stem := fileStem(d.Name)
		out = append(out,
			timeHist(stem+"-dt-hist", d.Name, "|Δt| of token pairs in windows", r.TimeUnit, d.PairDT.h, ts),
			timeCDF(stem+"-dt-cdf", d.Name, r.TimeUnit, []*Dataset{d}, ts),
			pitchHist(stem+"-dp-hist", d.Name, d.PairDP.h, ps),
			pitchCDF(stem+"-dp-cdf", d.Name, []*Dataset{d}, ps),
			timeHist(stem+"-ioi-hist", d.Name, "inter-onset intervals", "ms", d.IOI.h, nil),
		)
		out[len(out)-1].Kind = "ioi"
		out = append(out,
			linearHist(stem+"-velocity-hist", d.Name, "velocity", "note-on velocity", "velocity", d.Velocity.h, 1, 127, 1),
			linearHist(stem+"-polyphony-hist", d.Name, "polyphony", "pitched notes sounding at an onset", "polyphony", d.Polyphony.h, 0, -1, 1),
			linearHist(stem+"-tempo-hist", d.Name, "tempo", "tempo at each onset, BPM", "tempo", d.Tempo.h, -1, -1, 2),
		)
	}
	if len(r.Datasets) > 1 {
		out = append(out, timeCDF("all-dt-cdf", "", r.TimeUnit, r.Datasets, ts), pitchCDF("all-dp-cdf", "", r.Datasets, ps))
	}
	for _, c := range out {
		if c.p == nil {
			return nil, fmt.Errorf("chart %s: not built", c.Name)
		}
		list := ts
		if c.Kind == "dp" {
			list = ps
		}
		if (c.Kind == "dt" || c.Kind == "dp") && len(list) > 0 {
			names := make([]string, len(list))
			for i, s := range list {
				names[i] = s.Name
			}
			c.Caption = strings.TrimSpace(c.Caption + " Schemes drawn: " + strings.Join(names, "; ") + ".")
		}
	}
	return out, nil
}

// fileStem makes a dataset name safe for a file name.
func fileStem(name string) string {
	var b strings.Builder
	for _, r := range name {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_', r == '.':
			b.WriteRune(r)
		default:
			b.WriteByte('_')
		}
	}
	if b.Len() == 0 {
		return "dataset"
	}
	return b.String()
}

// plainTicks are gonum's default ticks labelled without trailing zeros: 25, not 25.00.
type plainTicks struct{}

// Ticks implements plot.Ticker.
func (plainTicks) Ticks(lo, hi float64) []plot.Tick {
	ts := plot.DefaultTicks{}.Ticks(lo, hi)
	for i := range ts {
		if ts[i].Label != "" {
			ts[i].Label = strconv.FormatFloat(ts[i].Value, 'f', -1, 64)
		}
	}
	return ts
}

func newPlot(title, x, y string) *plot.Plot {
	p := plot.New()
	p.X.Tick.Marker, p.Y.Tick.Marker = plainTicks{}, plainTicks{}
	p.Title.Text = title
	p.Title.TextStyle.Color = inkColor
	p.X.Label.Text = x
	p.Y.Label.Text = y
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Color = inkColor
		a.Label.TextStyle.Color = inkColor
		a.Tick.Color = inkColor
		a.Tick.Label.Color = inkColor
	}
	p.Legend.Top, p.Legend.Left = true, true
	p.Legend.TextStyle.Color = inkColor
	// Sans-serif text throughout (the SVG names Liberation Sans, with fallbacks).
	p.Title.TextStyle.Font.Variant = "Sans"
	p.Legend.TextStyle.Font.Variant = "Sans"
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font.Variant = "Sans"
		a.Tick.Label.Font.Variant = "Sans"
	}
	p.Add(&plotter.Grid{Vertical: draw.LineStyle{}, Horizontal: draw.LineStyle{Color: gridColor, Width: vg.Points(0.5)}})
	return p
}

// logEdges returns bin edges 10^(k/steps) from 1 to just past hi.
func logEdges(hi float64, steps int) []float64 {
	var e []float64
	for k := 0; ; k++ {
		v := math.Pow(10, float64(k)/float64(steps))
		e = append(e, v)
		if v > hi {
			return e
		}
	}
}

// sumRange is the count of the counters whose smallest value lies in [lo, hi).
func sumRange(h *Hist, lo, hi float64) int64 {
	a, b := h.span()
	var n int64
	for i := a; i <= b; i++ {
		if v := float64(h.lower(i)); v >= lo && v < hi {
			n += h.Counts[i]
		}
	}
	return n
}

// timeHist is a histogram of a non-negative quantity on a log axis, in percent of all
// values per bin (20 bins a decade), with the schemes' edges and clips drawn.
func timeHist(name, dataset, what, unit string, h *Hist, schemes []Scheme) *Chart {
	c := &Chart{Name: name, Dataset: dataset, Kind: "dt", Style: "hist",
		Title: fmt.Sprintf("%s: %s", dataset, what)}
	p := newPlot(c.Title, fmt.Sprintf("%s (log scale)", unit), "% of values per bin")
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	c.p = p
	if h == nil || h.N == 0 {
		c.Caption = "No values."
		p.X.Min, p.X.Max = 1, 10
		return c
	}
	hi := float64(max(h.Max, 10))
	edges := logEdges(hi+1, 20)
	bins := make([]plotter.HistogramBin, 0, len(edges))
	ymax := 0.0
	for i := 0; i+1 < len(edges); i++ {
		w := 100 * float64(sumRange(h, edges[i], edges[i+1])) / float64(h.N)
		bins = append(bins, plotter.HistogramBin{Min: edges[i], Max: edges[i+1], Weight: w})
		ymax = max(ymax, w)
	}
	hist := &plotter.Histogram{Bins: bins, FillColor: barColor, LineStyle: draw.LineStyle{Color: barColor, Width: vg.Points(0.3)}}
	p.Add(hist)
	p.Legend.Add("share of values", hist)
	var zero int64
	if h.Lo <= 0 && h.Hi() >= 0 {
		zero = h.Counts[h.index(0)]
	}
	if zero > 0 {
		c.Caption = fmt.Sprintf("%.1f%% of the values are 0 and lie left of the log axis. ", 100*float64(zero)/float64(h.N))
	}
	if h.Over > 0 {
		c.Caption += fmt.Sprintf("%.1f%% lie beyond %s %s and are not drawn. ", 100*float64(h.Over)/float64(h.N), thousands(h.Hi()), unit)
	}
	ymax = max(ymax*1.35, 1) // headroom for the legend
	p.Y.Min, p.Y.Max = 0, ymax
	p.X.Min, p.X.Max = 1, edges[len(edges)-1]
	drawSchemes(p, schemes, 0, ymax, 1, edges[len(edges)-1])
	return c
}

// linearHist is a histogram of a small integer quantity on a linear axis, bars of
// width w values, in percent of all values. lo and hi < 0 mean: from the data (the
// 0.5th and 99.5th percentiles, widened a little).
func linearHist(name, dataset, kind, what, unit string, h *Hist, lo, hi, w int64) *Chart {
	c := &Chart{Name: name, Dataset: dataset, Kind: kind, Style: "hist", Title: dataset + ": " + what}
	p := newPlot(c.Title, unit, "% of values")
	c.p = p
	if h == nil || h.N == 0 {
		c.Caption = "No values."
		p.X.Min, p.X.Max = 0, 1
		return c
	}
	if lo < 0 {
		q, _ := h.Quantile(0.005)
		lo = max(q-5*w, h.Lo)
	}
	if hi < 0 {
		q, _ := h.Quantile(0.995)
		hi = max(q+5*w, lo+8*w)
	}
	hi = min(hi, h.Hi())
	lo = lo - lo%w
	var bins []plotter.HistogramBin
	ymax := 0.0
	var outside int64 = h.Under + h.Over
	for v := h.Lo; v <= h.Hi(); v++ {
		n := h.Counts[h.index(v)]
		if v < lo || v > hi {
			outside += n
			continue
		}
		if k := (v - lo) / w; int(k) >= len(bins) {
			b := float64(lo + k*w)
			bins = append(bins, plotter.HistogramBin{Min: b - 0.5, Max: b + float64(w) - 0.5})
		}
		bins[len(bins)-1].Weight += 100 * float64(n) / float64(h.N)
	}
	for _, b := range bins {
		ymax = max(ymax, b.Weight)
	}
	hist := &plotter.Histogram{Bins: bins, FillColor: barColor, LineStyle: draw.LineStyle{Color: color.White, Width: vg.Points(0.3)}}
	p.Add(hist)
	p.Legend.Add("share of values", hist)
	if outside > 0 {
		c.Caption = fmt.Sprintf("%.2f%% of the values lie outside %d..%d and are not drawn.", 100*float64(outside)/float64(h.N), lo, hi)
	}
	p.Y.Min, p.Y.Max = 0, max(ymax*1.35, 1)
	p.X.Min, p.X.Max = float64(lo)-0.5, float64(hi)+0.5
	return c
}

// cdfPoints returns the share of values ≤ x for each x of xs, which ascend; a
// counter counts from its smallest value on.
func cdfPoints(h *Hist, xs []float64) plotter.XYs {
	pts := make(plotter.XYs, 0, len(xs))
	seen := h.Under
	next := int64(0) // first counter not yet summed
	for _, x := range xs {
		v := int64(math.Floor(x))
		for next < int64(len(h.Counts)) && h.lower(next) <= v {
			seen += h.Counts[next]
			next++
		}
		y := float64(seen) / float64(h.N)
		if v < h.Lo {
			y = 0
		}
		pts = append(pts, plotter.XY{X: x, Y: y})
	}
	return pts
}

// timeCDF is the cumulative share of pairs with |Δt| ≤ x on a log axis.
func timeCDF(name, dataset, unit string, ds []*Dataset, schemes []Scheme) *Chart {
	c := &Chart{Name: name, Dataset: dataset, Kind: "dt", Style: "cdf"}
	c.Title = "Cumulative |Δt| of token pairs"
	if dataset != "" {
		c.Title = dataset + ": cumulative |Δt| of token pairs"
	}
	p := newPlot(c.Title, fmt.Sprintf("|Δt| ≤ x, %s (log scale)", unit), "share of pairs")
	p.X.Scale = plot.LogScale{}
	p.X.Tick.Marker = plot.LogTicks{Prec: -1}
	c.p = p
	hi := 10.0
	for _, d := range ds {
		if d.PairDT.N > 0 {
			hi = max(hi, float64(min(d.PairDT.h.Max, d.PairDT.h.Hi())))
		}
	}
	xs := logEdges(hi, 40)
	for i, d := range ds {
		h := d.PairDT.h
		if h.N == 0 {
			continue
		}
		l, err := plotter.NewLine(cdfPoints(h, xs))
		if err != nil {
			continue
		}
		l.Color = curveColor
		if len(ds) > 1 {
			l.Color = seriesHues[i%len(seriesHues)]
		}
		l.Width = vg.Points(1.6)
		p.Add(l)
		p.Legend.Add(legendName(d.Name, len(ds)), l)
	}
	p.Y.Min, p.Y.Max = 0, 1
	p.X.Min, p.X.Max = 1, xs[len(xs)-1]
	c.Caption = "Where the clip line meets a curve, read the share of pairs inside the clip range (the rest saturate)."
	drawSchemes(p, schemes, 0, 1, 1, xs[len(xs)-1])
	return c
}

func legendName(name string, n int) string {
	if n == 1 {
		return "share of pairs ≤ x"
	}
	return name
}

// pitchRange is the half-width of the Δp axis: the clip plus a margin, or the bulk of
// the data, whichever is wider, at most 127.
func pitchRange(h *Hist, schemes []Scheme) int64 {
	r := int64(12)
	for _, s := range schemes {
		for _, c := range s.Clip {
			r = max(r, int64(math.Abs(c))+6)
		}
	}
	if h != nil && h.N > 0 {
		lo, _ := h.Quantile(0.005)
		hi, _ := h.Quantile(0.995)
		r = max(r, -lo, hi)
	}
	return min(r, 127)
}

// pitchHist is the histogram of Δp, one bar per semitone, in percent of pitched pairs.
func pitchHist(name, dataset string, h *Hist, schemes []Scheme) *Chart {
	c := &Chart{Name: name, Dataset: dataset, Kind: "dp", Style: "hist",
		Title: dataset + ": Δp of pitched token pairs in windows"}
	p := newPlot(c.Title, "Δp = key − query, semitones", "% of pairs")
	c.p = p
	if h == nil || h.N == 0 {
		c.Caption = "No pitched pairs."
		p.X.Min, p.X.Max = -12, 12
		return c
	}
	r := pitchRange(h, schemes)
	bins := make([]plotter.HistogramBin, 0, 2*r+1)
	ymax := 0.0
	var outside int64
	for i := range int64(len(h.Counts)) { // one counter per semitone
		v, n := h.lower(i), h.Counts[i]
		if v < -r || v > r {
			outside += n
			continue
		}
		w := 100 * float64(n) / float64(h.N)
		bins = append(bins, plotter.HistogramBin{Min: float64(v) - 0.5, Max: float64(v) + 0.5, Weight: w})
		ymax = max(ymax, w)
	}
	hist := &plotter.Histogram{Bins: bins, FillColor: barColor, LineStyle: draw.LineStyle{Color: color.White, Width: vg.Points(0.3)}}
	p.Add(hist)
	p.Legend.Add("share of pairs", hist)
	if outside > 0 {
		c.Caption = fmt.Sprintf("%.2f%% of the pairs lie beyond ±%d semitones and are not drawn. ", 100*float64(outside)/float64(h.N), r)
	}
	c.Caption += "Negative Δp: the earlier token (the key) is lower than the later one (the query)."
	ymax = max(ymax*1.35, 1) // headroom for the legend
	p.Y.Min, p.Y.Max = 0, ymax
	p.X.Min, p.X.Max = float64(-r)-0.5, float64(r)+0.5
	drawSchemes(p, schemes, 0, ymax, p.X.Min, p.X.Max)
	return c
}

// pitchCDF is the cumulative share of pitched pairs with Δp ≤ x.
func pitchCDF(name, dataset string, ds []*Dataset, schemes []Scheme) *Chart {
	c := &Chart{Name: name, Dataset: dataset, Kind: "dp", Style: "cdf"}
	c.Title = "Cumulative Δp of pitched token pairs"
	if dataset != "" {
		c.Title = dataset + ": cumulative Δp of pitched token pairs"
	}
	p := newPlot(c.Title, "Δp ≤ x, semitones", "share of pairs")
	c.p = p
	var r int64 = 12
	for _, d := range ds {
		r = max(r, pitchRange(d.PairDP.h, schemes))
	}
	for i, d := range ds {
		h := d.PairDP.h
		if h.N == 0 {
			continue
		}
		xs := make([]float64, 0, 2*r+1)
		for v := -r; v <= r; v++ {
			xs = append(xs, float64(v))
		}
		l, err := plotter.NewLine(cdfPoints(h, xs))
		if err != nil {
			continue
		}
		l.Color = curveColor
		if len(ds) > 1 {
			l.Color = seriesHues[i%len(seriesHues)]
		}
		l.Width = vg.Points(1.6)
		p.Add(l)
		p.Legend.Add(legendName(d.Name, len(ds)), l)
	}
	p.Y.Min, p.Y.Max = 0, 1
	p.X.Min, p.X.Max = float64(-r), float64(r)
	c.Caption = "The two clip lines bound the pairs a pitch scheme keeps apart; the curve's rise between them is the share inside."
	drawSchemes(p, schemes, 0, 1, p.X.Min, p.X.Max)
	return c
}

// drawSchemes draws the first scheme's bucket edges as thin dashed lines and every
// scheme's clip as a solid line, within the x range.
func drawSchemes(p *plot.Plot, schemes []Scheme, y0, y1, xmin, xmax float64) {
	vline := func(x float64, col color.Color, width vg.Length, dash []vg.Length) *plotter.Line {
		l, err := plotter.NewLine(plotter.XYs{{X: x, Y: y0}, {X: x, Y: y1}})
		if err != nil {
			return nil
		}
		l.Color, l.Width, l.Dashes = col, width, dash
		return l
	}
	for i, s := range schemes {
		prefix := ""
		if len(schemes) > 1 {
			prefix = fmt.Sprintf("scheme %d: ", i+1)
		}
		if i == 0 {
			var first *plotter.Line
			for _, e := range s.Edges {
				if e <= xmin || e >= xmax {
					continue
				}
				if l := vline(e, edgeColor, vg.Points(0.5), []vg.Length{vg.Points(2), vg.Points(2)}); l != nil {
					p.Add(l)
					if first == nil {
						first = l
					}
				}
			}
			if first != nil {
				p.Legend.Add(prefix+"bucket edges", first)
			}
		}
		var col color.Color = clipColor
		if i > 0 {
			col = seriesHues[(i+3)%len(seriesHues)]
		}
		var first *plotter.Line
		for _, x := range s.Clip {
			if x <= xmin || x >= xmax {
				continue
			}
			if l := vline(x, col, vg.Points(1.8), nil); l != nil {
				p.Add(l)
				if first == nil {
					first = l
				}
			}
		}
		if first != nil {
			p.Legend.Add(prefix+clipLabel(s), first)
		}
	}
}

// clipLabel says where a scheme saturates.
func clipLabel(s Scheme) string {
	switch {
	case s.Kind == "time" && len(s.Clip) == 1:
		return fmt.Sprintf("clip: saturates from %s", thousands(int64(math.Ceil(s.Clip[0]))))
	case s.Kind == "pitch" && len(s.Clip) == 2:
		return fmt.Sprintf("clip: saturates outside %+d..%+d", int64(s.Clip[0]+0.5), int64(s.Clip[1]-0.5))
	}
	return "clip"
}
