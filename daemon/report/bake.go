package report

import (
	"fmt"
	"image/color"
	"math"
	"time"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
)

// A Bake is one bake of the chamber's bake plan that overlaps the period:
// its phases as spans, and its summary.
type Bake struct {
	ID      string
	Phases  []BakeSpan
	Running bool
	Verdict string  // complete, short, or "" while running
	MaxC    float64 // NaN when none
	AtTemp  time.Duration
	HoldFor time.Duration
	HoldC   float64
	// PressBefore and PressAfter are Pa; NaN when none.
	PressBefore, PressAfter float64
	HoldTest                string // the last hold test's verdict and summary, "" when none
}

// A BakeSpan is one phase of a bake, From to To (To zero: still on).
type BakeSpan struct {
	Phase    string // ramp, hold, cool
	From, To time.Time
}

// bakeColors shade a bake's phases in hues the alarm severities do not use
// (those are yellow to red and blue), so a ramp never reads as an alarm.
var bakeColors = map[string]color.RGBA{
	"ramp": {0x00, 0x9E, 0x73, 0xFF}, "hold": {0x88, 0x44, 0xAA, 0xFF}, "cool": {0x66, 0x88, 0x88, 0xFF},
}

// bakeAlpha is the opacity of a phase's shading and of its legend swatch.
const bakeAlpha = 0x30

// legendForBakes adds one legend entry per bake phase drawn.
func (f *figure) legendForBakes() {
	for _, phase := range []string{"ramp", "hold", "cool"} {
		found := false
		for _, b := range f.n.Bakes {
			for _, s := range b.Phases {
				found = found || s.Phase == phase
			}
		}
		if found {
			poly := &plotter.Polygon{Color: translucent(bakeColors[phase], bakeAlpha)}
			f.legend = append(f.legend, legendEntry{name: "bake " + phase, thumbs: []plot.Thumbnailer{poly}})
		}
	}
}

// shadeBakes shades the temperature panel behind each bake's phases.
func (f *figure) shadeBakes(p *plot.Plot, ymin, ymax float64) {
	for _, b := range f.n.Bakes {
		for _, s := range b.Phases {
			x0, x1 := max(unixSeconds(s.From), f.xmin), f.xmax
			if !s.To.IsZero() {
				x1 = min(unixSeconds(s.To), f.xmax)
			}
			if !(x1 > x0) {
				continue
			}
			poly, err := plotter.NewPolygon(plotter.XYs{{X: x0, Y: ymin}, {X: x1, Y: ymin}, {X: x1, Y: ymax}, {X: x0, Y: ymax}})
			if err != nil {
				continue
			}
			poly.Color = translucent(bakeColors[s.Phase], bakeAlpha)
			poly.LineStyle.Width = 0
			p.Add(poly)
		}
	}
}

// bakeText is a bake's line of the header.
func (n *Night) bakeText(b Bake) string {
	state := b.Verdict
	if b.Running {
		state = "running, " + b.Phases[len(b.Phases)-1].Phase
	}
	s := fmt.Sprintf("bake %s (%s): %s at %g °C of %s asked", b.ID, state, Duration(b.AtTemp), b.HoldC, Duration(b.HoldFor))
	if !math.IsNaN(b.MaxC) {
		s += fmt.Sprintf(", maximum %.1f °C", b.MaxC)
	}
	if !math.IsNaN(b.PressBefore) {
		s += fmt.Sprintf(", pressure before %.3g Pa", b.PressBefore)
	}
	if !math.IsNaN(b.PressAfter) {
		s += fmt.Sprintf(", after %.3g Pa", b.PressAfter)
	}
	if b.HoldTest != "" {
		s += "; last hold test " + b.HoldTest
	}
	return s
}
