package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"

	"holdfast/calib"
)

// cmdCalibFit fits a model to a CSV of points and writes the calibration as JSON.
func cmdCalibFit(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib fit", "--points FILE.csv --model MODEL [flags]", stderr)
	points := fs.String("points", "", "CSV `file` with a header naming the columns raw and reference; # starts a comment line")
	model := fs.String("model", "", "model: "+strings.Join(calib.Models(), ", "))
	refUnit := fs.String("reference-unit", "Pa", "`unit` of reference cells written as bare numbers")
	degree := fs.Int("degree", 0, "polynomial degree for -model poly (0: 3, or fewer when there are few points)")
	refU := fs.String("reference-uncertainty", "0", "the reference's expanded uncertainty (k = 2) relative to reading, e.g. 0.5% or 0.005")
	resolution := fs.Float64("resolution", 0, "smallest step of the raw signal (0: taken from the digits written in the CSV)")
	gauge := fs.String("gauge", "", "gauge `name` to record in the calibration")
	note := fs.String("note", "", "free `text` to record in the calibration")
	quiet := fs.Bool("quiet", false, "do not print the fit report on stderr")
	_ = fs.Bool("json", true, "accepted for symmetry with other commands: the calibration on stdout is always JSON")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *points == "" || *model == "" || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("calib fit needs --points and --model and no other arguments")
	}
	unit, err := calib.ParseUnit(*refUnit, calib.Pressure)
	if err != nil {
		return fmt.Errorf("calib fit: --reference-unit: %w", err)
	}
	u, err := parseFraction(*refU)
	if err != nil {
		return fmt.Errorf("calib fit: --reference-uncertainty: %w", err)
	}
	pts, step, err := readPoints(*points, unit)
	if err != nil {
		return fmt.Errorf("calib fit: %w", err)
	}
	if *resolution > 0 {
		step = *resolution
	}
	c, err := calib.Fit(*model, pts, calib.FitOptions{Degree: *degree, ReferenceUncertainty: u, Resolution: step})
	if err != nil {
		return fmt.Errorf("calib fit: %s: %w", *points, err)
	}
	c.ReferenceUnit, c.Gauge, c.Note = unit.Name, *gauge, *note
	out, err := json.MarshalIndent(c, "", "  ")
	if err != nil {
		return fmt.Errorf("calib fit: %w", err)
	}
	if !*quiet {
		writeReport(stderr, c, unit)
	}
	_, err = fmt.Fprintf(stdout, "%s\n", out)
	return err
}

// parseFraction reads "0.5%" as 0.005 and "0.005" as itself.
func parseFraction(s string) (float64, error) {
	t := strings.TrimSpace(s)
	scale := 1.0
	if strings.HasSuffix(t, "%") {
		t, scale = strings.TrimSpace(strings.TrimSuffix(t, "%")), 0.01
	}
	v, err := strconv.ParseFloat(t, 64)
	if err != nil || !(v*scale >= 0 && v*scale < 1) {
		return 0, fmt.Errorf("%q: want a fraction such as 0.005 or a percentage such as 0.5%%", s)
	}
	return v * scale, nil
}

// writeReport prints the fit report for people.
func writeReport(w io.Writer, c *calib.Calibration, unit calib.Unit) {
	f := c.Fit
	fmt.Fprintf(w, "model %s: %d points, %d parameters (%s)\n", c.Model, f.Points, f.Parameters, f.Method)
	for _, k := range sortedKeys(c.Parameters) {
		fmt.Fprintf(w, "  %-15s %.8g\n", k, c.Parameters[k])
	}
	fmt.Fprintf(w, "fit: rms %.3g %%, largest %.3g %%, scatter %.3g %% (relative to the reference)\n", 100*f.RMS, 100*f.Max, 100*f.Scatter)
	v := c.Valid
	fmt.Fprintf(w, "valid: raw %.6g … %.6g, pressure %s … %s\n", v.RawMin, v.RawMax, calib.Format(v.PressureMin, unit), calib.Format(v.PressureMax, unit))
	fmt.Fprintf(w, "uncertainty (k = %g; reference %.3g %%, resolution %g):\n", c.Uncertainty.K, 100*c.Uncertainty.ReferenceExpanded, c.Uncertainty.Resolution)
	for _, r := range c.Uncertainty.Ranges {
		fmt.Fprintf(w, "  %s … %s: ±%.3g %% (reference %.3g, fit %.3g, resolution %.3g %%)\n",
			calib.Format(r.From, unit), calib.Format(r.To, unit), 100*r.Expanded, 100*r.Reference, 100*r.Fit, 100*r.Resolution)
	}
	fmt.Fprintf(w, "%5s %5s %12s %14s %14s %9s\n", "point", "line", "raw", "reference", "fitted", "residual")
	for i, p := range c.Points {
		fitted, _ := c.Apply(p.Raw)
		fmt.Fprintf(w, "%5d %5d %12.6g %14s %14s %8.3f%%\n", i+1, p.Line, p.Raw,
			strconv.FormatFloat(unit.FromSI(p.Reference), 'g', 6, 64), strconv.FormatFloat(unit.FromSI(fitted), 'g', 6, 64), percent3(f.Residuals[i]))
	}
	for _, n := range f.Notes {
		fmt.Fprintf(w, "note: %s\n", n)
	}
	if f.Max > 0.1 {
		fmt.Fprintf(w, "note: a point is off the curve by %.0f %%: check it, or try another model\n", 100*f.Max)
	}
}

// percent3 is x in per cent rounded to three decimals, with a residual that
// rounds to zero shown as 0.000 rather than -0.000.
func percent3(x float64) float64 {
	r := math.Round(x*1e5) / 1e3
	if r == 0 {
		return 0
	}
	return r
}
