package main

import (
	"context"
	"fmt"
	"io"
	"text/tabwriter"
	"time"

	"holdfast/calib"
	"holdfast/daemon/calibstore"
)

// cmdCalibList lists the stored versions.
func cmdCalibList(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib list", "[--gauge G] [--json]", stderr)
	api := addAPIFlags(fs)
	gauge := fs.String("gauge", "", "only this gauge's versions")
	asJSON := fs.Bool("json", false, "print JSON")
	if err := fs.Parse(args); err != nil {
		return err
	}
	var recs []liveCal
	if err := api.do(ctx, "GET", "/api/v1/calibrations?gauge="+queryEscape(*gauge), nil, &recs); err != nil {
		return fmt.Errorf("calib list: %w", err)
	}
	if *asJSON {
		return printJSON(stdout, recs)
	}
	tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "id\tgauge\tstate\tmodel\tpoints\trms\tmax\tcreated\tnotes")
	for _, r := range recs {
		f := r.Calibration.Fit
		fmt.Fprintf(tw, "%d\t%s\t%s\t%s\t%d\t%.3g %%\t%.3g %%\t%s\t%s\n", r.ID, r.Gauge, r.State, r.Model, f.Points, 100*f.RMS, 100*f.Max, r.Created.Format(time.RFC3339), r.Notes)
	}
	return tw.Flush()
}

// cmdCalibShow prints one version: its history and fit report.
func cmdCalibShow(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib show", "ID [--json]", stderr)
	api := addAPIFlags(fs)
	asJSON := fs.Bool("json", false, "print JSON")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	id, err := oneID(fs, pos, "calib show")
	if err != nil {
		return err
	}
	var r liveCal
	if err := api.do(ctx, "GET", fmt.Sprintf("/api/v1/calibrations/%d", id), nil, &r); err != nil {
		return fmt.Errorf("calib show: %w", err)
	}
	if *asJSON {
		return printJSON(stdout, r)
	}
	fmt.Fprintf(stdout, "calibration %d of %s: %s, fitted to points %v\n", r.ID, r.Gauge, r.State, r.PointIDs)
	for _, c := range r.History {
		fmt.Fprintf(stdout, "  %s %s %s\n", c.At.Format(time.RFC3339), c.Action, c.Note)
	}
	if r.Notes != "" {
		fmt.Fprintf(stdout, "notes: %s\n", r.Notes)
	}
	writeReport(stdout, r.Calibration, calib.Pressure.Base())
	return nil
}

// cmdCalibActivate makes a version its gauge's active one, live.
func cmdCalibActivate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib activate", "ID [--note TEXT]", stderr)
	api := addAPIFlags(fs)
	note := fs.String("note", "", "why, kept in the version's history and the audit record")
	pos, err := parseArgs(fs, args)
	if err != nil {
		return err
	}
	id, err := oneID(fs, pos, "calib activate")
	if err != nil {
		return err
	}
	var out struct {
		Gauge    string `json:"gauge"`
		Replaced uint32 `json:"replaced"`
		Covers   string `json:"covers"`
		Outside  string `json:"outside"`
	}
	if err := api.do(ctx, "POST", fmt.Sprintf("/api/v1/calibrations/%d/activate", id), map[string]string{"note": *note}, &out); err != nil {
		return fmt.Errorf("calib activate: %w", err)
	}
	fmt.Fprintf(stdout, "calibration %d is active for %s from its next reading (replaced %s)\n", id, out.Gauge, versionName(out.Replaced))
	if out.Covers != "" {
		fmt.Fprintf(stdout, "fitted over %s; outside that the gauge reads on %s\n", out.Covers, out.Outside)
	}
	return nil
}

// cmdCalibRetire puts a gauge back on its instrument's own curve.
func cmdCalibRetire(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib retire", "--gauge G [--note TEXT]", stderr)
	api := addAPIFlags(fs)
	gauge := fs.String("gauge", "", "gauge `name`")
	note := fs.String("note", "", "why, kept in the audit record")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *gauge == "" || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("calib retire needs --gauge")
	}
	var out struct {
		Replaced uint32 `json:"replaced"`
	}
	if err := api.do(ctx, "POST", "/api/v1/calibrations/retire", map[string]string{"gauge": *gauge, "note": *note}, &out); err != nil {
		return fmt.Errorf("calib retire: %w", err)
	}
	fmt.Fprintf(stdout, "%s uses the instrument's own curve from its next reading (retired %s)\n", *gauge, versionName(out.Replaced))
	return nil
}

// cmdCalibAudit lists activations, retirements and reprocessing runs.
func cmdCalibAudit(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("calib audit", "[--gauge G] [--json]", stderr)
	api := addAPIFlags(fs)
	gauge := fs.String("gauge", "", "only this gauge's records")
	asJSON := fs.Bool("json", false, "print JSON")
	if err := fs.Parse(args); err != nil {
		return err
	}
	var as []calibstore.Audit
	if err := api.do(ctx, "GET", "/api/v1/calibrations/audit?gauge="+queryEscape(*gauge), nil, &as); err != nil {
		return fmt.Errorf("calib audit: %w", err)
	}
	if *asJSON {
		return printJSON(stdout, as)
	}
	for _, a := range as {
		fmt.Fprintf(stdout, "%d %s %s %s: %s", a.ID, a.At.Format(time.RFC3339), a.Gauge, a.Action, versionName(a.Calibration))
		switch a.Action {
		case "reprocess":
			fmt.Fprintf(stdout, " over %s … %s: %d samples, %d changed, %d flagged kept; %s", a.From.Format(time.RFC3339), a.To.Format(time.RFC3339), a.Samples, a.Changed, a.KeptFlags, a.Status)
			for _, r := range a.Previous {
				fmt.Fprintf(stdout, "\n    before: %s for %d samples %s … %s", versionName(r.Calibration), r.Samples, r.From.Format(time.RFC3339), r.To.Format(time.RFC3339))
			}
		default:
			fmt.Fprintf(stdout, " (replaced %s)", versionName(a.Replaced))
		}
		if a.Note != "" {
			fmt.Fprintf(stdout, " — %s", a.Note)
		}
		fmt.Fprintln(stdout)
	}
	return nil
}

// versionName names a calibration id for people.
func versionName(id uint32) string {
	if id == 0 {
		return "the instrument's own curve"
	}
	return fmt.Sprintf("calibration %d", id)
}
