package daemon

import (
	"bytes"
	"fmt"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"holdfast/alerts"
)

// riseSVG draws a hold test's record (points) and the fitted curve (line),
// pressure in Pa against seconds since recording began.
func riseSVG(h *HoldTestJSON, ts, ps []float64, res alerts.RiseResult) ([]byte, error) {
	if len(ts) == 0 {
		return nil, fmt.Errorf("no samples to plot")
	}
	p := plot.New()
	p.Title.Text = fmt.Sprintf("hold test %s: %s on %s", h.ID, h.Gauge, h.Chamber)
	p.X.Label.Text = "time since recording began (s)"
	p.Y.Label.Text = "pressure (Pa)"
	pts := make(plotter.XYs, len(ts))
	for i := range ts {
		pts[i].X, pts[i].Y = ts[i], ps[i]
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, err
	}
	sc.GlyphStyle.Radius = vg.Points(1.5)
	p.Add(plotter.NewGrid(), sc)
	p.Legend.Add("record", sc)
	if res.Fit.Model != alerts.ModelNone {
		fit := make(plotter.XYs, 0, 200)
		for i := range 200 {
			t := res.Start + res.Span*float64(i)/199
			fit = append(fit, plotter.XY{X: t, Y: res.Fit.Pressure(t - res.Start)})
		}
		l, err := plotter.NewLine(fit)
		if err != nil {
			return nil, err
		}
		l.Width = vg.Points(1.5)
		p.Add(l)
		p.Legend.Add("fit: "+string(res.Fit.Model), l)
	}
	p.Legend.Top, p.Legend.Left = true, true
	w, err := p.WriterTo(18*vg.Centimeter, 11*vg.Centimeter, "svg")
	if err != nil {
		return nil, err
	}
	var buf bytes.Buffer
	if _, err := w.WriteTo(&buf); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}
