package report

import (
	"image/color"
	"math"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"holdfast/calib"
)

// eventLanes is the strip above the pressure panel: one lane per alarm,
// named on the axis, with a bar per activation (open-ended while still
// active), and a lane of hold tests with their results.
func (f *figure) eventLanes() (*plot.Plot, error) {
	p := f.newPanel()
	names := f.n.alarmNames()
	var ticks plot.ConstantTicks
	lane := map[string]float64{}
	next := float64(len(names) + len(f.bad)) // first raised on top, then not-ok readings, then hold tests
	if len(f.n.HoldTests) == 0 {
		next--
	}
	for _, name := range names {
		lane[name] = next
		ticks = append(ticks, plot.Tick{Value: next, Label: name})
		next--
	}
	for _, b := range f.bad {
		if err := f.badMarks(p, b, next); err != nil {
			return nil, err
		}
		ticks = append(ticks, plot.Tick{Value: next, Label: b.gauge + " not ok"})
		next--
	}
	for _, a := range f.n.Alarms {
		x0, x1, ok := f.period(a)
		if !ok {
			continue
		}
		y := lane[a.Alarm]
		bar, err := plotter.NewPolygon(plotter.XYs{{X: x0, Y: y - 0.32}, {X: x1, Y: y - 0.32}, {X: x1, Y: y + 0.32}, {X: x0, Y: y + 0.32}})
		if err != nil {
			return nil, err
		}
		bar.Color = severityColor(a.Severity)
		bar.LineStyle.Width = 0
		p.Add(bar)
		if a.Active() { // written inside the bar's end
			lb, err := plotter.NewLabels(plotter.XYLabels{XYs: plotter.XYs{{X: x1, Y: y}}, Labels: []string{"still active"}})
			if err != nil {
				return nil, err
			}
			lb.TextStyle[0].Font.Variant, lb.TextStyle[0].Font.Size = "Sans", vg.Points(7.5)
			lb.TextStyle[0].Color = color.White
			lb.TextStyle[0].XAlign, lb.TextStyle[0].YAlign = draw.XRight, draw.YCenter
			lb.Offset = vg.Point{X: -vg.Points(3)}
			p.Add(lb)
		}
	}
	if len(f.n.HoldTests) > 0 {
		if err := f.holdLane(p); err != nil {
			return nil, err
		}
		ticks = append(ticks, plot.Tick{Value: 0, Label: "hold tests"})
	}
	slices.SortFunc(ticks, func(a, b plot.Tick) int { return int(a.Value - b.Value) })
	p.Y.Tick.Marker = ticks
	f.lanes = len(ticks)
	p.Y.Min, p.Y.Max = -0.6, float64(len(ticks))-0.4
	p.X.Min, p.X.Max = f.xmin, f.xmax
	p.Y.Tick.Length = 0
	return p, nil
}

// holdLane marks each hold test at the middle of its recording, in lane 0,
// with its verdict and leak rate beside it.
func (f *figure) holdLane(p *plot.Plot) error {
	var xy plotter.XYs
	var labels []string
	for _, h := range f.n.HoldTests {
		x := (unixSeconds(h.From) + unixSeconds(h.To)) / 2
		if x < f.xmin || x > f.xmax {
			continue
		}
		xy = append(xy, plotter.XY{X: x, Y: 0})
		labels = append(labels, holdLabel(h))
	}
	if len(xy) == 0 {
		return nil
	}
	sc, err := plotter.NewScatter(xy)
	if err != nil {
		return err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: holdColor, Radius: vg.Points(3.5), Shape: draw.PyramidGlyph{}}
	p.Add(sc)
	lb, err := plotter.NewLabels(plotter.XYLabels{XYs: xy, Labels: labels})
	if err != nil {
		return err
	}
	for i := range lb.TextStyle {
		lb.TextStyle[i].Font.Size, lb.TextStyle[i].Font.Variant = vg.Points(8), "Sans"
		lb.TextStyle[i].YAlign = draw.YCenter
		lb.TextStyle[i].XAlign = draw.XLeft
		if xy[i].X > f.xmin+0.8*(f.xmax-f.xmin) { // near the right edge: text to the left
			lb.TextStyle[i].XAlign = draw.XRight
		}
	}
	lb.Offset = vg.Point{X: vg.Points(6)}
	p.Add(lb)
	f.legend = append(f.legend, legendEntry{name: "hold test (recording between dashed lines)", thumbs: []plot.Thumbnailer{sc}})
	return nil
}

// holdLabel is a hold test's short result: verdict and leak rate.
func holdLabel(h HoldTest) string {
	v := h.Verdict
	if v == "" {
		v = "done"
	}
	if !math.IsNaN(h.LeakRate) && h.Unit.Dim == calib.Throughput {
		v += " " + calib.Format(h.LeakRate, h.Unit)
	}
	return v
}

// legendForShading adds one legend entry per alarm severity present.
func (f *figure) legendForShading() {
	for _, sev := range []string{"critical", "high", "medium", "low", ""} {
		found := false
		for _, a := range f.n.Alarms {
			_, known := severityColors[a.Severity]
			found = found || a.Severity == sev || sev == "" && !known
		}
		if !found {
			continue
		}
		name := "alarm active (" + sev + ")"
		if sev == "" {
			name = "alarm active"
		}
		poly := &plotter.Polygon{Color: severityColor(sev)}
		f.legend = append(f.legend, legendEntry{name: name, thumbs: []plot.Thumbnailer{poly}})
	}
}

// badMarks draws a gauge's not-ok readings as short ticks in lane y.
func (f *figure) badMarks(p *plot.Plot, b badLane, y float64) error {
	xy := make(plotter.XYs, len(b.points))
	for i, pt := range b.points {
		xy[i] = plotter.XY{X: unixSeconds(pt.At), Y: y}
	}
	sc, err := plotter.NewScatter(xy)
	if err != nil {
		return err
	}
	sc.GlyphStyle = draw.GlyphStyle{Color: f.colorOf[b.gauge], Radius: vg.Points(3), Shape: barGlyph{}}
	p.Add(sc)
	return nil
}

// barGlyph is a short vertical stroke: many of them side by side read as
// a band, one alone as a tick.
type barGlyph struct{}

func (barGlyph) DrawGlyph(c *draw.Canvas, sty draw.GlyphStyle, pt vg.Point) {
	c.StrokeLine2(draw.LineStyle{Color: sty.Color, Width: vg.Points(1)}, pt.X, pt.Y-sty.Radius, pt.X, pt.Y+sty.Radius)
}
