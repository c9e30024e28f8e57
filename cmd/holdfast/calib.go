package main

import (
	"context"
	"fmt"
	"io"
	"slices"
)

// calibCommands is the complete list of "holdfast calib" subcommands. The
// store-backed ones (point, list, show, activate, reprocess) slot in here.
var calibCommands = map[string]command{
	"fit":  {"fit a model to a CSV of points; the calibration goes to stdout as JSON", cmdCalibFit},
	"eval": {"turn raw values into pressures with a calibration file", cmdCalibEval},
	"plot": {"draw a calibration's points, curve and residuals to SVG or PNG", cmdCalibPlot},
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

With the daemon running, the stored workflow (taking points from a live
gauge, the version history, activating a calibration, recomputing stored
samples) adds its own subcommands here.

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
