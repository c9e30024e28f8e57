package main

import (
	"bytes"
	"context"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"holdfast/calib"
)

// cmdCalibPlot draws a calibration file to SVG or PNG.
func cmdCalibPlot(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib plot", "--calibration FILE.json -o FILE.svg|FILE.png [--unit U]", stderr)
	file := fs.String("calibration", "", "calibration `file` written by 'holdfast calib fit'")
	out := fs.String("o", "", "output `file`; .svg or .png")
	unitName := fs.String("unit", "Pa", "pressure `unit` for the axis")
	if err := fs.Parse(args); err != nil {
		return err
	}
	ext := strings.ToLower(filepath.Ext(*out))
	if *file == "" || (ext != ".svg" && ext != ".png") || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("calib plot needs --calibration and -o ending in .svg or .png")
	}
	unit, err := calib.ParseUnit(*unitName, calib.Pressure)
	if err != nil {
		return fmt.Errorf("calib plot: --unit: %w", err)
	}
	c, err := loadCalibration(*file)
	if err != nil {
		return fmt.Errorf("calib plot: %w", err)
	}
	var buf bytes.Buffer
	if err := renderCalibration(&buf, c, unit, ext[1:]); err != nil {
		return fmt.Errorf("calib plot: %w", err)
	}
	if err := os.WriteFile(*out, buf.Bytes(), 0o644); err != nil {
		return fmt.Errorf("calib plot: %w", err)
	}
	fmt.Fprintf(stdout, "wrote %s\n", *out)
	return nil
}

// renderCalibration draws the points and curve (log pressure) above the
// relative residuals, sharing the raw axis.
func renderCalibration(w io.Writer, c *calib.Calibration, unit calib.Unit, format string) error {
	top, err := curvePlot(c, unit)
	if err != nil {
		return err
	}
	bottom, err := residualPlot(c)
	if err != nil {
		return err
	}
	width, height := 16*vg.Centimeter, 16*vg.Centimeter
	var cv vg.CanvasWriterTo
	if format == "png" {
		img := vgimg.New(width, height)
		cv = vgimg.PngCanvas{Canvas: img}
	} else {
		cv = vgsvg.New(width, height)
	}
	dc := draw.New(cv)
	plots := [][]*plot.Plot{{top}, {bottom}}
	tiles := draw.Tiles{Rows: 2, Cols: 1, PadTop: vg.Millimeter, PadBottom: vg.Millimeter, PadLeft: vg.Millimeter, PadRight: 3 * vg.Millimeter, PadY: 4 * vg.Millimeter}
	canvases := plot.Align(plots, tiles, dc)
	top.Draw(canvases[0][0])
	bottom.Draw(canvases[1][0])
	_, err = cv.WriteTo(w)
	return err
}

// The plot's colours: reference points, the fitted curve and the residuals
// each have their own, so a reader (and the tests) can tell them apart.
var (
	pointColor    = color.RGBA{R: 200, A: 255}
	curveColor    = color.RGBA{G: 80, B: 180, A: 255}
	residualColor = color.RGBA{G: 120, A: 255}
)

func curvePlot(c *calib.Calibration, unit calib.Unit) (*plot.Plot, error) {
	p := plot.New()
	p.Title.Text = strings.TrimSpace(fmt.Sprintf("%s calibration %s", c.Model, c.Gauge))
	p.X.Label.Text = "raw signal"
	p.Y.Label.Text = "pressure (" + unit.Symbol() + ")"
	p.Y.Scale = plot.LogScale{}
	p.Y.Tick.Marker = plot.LogTicks{Prec: -1}
	var pts, line plotter.XYs
	for _, pt := range c.Points { // log axes need values above zero
		if v := unit.FromSI(pt.Reference); v > 0 {
			pts = append(pts, plotter.XY{X: pt.Raw, Y: v})
		}
	}
	lo, hi := c.Valid.RawMin, c.Valid.RawMax
	for i := 0; i <= 300; i++ {
		x := lo + (hi-lo)*float64(i)/300
		if v, err := c.Apply(x); err == nil && unit.FromSI(v) > 0 && !math.IsInf(v, 0) {
			line = append(line, plotter.XY{X: x, Y: unit.FromSI(v)})
		}
	}
	if len(pts) == 0 || len(line) < 2 {
		return nil, fmt.Errorf("nothing to draw: no positive pressures in the calibration")
	}
	sc, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, err
	}
	sc.Color = pointColor
	ln, err := plotter.NewLine(line)
	if err != nil {
		return nil, err
	}
	ln.Color = curveColor
	p.Add(plotter.NewGrid(), ln, sc)
	p.Legend.Add("reference points", sc)
	p.Legend.Add("fitted curve", ln)
	p.Legend.Left, p.Legend.Top = true, true
	return p, nil
}

func residualPlot(c *calib.Calibration) (*plot.Plot, error) {
	p := plot.New()
	p.X.Label.Text = "raw signal"
	p.Y.Label.Text = "residual (%)"
	var xy plotter.XYs
	for i, pt := range c.Points {
		if i < len(c.Fit.Residuals) {
			xy = append(xy, plotter.XY{X: pt.Raw, Y: 100 * c.Fit.Residuals[i]})
		}
	}
	sc, err := plotter.NewScatter(xy)
	if err != nil {
		return nil, err
	}
	sc.Color = residualColor
	zero, err := plotter.NewLine(plotter.XYs{{X: c.Valid.RawMin, Y: 0}, {X: c.Valid.RawMax, Y: 0}})
	if err != nil {
		return nil, err
	}
	p.Add(plotter.NewGrid(), zero, sc)
	return p, nil
}
