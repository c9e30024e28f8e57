package main

import (
	"context"
	"fmt"
	"io"
	"strings"
	"text/tabwriter"
	"time"

	"holdfast/calib"
	"holdfast/daemon/calibstore"
)

const pointSynopsis = `--gauge G (--reference P | --column-height H | --reference-gauge R) [flags]

Takes one calibration point on the running daemon: the gauge's raw signal
averaged over the last --window (from the samples already stored), paired
with the reference. If the reading is still drifting by more than
--max-drift over the window, the point is refused with how much it drifts
and about how long to wait. The reference is one of:
  --reference 540Pa          an absolute pressure read off the reference
  --column-height 6cm        a closed-top liquid column; the liquid comes from
                             the gauge's calibration.reference_fluid in the
                             config, or from --density (and the flags below)
  --reference-gauge cdg      another gauge of the daemon, averaged over the
                             same window (it must hold steady too)
An open U-tube gives a difference, not an absolute pressure: work out the
absolute pressure yourself and pass --reference.`

// cmdCalibPoint takes one calibration point on the running daemon.
func cmdCalibPoint(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib point", pointSynopsis, stderr)
	api := addAPIFlags(fs)
	gauge := fs.String("gauge", "", "gauge `name`")
	ref := fs.String("reference", "", "reference `pressure` with its unit, e.g. 540Pa or 4.05Torr")
	height := fs.String("column-height", "", "`height` of a closed-top liquid column, e.g. 6cm")
	refGauge := fs.String("reference-gauge", "", "another gauge `name` to use as the reference")
	density := fs.String("density", "", "column liquid `density` (overrides the config), e.g. 870kg/m3")
	densityAt := fs.String("density-at", "", "`temperature` the density is quoted at (default 20C)")
	expansion := fs.Float64("expansion", 0, "the liquid's volumetric expansion coefficient, per kelvin")
	fluidT := fs.String("fluid-temperature", "", "the liquid's `temperature` now, e.g. 23.5C")
	gravity := fs.Float64("gravity", 0, "local gravity in m/s2 (default: from the config, else standard)")
	window := fs.String("window", "60s", "average over this `duration` before --at")
	maxDrift := fs.String("max-drift", "0.5%", "largest relative change over the window to accept")
	at := fs.String("at", "", "end of the window (`time`; default now on the daemon's clock)")
	note := fs.String("note", "", "free `text` kept with the point")
	asJSON := fs.Bool("json", false, "print the stored point as JSON")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *gauge == "" || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("calib point needs --gauge and one reference")
	}
	body := map[string]any{"gauge": *gauge, "reference_gauge": *refGauge, "note": *note}
	var errs []string
	quantity := func(name, s string, d calib.Dimension) (float64, bool) {
		if s == "" {
			return 0, false
		}
		v, err := calib.Parse(s, d)
		if err != nil {
			errs = append(errs, fmt.Sprintf("--%s: %v", name, err))
		}
		return v, err == nil
	}
	if v, ok := quantity("reference", *ref, calib.Pressure); ok {
		body["reference_pa"] = v
	}
	if v, ok := quantity("column-height", *height, calib.Length); ok {
		body["column_height_m"] = v
	}
	fluid := map[string]any{}
	if v, ok := quantity("density", *density, calib.Density); ok {
		fluid["density_kg_m3"], fluid["expansion_per_k"] = v, *expansion
	}
	if v, ok := quantity("density-at", *densityAt, calib.Temperature); ok {
		fluid["density_at_c"] = v
	}
	if v, ok := quantity("fluid-temperature", *fluidT, calib.Temperature); ok {
		fluid["temperature_c"] = v
	}
	if *gravity != 0 {
		fluid["gravity_m_s2"] = *gravity
	}
	if len(fluid) > 0 {
		body["fluid"] = fluid
	}
	if d, err := calib.ParseDuration(*window); err != nil {
		errs = append(errs, fmt.Sprintf("--window: %v", err))
	} else {
		body["window_seconds"] = d.Seconds()
	}
	if f, err := parseFraction(*maxDrift); err != nil {
		errs = append(errs, fmt.Sprintf("--max-drift: %v", err))
	} else {
		body["max_drift"] = f
	}
	if t, err := parseWhen("at", *at); err != nil {
		errs = append(errs, err.Error())
	} else if !t.IsZero() {
		body["at"] = t
	}
	if len(errs) > 0 {
		return fmt.Errorf("calib point: %s", strings.Join(errs, "; "))
	}
	var p calibstore.Point
	if err := api.do(ctx, "POST", "/api/v1/calibrations/points", body, &p); err != nil {
		return fmt.Errorf("calib point: %w", err)
	}
	if *asJSON {
		return printJSON(stdout, p)
	}
	fmt.Fprintf(stdout, "point %d of %s: raw %.6g (sd %.3g, %d samples over %s ending %s), reference %s\n",
		p.ID, p.Gauge, p.Raw, p.RawStdDev, p.Samples, p.Window, p.Taken.Format(time.RFC3339), calib.Format(p.Reference, calib.Pressure.Base()))
	fmt.Fprintf(stdout, "drift %+.3g %% ± %.3g %% over the window; reference: %s\n", 100*p.Drift, 100*p.DriftSE, p.Source)
	return nil
}

// cmdCalibPoints lists a gauge's stored points.
func cmdCalibPoints(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib points", "[--gauge G] [--json]", stderr)
	api := addAPIFlags(fs)
	gauge := fs.String("gauge", "", "only this gauge's points")
	asJSON := fs.Bool("json", false, "print JSON")
	if err := fs.Parse(args); err != nil {
		return err
	}
	var pts []calibstore.Point
	if err := api.do(ctx, "GET", "/api/v1/calibrations/points?gauge="+queryEscape(*gauge), nil, &pts); err != nil {
		return fmt.Errorf("calib points: %w", err)
	}
	if *asJSON {
		return printJSON(stdout, pts)
	}
	tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "id\tgauge\ttaken\traw\treference (Pa)\tsamples\tdrift\tsource\texcluded")
	for _, p := range pts {
		fmt.Fprintf(tw, "%d\t%s\t%s\t%.6g\t%.6g\t%d\t%+.2g %%\t%s\t%s\n", p.ID, p.Gauge, p.Taken.Format(time.RFC3339), p.Raw, p.Reference, p.Samples, 100*p.Drift, p.Source, p.Excluded)
	}
	return tw.Flush()
}

// cmdCalibExclude leaves a point out of later fits, keeping it stored.
func cmdCalibExclude(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib exclude", "POINT-ID --reason TEXT", stderr)
	api := addAPIFlags(fs)
	reason := fs.String("reason", "", "why the point is left out (kept with it)")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	if len(pos) != 1 || *reason == "" {
		fs.Usage()
		return errUsage("calib exclude needs one point id and --reason")
	}
	var p calibstore.Point
	if err := api.do(ctx, "POST", "/api/v1/calibrations/points/"+pos[0]+"/exclude", map[string]string{"reason": *reason}, &p); err != nil {
		return fmt.Errorf("calib exclude: %w", err)
	}
	fmt.Fprintf(stdout, "point %d of %s excluded from later fits (%s); it stays stored\n", p.ID, p.Gauge, p.Excluded)
	return nil
}

func queryEscape(s string) string {
	return strings.NewReplacer("%", "%25", "&", "%26", "#", "%23", " ", "%20", "+", "%2B").Replace(s)
}
