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
	p.Title.Text = fmt.Sprintf("hold test %s: %s on %s\n%s", h.ID, h.Gauge, h.Chamber, fitCaption(res))
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
	if res.Span > 0 {
		lo, hi := minMax(ps)
		for i, x := range []float64{res.Start, res.Start + res.Span} {
			l, err := plotter.NewLine(plotter.XYs{{X: x, Y: lo}, {X: x, Y: hi}})
			if err != nil {
				return nil, err
			}
			l.Dashes = []vg.Length{vg.Points(3), vg.Points(2)}
			p.Add(l)
			if i == 0 {
				p.Legend.Add(fmt.Sprintf("window fitted: %.4g s to %.4g s", res.Start, res.Start+res.Span), l)
			}
		}
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

// fitCaption states the fit's result in one line for the plot's title.
func fitCaption(res alerts.RiseResult) string {
	switch {
	case res.Classification == alerts.Inconclusive:
		return "inconclusive: " + shorten(res.Reason, 90)
	case res.UpperBoundOnly:
		return fmt.Sprintf("%s: leak at most %.3g Pa·m³/s (upper bound)", res.Classification, res.LeakUpperBound)
	}
	return fmt.Sprintf("%s: leak %.3g ± %.2g Pa·m³/s (k = %g)", res.Classification, res.LeakRate, res.LeakRateExpanded, res.CoverageFactor)
}

func shorten(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n-1]) + "…"
}

func minMax(v []float64) (lo, hi float64) {
	lo, hi = v[0], v[0]
	for _, x := range v {
		lo, hi = min(lo, x), max(hi, x)
	}
	return lo, hi
}
