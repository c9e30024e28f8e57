package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"maps"
	"os"
	"slices"
	"strconv"

	"holdfast/calib"
)

// cmdCalibEval prints the pressure for each raw value, one per line.
func cmdCalibEval(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib eval", "--calibration FILE.json [--unit U] [--strict] RAW...", stderr)
	file := fs.String("calibration", "", "calibration `file` written by 'holdfast calib fit'")
	unitName := fs.String("unit", "Pa", "pressure `unit` to print in")
	strict := fs.Bool("strict", false, "fail on a raw value outside the calibrated range instead of warning")
	// Raw values may be negative ("-0.25"): take numbers out before flag parsing.
	var raws []string
	var rest []string
	for _, a := range args {
		if _, err := strconv.ParseFloat(a, 64); err == nil {
			raws = append(raws, a)
		} else {
			rest = append(rest, a)
		}
	}
	if err := fs.Parse(rest); err != nil {
		return err
	}
	if *file == "" || len(raws) == 0 || fs.NArg() > 0 {
		fs.Usage()
		if fs.NArg() > 0 {
			return errUsage("calib eval: %q is not a number", fs.Arg(0))
		}
		return errUsage("calib eval needs --calibration and at least one raw value")
	}
	unit, err := calib.ParseUnit(*unitName, calib.Pressure)
	if err != nil {
		return fmt.Errorf("calib eval: --unit: %w", err)
	}
	c, err := loadCalibration(*file)
	if err != nil {
		return fmt.Errorf("calib eval: %w", err)
	}
	for _, s := range raws {
		raw, _ := strconv.ParseFloat(s, 64)
		p, err := c.Apply(raw)
		if _, xerr := c.Extend(raw); err != nil && xerr != nil {
			// No pressure at all (at or below the model's zero signal):
			// refused, never a range limit printed as if it were one.
			return fmt.Errorf("calib eval: %w", xerr)
		}
		if err != nil && *strict {
			return fmt.Errorf("calib eval: %w (without --strict it would print %s)", err, strconv.FormatFloat(unit.FromSI(p), 'g', 6, 64))
		}
		if err != nil {
			fmt.Fprintf(stderr, "holdfast: calib eval: warning: %v: the value is the model extended (extrapolated)\n", err)
		}
		fmt.Fprintln(stdout, strconv.FormatFloat(unit.FromSI(p), 'g', 6, 64))
	}
	return nil
}

// loadCalibration reads a calibration JSON file.
func loadCalibration(path string) (*calib.Calibration, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	var c calib.Calibration
	if err := json.Unmarshal(b, &c); err != nil {
		return nil, fmt.Errorf("%s: %w (was it written by 'holdfast calib fit'?)", path, err)
	}
	return &c, nil
}

func sortedKeys(m map[string]float64) []string { return slices.Sorted(maps.Keys(m)) }
