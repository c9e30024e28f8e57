package main

import (
	"context"
	"fmt"
	"io"
	"slices"
)

// calibCommands is the complete list of "holdfast calib" subcommands.
var calibCommands = map[string]command{
	"fit":      {"fit a CSV of points (--points), or a gauge's stored points on the daemon (--gauge)", cmdCalibFitAny},
	"eval":     {"turn raw values into pressures with a calibration file", cmdCalibEval},
	"plot":     {"draw a calibration file (--calibration) or a stored version (ID) to SVG or PNG", cmdCalibPlotAny},
	"point":    {"take a calibration point from a live gauge against a reference", cmdCalibPoint},
	"points":   {"list the stored calibration points", cmdCalibPoints},
	"exclude":  {"leave a stored point out of later fits (it stays stored)", cmdCalibExclude},
	"list":     {"list the stored calibration versions and which is active", cmdCalibList},
	"show":     {"show one stored version: history, parameters, fit report", cmdCalibShow},
	"activate": {"make a stored version its gauge's active calibration, live", cmdCalibActivate},
	"retire":   {"put a gauge back on its instrument's own curve", cmdCalibRetire},
	"audit":    {"list activations, retirements and reprocessing runs", cmdCalibAudit},
}

const calibWorkflow = `usage: holdfast calib <subcommand> [flags]

Calibrating a gauge means comparing its raw signal with a reference (a
liquid column, a capacitance gauge) at a series of steady pressures, fitting
a curve through the pairs, and then reading pressure from the gauge alone.

Offline, with files:
  1. Record the pairs in a CSV file with a header line naming the columns
     raw and reference; lines starting with # are comments:
         # foreline gauge against the oil column, 2025-03-02
         raw,reference
         0.512,0.98
         1.730,10.4
     The reference is in Pa unless you pass --reference-unit (a cell may
     also carry its own unit, "7.5 Torr"). For a liquid column, "holdfast
     column" turns a height into a pressure.
  2. holdfast calib fit --points foreline.csv --model heat-loss > foreline.json
     Writes the calibration as JSON on stdout and a fit report on stderr:
     parameters, per-point relative residuals, RMS and largest error, the
     valid range and the expanded uncertainty (k = 2) per pressure range.
     Models: pchip (monotone interpolation, any smooth gauge), heat-loss or
     pirani (thermal-conductivity gauges), log-linear (gauges with a volts-
     per-decade output), linear (capacitance gauges), poly (a low-order
     polynomial in log pressure).
  3. holdfast calib eval --calibration foreline.json 0.8 1.2 2.05
     Prints one pressure per line; outside the calibrated range it still
     prints, warns on stderr, and with --strict fails instead.
  4. holdfast calib plot --calibration foreline.json -o foreline.svg
     Draws the points, the curve on a log axis and the residuals.

With the daemon running (holdfast run), against a live gauge:
  1. Hold the chamber at a steady pressure (isolate it, or bleed gas in
     and let it settle), read the reference, and take a point:
         holdfast calib point --gauge foreline --reference 540Pa
         holdfast calib point --gauge foreline --column-height 6cm
         holdfast calib point --gauge foreline --reference-gauge chamber-cdg
     The daemon averages the gauge's raw signal over the last minute
     (--window) from the samples it has stored. If the reading still
     drifts by more than --max-drift (0.5 %) over that window, the point
     is refused with how much it drifts and about how long to wait. For
     --column-height the liquid comes from the gauge's
     calibration.reference_fluid in the config (or --density).
     Repeat at each pressure; 'holdfast calib points' lists them, and
     'holdfast calib exclude ID --reason ...' leaves a bad one out.
  2. holdfast calib fit --gauge foreline --model heat-loss
     Fits the stored points and stores a new version, not yet active,
     with its report (as above).
  3. holdfast calib list --gauge foreline; holdfast calib show 4;
     holdfast calib plot 4 -o foreline-4.svg
  4. holdfast calib activate 4
     Switches the gauge to version 4 from its next reading, no restart;
     every stored sample records the id of the calibration that produced
     its value. 'holdfast calib retire --gauge foreline' goes back to the
     instrument's own curve. Every version stays stored.
  5. holdfast reprocess --gauge foreline --calibration 4 --from "2026-03-02 08:00"
     Recomputes last week's values from their stored raw signal with
     version 4; the raw values are kept, and 'holdfast calib audit'
     shows what was changed and how to undo it.
  Changes need the daemon's token: --token-file (the config's
  http.token_file); --daemon says where the daemon listens.

Taking points means venting, bleeding gas and handling liquid columns:
mercury is toxic, glass under vacuum can implode, and process gases may be
flammable or toxic. Work as your local codes and licensed practice require.
holdfast is a monitoring aid, never a safety interlock: a calibration
changes what the program reports, not how your chamber is protected.

subcommands:
`

// cmdCalib dispatches to a calib subcommand.
func cmdCalib(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" || args[0] == "-help" {
		w := stdout
		if len(args) == 0 {
			w = stderr
		}
		calibUsage(w)
		if len(args) == 0 {
			return errUsage("calib needs a subcommand")
		}
		return nil
	}
	c, ok := calibCommands[args[0]]
	if !ok {
		calibUsage(stderr)
		return fmt.Errorf("calib: unknown subcommand %q", args[0])
	}
	return c.run(ctx, args[1:], stdout, stderr)
}

func calibUsage(w io.Writer) {
	fmt.Fprint(w, calibWorkflow)
	names := make([]string, 0, len(calibCommands))
	for n := range calibCommands {
		names = append(names, n)
	}
	slices.Sort(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-9s %s\n", n, calibCommands[n].summary)
	}
	fmt.Fprintln(w, "\nRun 'holdfast calib <subcommand> --help' for its flags.")
}
