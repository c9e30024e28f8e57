package daemon

import (
	"encoding/xml"
	"math"
	"strconv"
	"strings"
	"testing"

	"holdfast/alerts"
)

// svgNode is any element of an SVG document, with its attributes, text and
// children, for tests that look inside the rise plot.
type svgNode struct {
	XMLName xml.Name
	Attrs   []xml.Attr `xml:",any,attr"`
	Text    string     `xml:",chardata"`
	Nodes   []svgNode  `xml:",any"`
}

func (n svgNode) attr(name string) string {
	for _, a := range n.Attrs {
		if a.Name.Local == name {
			return a.Value
		}
	}
	return ""
}

// risePlot is what a rise plot draws: its texts, the centres of its round
// glyphs (the samples, and one in the legend) and its polylines of more than
// two vertices (the fit).
type risePlot struct {
	texts   []string
	glyphs  [][2]float64
	curves  [][][2]float64
	hasRoot bool
}

// parseRisePlot parses an SVG as gonum/plot writes it: a glyph is a closed
// path of two arcs "Mx+r,yA…", a curve a path of straight segments "Mx,yLx,y…".
func parseRisePlot(t *testing.T, svg []byte) risePlot {
	t.Helper()
	var root svgNode
	if err := xml.Unmarshal(svg, &root); err != nil {
		t.Fatalf("rise plot is not XML: %v", err)
	}
	rp := risePlot{hasRoot: root.XMLName.Local == "svg"}
	var walk func(n svgNode)
	walk = func(n svgNode) {
		switch n.XMLName.Local {
		case "text":
			rp.texts = append(rp.texts, strings.TrimSpace(n.Text))
		case "path":
			d := n.attr("d")
			switch {
			case strings.Contains(d, "A"):
				x, y := svgPoint(t, strings.SplitN(strings.TrimPrefix(d, "M"), "A", 2)[0])
				r, _ := strconv.ParseFloat(strings.SplitN(strings.SplitN(d, "A", 2)[1], ",", 2)[0], 64)
				rp.glyphs = append(rp.glyphs, [2]float64{x - r, y})
			case strings.Count(d, "L") >= 2:
				var pts [][2]float64
				for _, v := range strings.Split(strings.TrimPrefix(d, "M"), "L") {
					x, y := svgPoint(t, v)
					pts = append(pts, [2]float64{x, y})
				}
				rp.curves = append(rp.curves, pts)
			}
		}
		for _, c := range n.Nodes {
			walk(c)
		}
	}
	walk(root)
	return rp
}

func svgPoint(t *testing.T, s string) (x, y float64) {
	t.Helper()
	xs, ys, ok := strings.Cut(strings.TrimSuffix(strings.TrimSpace(s), "Z"), ",")
	x, err1 := strconv.ParseFloat(xs, 64)
	y, err2 := strconv.ParseFloat(ys, 64)
	if !ok || err1 != nil || err2 != nil {
		t.Fatalf("path vertex %q is not x,y", s)
	}
	return x, y
}

func (rp risePlot) hasText(s string) bool {
	for _, x := range rp.texts {
		if x == s {
			return true
		}
	}
	return false
}

// checkRisePlot checks what any rise plot of n samples must show: the axis
// labels, one glyph per sample (plus the legend's), and, when the analysis
// fitted a model, a 200-vertex fit curve spanning the samples' times.
func checkRisePlot(t *testing.T, svg []byte, n int, fitted bool) risePlot {
	t.Helper()
	rp := parseRisePlot(t, svg)
	if !rp.hasRoot {
		t.Fatal("rise plot has no <svg> root")
	}
	for _, label := range []string{"time since recording began (s)", "pressure (Pa)"} {
		if !rp.hasText(label) {
			t.Errorf("rise plot lacks the axis label %q; texts %q", label, rp.texts)
		}
	}
	if got := len(rp.glyphs); got != n+1 {
		t.Errorf("rise plot draws %d glyphs, want %d: one per sample and one in the legend", got, n+1)
	}
	var fit [][2]float64
	for _, c := range rp.curves {
		if len(c) == 200 {
			fit = c
		}
	}
	if !fitted {
		if fit != nil {
			t.Error("rise plot draws a fit curve, but no model was fitted")
		}
		return rp
	}
	if fit == nil {
		t.Fatalf("rise plot has no 200-vertex fit curve (polylines of %v vertices)", lens(rp.curves))
	}
	if len(rp.glyphs) < 2 {
		return rp
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, g := range rp.glyphs[:len(rp.glyphs)-1] { // the legend's glyph is drawn last
		lo, hi = min(lo, g[0]), max(hi, g[0])
	}
	if math.Abs(fit[0][0]-lo) > 0.05 || math.Abs(fit[len(fit)-1][0]-hi) > 0.05 {
		t.Errorf("fit curve spans x = %g…%g pt, want the samples' %g…%g pt", fit[0][0], fit[len(fit)-1][0], lo, hi)
	}
	return rp
}

func lens(cs [][][2]float64) []int {
	var n []int
	for _, c := range cs {
		n = append(n, len(c))
	}
	return n
}

// A straight rise of 12 samples: the plot shows 12 glyphs plus the legend's,
// and the fitted line passes through the first and last sample, since the
// record is exactly p = 1e-3 Pa + 1e-5 Pa/s · t (our numbers).
func TestRisePlotDrawsRecordAndFit(t *testing.T) {
	ts := make([]float64, 12)
	ps := make([]float64, 12)
	for i := range ts {
		ts[i], ps[i] = float64(i), 1e-3+1e-5*float64(i)
	}
	res, err := alerts.AnalyzeRise(ts, ps, 0.03, alerts.RiseOptions{})
	if err != nil || res.Fit.Model != alerts.ModelLine {
		t.Fatalf("analysis: %v, model %q; want a line", err, res.Fit.Model)
	}
	svg, err := riseSVG(&HoldTestJSON{ID: "h7", Gauge: "ion", Chamber: "bench"}, ts, ps, res)
	if err != nil {
		t.Fatal(err)
	}
	rp := checkRisePlot(t, svg, len(ts), true)
	if !rp.hasText("hold test h7: ion on bench") || !rp.hasText("fit: line") {
		t.Errorf("rise plot lacks its title or the fit's legend entry; texts %q", rp.texts)
	}
	fit := rp.curves[len(rp.curves)-1]
	first, last := rp.glyphs[0], rp.glyphs[len(ts)-1]
	for _, c := range []struct{ vertex, glyph [2]float64 }{{fit[0], first}, {fit[len(fit)-1], last}} {
		if math.Hypot(c.vertex[0]-c.glyph[0], c.vertex[1]-c.glyph[1]) > 0.05 {
			t.Errorf("fit curve ends at %v pt, want on the sample drawn at %v pt", c.vertex, c.glyph)
		}
	}
	if !(last[1] > first[1]) {
		t.Errorf("last sample drawn at y = %g pt, first at %g pt: want the rise drawn rising", last[1], first[1])
	}

	// With no fit (a record too short to analyse) the samples are drawn alone.
	none, _ := alerts.AnalyzeRise(ts[:3], ps[:3], 0.03, alerts.RiseOptions{})
	if none.Fit.Model != alerts.ModelNone {
		t.Fatalf("3 samples fitted with %q, want no fit", none.Fit.Model)
	}
	svg, err = riseSVG(&HoldTestJSON{ID: "h8", Gauge: "ion", Chamber: "bench"}, ts[:3], ps[:3], none)
	if err != nil {
		t.Fatal(err)
	}
	checkRisePlot(t, svg, 3, false)
}
