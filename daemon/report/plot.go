package report

import (
	"fmt"
	"image/color"
	"math"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/text"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"holdfast/calib"
)

// Colours: one per gauge (a palette that stays apart for the common
// colour-vision deficiencies), and a shade per alarm severity.
var (
	palette = []color.RGBA{
		{0x00, 0x72, 0xB2, 0xFF}, {0xD5, 0x5E, 0x00, 0xFF}, {0x00, 0x9E, 0x73, 0xFF}, {0xCC, 0x79, 0xA7, 0xFF},
		{0x56, 0xB4, 0xE9, 0xFF}, {0xE6, 0x9F, 0x00, 0xFF}, {0x33, 0x33, 0x33, 0xFF}, {0x88, 0x66, 0x00, 0xFF},
	}
	severityColors = map[string]color.RGBA{
		"low": {0x4A, 0x90, 0xD9, 0xFF}, "medium": {0xE0, 0xA0, 0x00, 0xFF},
		"high": {0xE0, 0x60, 0x20, 0xFF}, "critical": {0xC0, 0x10, 0x10, 0xFF},
	}
	holdColor = color.RGBA{0x40, 0x40, 0x90, 0xFF}
	gridColor = color.Gray{Y: 0xDD}
)

func severityColor(s string) color.RGBA {
	if c, ok := severityColors[s]; ok {
		return c
	}
	return color.RGBA{0x90, 0x90, 0x90, 0xFF}
}

func translucent(c color.RGBA, a uint8) color.NRGBA {
	return color.NRGBA{R: c.R, G: c.G, B: c.B, A: a}
}

// A legendEntry is one item of the legend drawn below the panels.
type legendEntry struct {
	name   string
	thumbs []plot.Thumbnailer
}

// figure holds the panels of one report picture.
type figure struct {
	n       *Night
	xmin    float64 // Unix seconds
	xmax    float64
	events  *plot.Plot // alarm and hold-test lanes; nil when there are none
	press   *plot.Plot
	temp    *plot.Plot // nil without temperature gauges
	legend  []legendEntry
	lanes   int
	colorOf map[string]color.RGBA
	bad     []badLane // gauges with not-ok readings, for the event lanes
}

// A badLane is one gauge's not-ok readings, drawn as marks in a lane of
// their own (in the panels they are only gaps).
type badLane struct {
	gauge  string
	points []Point
}

func newFigure(n *Night) (*figure, error) {
	f := &figure{n: n, xmin: unixSeconds(n.From), xmax: unixSeconds(n.To), colorOf: map[string]color.RGBA{}}
	if !(f.xmax > f.xmin) {
		return nil, fmt.Errorf("empty period %s to %s", n.From.Format(time.RFC3339), n.To.Format(time.RFC3339))
	}
	for i, s := range n.Series {
		f.colorOf[s.Gauge] = palette[i%len(palette)]
	}
	var err error
	if f.press, err = f.panel("pressure", n.Pressure); err != nil {
		return nil, err
	}
	if hasKind(n.Series, "temperature") {
		if f.temp, err = f.panel("temperature", n.Temperature); err != nil {
			return nil, err
		}
	}
	if len(n.Alarms) > 0 || len(n.HoldTests) > 0 || len(f.bad) > 0 {
		if f.events, err = f.eventLanes(); err != nil {
			return nil, err
		}
	}
	f.legendForShading()
	if f.temp != nil {
		f.legendForBakes()
	}
	bottom := f.press
	if f.temp != nil {
		bottom = f.temp
	}
	bottom.X.Tick.Marker = timeTicks{loc: n.loc()}
	bottom.X.Label.Text = "time (" + zoneName(n.To.In(n.loc())) + ")"
	return f, nil
}

func hasKind(ss []Series, kind string) bool {
	for _, s := range ss {
		if s.Kind == kind {
			return true
		}
	}
	return false
}

func unixSeconds(t time.Time) float64 { return float64(t.UnixNano()) / 1e9 }

// newPanel is an empty panel on the period's time axis, with unlabelled
// time ticks (only the bottom panel carries the labels).
func (f *figure) newPanel() *plot.Plot {
	p := plot.New()
	for _, st := range []*text.Style{&p.Title.TextStyle, &p.X.Label.TextStyle, &p.Y.Label.TextStyle, &p.X.Tick.Label, &p.Y.Tick.Label} {
		st.Font.Variant = "Sans"
	}
	p.X.Tick.Label.Font.Size, p.Y.Tick.Label.Font.Size = vg.Points(9), vg.Points(9)
	p.X.Label.TextStyle.Font.Size, p.Y.Label.TextStyle.Font.Size = vg.Points(10), vg.Points(10)
	p.X.Min, p.X.Max = f.xmin, f.xmax
	p.X.Tick.Marker = timeTicks{loc: f.n.loc(), blank: true}
	p.X.Label.Text = ""
	g := plotter.NewGrid()
	g.Vertical.Color, g.Horizontal.Color = gridColor, gridColor
	p.Add(g)
	return p
}

// panel draws every series of kind in unit u, broken wherever a gap or a
// not-ok reading falls, with the alarm periods shaded behind.
func (f *figure) panel(kind string, u calib.Unit) (*plot.Plot, error) {
	p := f.newPanel()
	log := kind == "pressure"
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, s := range f.n.Series {
		if s.Kind != kind {
			continue
		}
		for _, pt := range s.Points {
			if pt.ok(kind) {
				v := u.FromSI(pt.Value)
				lo, hi = min(lo, v), max(hi, v)
			}
		}
	}
	ymin, ymax := yRange(lo, hi, log)
	p.Y.Min, p.Y.Max = ymin, ymax
	p.Y.Label.Text = kind + " (" + u.Symbol() + ")"
	if log {
		// The axis is linear in log10(p): gonum's LogScale places a centred
		// axis label by the arithmetic mean of the range, which on a log
		// axis is near the top.
		p.Y.Tick.Marker = decadeTicks{}
		p.Y.Tick.Label.Handler = powerText{text.Plain{Fonts: font.DefaultCache}}
	}
	f.shadeAlarms(p, ymin, ymax)
	if kind == "temperature" {
		f.shadeBakes(p, ymin, ymax)
	}
	if log {
		f.markHoldTests(p, ymin, ymax)
	}
	for _, s := range f.n.Series {
		if s.Kind != kind {
			continue
		}
		if err := f.drawSeries(p, s, u, log); err != nil {
			return nil, err
		}
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = f.xmin, f.xmax, ymin, ymax // the plotters widened them
	return p, nil
}

// yRange pads a data range: to whole decades on a log axis (returned as
// log10 of the bounds), by 5 % on a linear one; a default when there is no
// data.
func yRange(lo, hi float64, log bool) (float64, float64) {
	if log {
		if math.IsInf(lo, 0) {
			return -3, 5
		}
		// Whole decades, with room so that a line never runs along an edge.
		k0, k1 := math.Floor(math.Log10(lo)-0.05), math.Ceil(math.Log10(hi)+0.05)
		if k1 <= k0 {
			k1 = k0 + 1
		}
		return k0, k1
	}
	if math.IsInf(lo, 0) {
		return 0, 100
	}
	pad := (hi - lo) * 0.05
	if pad == 0 {
		pad = 1
	}
	return lo - pad, hi + pad
}

// runs splits a series into the stretches a line may join: consecutive
// points with a value no further apart than MaxStep. Points without a value
// end a run and are returned apart, as markers; extrapolated points are
// drawn in the line and marked as well.
func runs(s Series) (lines [][]Point, bad []Point) {
	var cur []Point
	flush := func() {
		if len(cur) > 0 {
			lines = append(lines, cur)
		}
		cur = nil
	}
	for _, p := range s.Points {
		if !p.ok(s.Kind) {
			flush()
			bad = append(bad, p)
			continue
		}
		if len(cur) > 0 && s.MaxStep > 0 && p.At.Sub(cur[len(cur)-1].At) > s.MaxStep {
			flush()
		}
		if p.Quality != calib.QualityOK {
			bad = append(bad, p) // extrapolated: drawn, and marked in the lane
		}
		cur = append(cur, p)
	}
	flush()
	return lines, bad
}

func (f *figure) drawSeries(p *plot.Plot, s Series, u calib.Unit, log bool) error {
	c := f.colorOf[s.Gauge]
	lines, bad := runs(s)
	style := draw.LineStyle{Color: c, Width: vg.Points(1.2)}
	for _, run := range lines {
		xy := make(plotter.XYs, len(run))
		for i, pt := range run {
			xy[i] = plotter.XY{X: unixSeconds(pt.At), Y: u.FromSI(pt.Value)}
			if log {
				xy[i].Y = math.Log10(xy[i].Y)
			}
		}
		if len(xy) == 1 { // an isolated reading: a dot, as a line of one point draws nothing
			sc, err := plotter.NewScatter(xy)
			if err != nil {
				return err
			}
			sc.GlyphStyle = draw.GlyphStyle{Color: c, Radius: vg.Points(1.5), Shape: draw.CircleGlyph{}}
			p.Add(sc)
			continue
		}
		l, err := plotter.NewLine(xy)
		if err != nil {
			return err
		}
		l.LineStyle = style
		p.Add(l)
	}
	name := s.Gauge
	if len(s.Points) == 0 {
		name += " (no data)"
	}
	swatch := &plotter.Line{LineStyle: style}
	f.legend = append(f.legend, legendEntry{name: name, thumbs: []plot.Thumbnailer{swatch}})
	if len(bad) > 0 {
		f.bad = append(f.bad, badLane{gauge: s.Gauge, points: bad})
	}
	return nil
}

// period clips an alarm period to the report's span (Unix seconds).
func (f *figure) period(a AlarmPeriod) (float64, float64, bool) {
	x0, x1 := max(unixSeconds(a.Raised), f.xmin), f.xmax
	if !a.Cleared.IsZero() {
		x1 = min(unixSeconds(a.Cleared), f.xmax)
	}
	return x0, x1, x1 > x0
}

func (f *figure) shadeAlarms(p *plot.Plot, ymin, ymax float64) {
	for _, a := range f.n.Alarms {
		x0, x1, ok := f.period(a)
		if !ok {
			continue
		}
		poly, err := plotter.NewPolygon(plotter.XYs{{X: x0, Y: ymin}, {X: x1, Y: ymin}, {X: x1, Y: ymax}, {X: x0, Y: ymax}})
		if err != nil {
			continue
		}
		poly.Color = translucent(severityColor(a.Severity), 0x30)
		poly.LineStyle.Width = 0
		p.Add(poly)
	}
}

// markHoldTests draws each hold test's recording as dashed lines at its
// start and end.
func (f *figure) markHoldTests(p *plot.Plot, ymin, ymax float64) {
	for _, h := range f.n.HoldTests {
		for _, t := range []time.Time{h.From, h.To} {
			x := unixSeconds(t)
			if x < f.xmin || x > f.xmax {
				continue
			}
			l, err := plotter.NewLine(plotter.XYs{{X: x, Y: ymin}, {X: x, Y: ymax}})
			if err != nil {
				continue
			}
			l.LineStyle = draw.LineStyle{Color: holdColor, Width: vg.Points(0.8), Dashes: []vg.Length{vg.Points(3), vg.Points(2)}}
			p.Add(l)
		}
	}
}
