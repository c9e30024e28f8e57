package main

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"holdfast/calib"
	"holdfast/daemon/calibstore"
)

// liveCal is one calibration version as the daemon's API returns it.
type liveCal struct {
	calibstore.Record
	State string `json:"state"`
}

// parseArgs parses flags that may come before or after positional
// arguments ("calib show 3 --json" and "calib show --json 3") and returns
// the positional ones.
func parseArgs(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			return nil, err
		}
		if fs.NArg() == 0 {
			return pos, nil
		}
		pos = append(pos, fs.Arg(0))
		args = fs.Args()[1:]
	}
}

// oneID reads the single version id a subcommand takes.
func oneID(fs *flag.FlagSet, pos []string, what string) (uint32, error) {
	if len(pos) != 1 {
		fs.Usage()
		return 0, errUsage("%s needs one calibration id (see holdfast calib list)", what)
	}
	id, err := strconv.ParseUint(pos[0], 10, 32)
	if err != nil || id == 0 {
		return 0, fmt.Errorf("%s: %q is not a calibration id; ids are whole numbers from 1 (holdfast calib list)", what, pos[0])
	}
	return uint32(id), nil
}

// parseWhen reads a time as RFC 3339 or as local "2006-01-02 15:04[:05]".
func parseWhen(flagName, s string) (time.Time, error) {
	if s == "" {
		return time.Time{}, nil
	}
	for _, layout := range []string{time.RFC3339Nano, "2006-01-02 15:04:05", "2006-01-02 15:04", "2006-01-02T15:04"} {
		if layout == time.RFC3339Nano {
			if t, err := time.Parse(layout, s); err == nil {
				return t, nil
			}
			continue
		}
		if t, err := time.ParseInLocation(layout, s, time.Local); err == nil {
			return t, nil
		}
	}
	return time.Time{}, fmt.Errorf("--%s %q: want a time such as 2026-03-02T14:05:00Z or \"2026-03-02 14:05\" (local)", flagName, s)
}

func printJSON(w io.Writer, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	_, err = fmt.Fprintf(w, "%s\n", b)
	return err
}

// cmdCalibFitAny fits a CSV file offline (--points) or a gauge's stored
// points on the running daemon (--gauge without --points).
func cmdCalibFitAny(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	for _, a := range args {
		if a == "-points" || a == "--points" || strings.HasPrefix(a, "-points=") || strings.HasPrefix(a, "--points=") {
			return cmdCalibFit(ctx, args, stdout, stderr)
		}
	}
	for _, a := range args {
		if a == "-gauge" || a == "--gauge" || strings.HasPrefix(a, "-gauge=") || strings.HasPrefix(a, "--gauge=") {
			return cmdCalibFitLive(ctx, args, stdout, stderr)
		}
	}
	return cmdCalibFit(ctx, args, stdout, stderr)
}

func cmdCalibFitLive(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib fit", `--gauge G --model MODEL [flags]

Fits the gauge's stored points (those not excluded, or --use) on the
running daemon and stores the result as a new version, not yet active:
check its report, then 'holdfast calib activate ID'.`, stderr)
	api := addAPIFlags(fs)
	gauge := fs.String("gauge", "", "gauge `name`")
	model := fs.String("model", "", "model: "+strings.Join(calib.Models(), ", "))
	degree := fs.Int("degree", 0, "polynomial degree for --model poly")
	refU := fs.String("reference-uncertainty", "0", "the reference's expanded uncertainty (k = 2) relative to reading, e.g. 0.5%")
	resolution := fs.Float64("resolution", 0, "smallest step of the raw signal (0: unknown)")
	use := fs.String("use", "", "comma-separated point `ids` to fit (default: every point not excluded)")
	note := fs.String("note", "", "free `text` kept with the version")
	asJSON := fs.Bool("json", false, "print the stored version as JSON")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *gauge == "" || *model == "" || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("calib fit needs --gauge and --model (or --points FILE for a CSV)")
	}
	u, err := parseFraction(*refU)
	if err != nil {
		return fmt.Errorf("calib fit: --reference-uncertainty: %w", err)
	}
	var ids []uint64
	for _, s := range strings.FieldsFunc(*use, func(r rune) bool { return r == ',' || r == ' ' }) {
		id, err := strconv.ParseUint(strings.TrimPrefix(s, "#"), 10, 64)
		if err != nil {
			return fmt.Errorf("calib fit: --use: %q is not a point id", s)
		}
		ids = append(ids, id)
	}
	body := map[string]any{"gauge": *gauge, "model": *model, "degree": *degree, "reference_uncertainty": u,
		"resolution": *resolution, "points": ids, "note": *note}
	var rec liveCal
	if err := api.do(ctx, "POST", "/api/v1/calibrations/fit", body, &rec); err != nil {
		return fmt.Errorf("calib fit: %w", err)
	}
	if *asJSON {
		return printJSON(stdout, rec)
	}
	writeReport(stdout, rec.Calibration, calib.Pressure.Base())
	fmt.Fprintf(stdout, "stored as calibration %d of %s (inactive); apply it with: holdfast calib activate %d\n", rec.ID, rec.Gauge, rec.ID)
	return nil
}

// cmdCalibPlotAny draws a file (--calibration) or a stored version (an id).
func cmdCalibPlotAny(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	for _, a := range args {
		if a == "-calibration" || a == "--calibration" || strings.HasPrefix(a, "-calibration=") || strings.HasPrefix(a, "--calibration=") {
			return cmdCalibPlot(ctx, args, stdout, stderr)
		}
	}
	fs := newFlags("calib plot", "ID -o FILE.svg|FILE.png [--unit U]  (or --calibration FILE.json)", stderr)
	api := addAPIFlags(fs)
	out := fs.String("o", "", "output `file`; .svg or .png")
	unitName := fs.String("unit", "Pa", "pressure `unit` for the axis")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	id, err := oneID(fs, pos, "calib plot")
	if err != nil {
		return err
	}
	var rec liveCal
	if err := api.do(ctx, "GET", fmt.Sprintf("/api/v1/calibrations/%d", id), nil, &rec); err != nil {
		return fmt.Errorf("calib plot: %w", err)
	}
	return writePlot(stdout, rec.Calibration, *out, *unitName)
}

// writePlot renders c to file (.svg or .png) with the pressure axis in unitName.
func writePlot(stdout io.Writer, c *calib.Calibration, file, unitName string) error {
	ext := strings.ToLower(filepath.Ext(file))
	if ext != ".svg" && ext != ".png" {
		return errUsage("calib plot needs -o ending in .svg or .png, got %q", file)
	}
	unit, err := calib.ParseUnit(unitName, calib.Pressure)
	if err != nil {
		return fmt.Errorf("calib plot: --unit: %w", err)
	}
	var buf bytes.Buffer
	if err := renderCalibration(&buf, c, unit, ext[1:]); err != nil {
		return fmt.Errorf("calib plot: %w", err)
	}
	if err := os.WriteFile(file, buf.Bytes(), 0o644); err != nil {
		return fmt.Errorf("calib plot: %w", err)
	}
	fmt.Fprintf(stdout, "wrote %s\n", file)
	return nil
}
