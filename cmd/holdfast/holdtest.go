package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"strings"

	"holdfast/daemon"
)

// cmdHoldTest starts, lists and shows hold tests (pressure-rise tests) on
// the running daemon.
func cmdHoldTest(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	sub, args := firstArg(args)
	if sub == "" {
		sub = "list"
	}
	fs := newFlags("holdtest", "[start --gauge G [--settle 2m] [--duration 10m] [--force] | list | show ID [--svg FILE]] [flags]", stderr)
	api := addAPIFlags(fs)
	gauge := fs.String("gauge", "", "start: the pressure `gauge` that records the rise")
	settle := fs.String("settle", "", "start: wait this long after isolating before recording (default: the gauge's hold_test alarm, else 2m)")
	dur := fs.String("duration", "", "start: record this long (default: the gauge's hold_test alarm, else 10m)")
	svg := fs.String("svg", "", "show: also write the plot of the rise to this `file`")
	force := fs.Bool("force", false, "start: start although the pressure still falls fast or the gauge is out of range (the report keeps the warning)")
	asJSON := fs.Bool("json", false, "print JSON")
	id, err := parseWithName(fs, args, sub == "show", "hold test (its ID, from holdfast holdtest list)")
	if err != nil {
		return err
	}
	switch sub {
	case "start":
		if *gauge == "" {
			fs.Usage()
			return errUsage("holdtest start needs --gauge")
		}
		var h daemon.HoldTestJSON
		body := daemon.HoldTestStartJSON{Gauge: *gauge, Settle: *settle, Duration: *dur, Force: *force}
		if err := api.do(ctx, "POST", "/api/v1/holdtests", body, &h); err != nil {
			return err
		}
		printHoldStart(stdout, h)
		return nil
	case "list":
		var hs []daemon.HoldTestJSON
		if err := api.do(ctx, "GET", "/api/v1/holdtests", nil, &hs); err != nil {
			return err
		}
		if *asJSON {
			return writeIndented(stdout, hs)
		}
		for _, h := range hs {
			fmt.Fprintf(stdout, "%s  %s  %-10s %-9s %-12s %s\n", h.ID, h.Requested.Format("2006-01-02 15:04"), h.Gauge, h.State, h.Verdict, h.Summary)
		}
		return nil
	case "show":
		var h daemon.HoldTestJSON
		if err := api.do(ctx, "GET", "/api/v1/holdtests/"+url.PathEscape(id), nil, &h); err != nil {
			return err
		}
		if *svg != "" {
			n, err := saveSVG(ctx, api, id, *svg)
			if err != nil {
				return err
			}
			w := stdout
			if *asJSON { // keep stdout pure JSON
				w = stderr
			}
			fmt.Fprintf(w, "wrote the plot of hold test %s to %s (%d bytes)\n", id, *svg, n)
		}
		if *asJSON {
			return writeIndented(stdout, h)
		}
		fmt.Fprintf(stdout, "hold test %s on %s (%s), %s\n  recorded %s to %s\n  %s\n", h.ID, h.Gauge, h.Chamber, h.State,
			h.RecordFrom.Format("2006-01-02 15:04:05"), h.RecordTo.Format("15:04:05"), h.Summary)
		printHoldEvidence(stdout, h)
		if h.Error != "" {
			fmt.Fprintf(stdout, "  error: %s\n", h.Error)
		}
		return nil
	}
	fs.Usage()
	return errUsage("unknown holdtest command %q", sub)
}

// printHoldEvidence says what the result rests on: the record's coverage
// and range, the fit's interval, the start check and the alarms suppressed.
func printHoldEvidence(w io.Writer, h daemon.HoldTestJSON) {
	if ev := h.Evidence; ev != nil {
		fmt.Fprintf(w, "  record: %.4g s in range of the %.4g s asked for, %d samples in range, %d out of range, longest gap %.3g s\n",
			ev.RecordedSeconds, ev.RequestedSeconds, ev.InRange, ev.OutOfRange, ev.LongestGapS)
		for _, p := range ev.Problems {
			fmt.Fprintf(w, "  not judged: %s\n", p)
		}
	}
	if r := h.Result; r != nil && r.Fit.Model != "" {
		fmt.Fprintf(w, "  fit: %s over %.4g s from %.4g s, %d points; leak term %.3g ± %.2g Pa·m³/s (k = %g); upper bound %.3g Pa·m³/s\n",
			r.Fit.Model, r.Span, r.Start, r.Points, r.LeakRate, r.LeakRateExpanded, r.CoverageFactor, r.LeakUpperBound)
		for _, n := range r.Notes {
			fmt.Fprintf(w, "  note: %s\n", n)
		}
	}
	if c := h.StartCheck; c != nil && c.Warning != "" {
		fmt.Fprintf(w, "  warning: %s\n", c.Warning)
	}
	if len(h.Suppressed) > 0 {
		fmt.Fprintf(w, "  suppressed by design during the test: %s", strings.Join(h.Suppressed, ", "))
		if len(h.StillSuppressed) > 0 {
			fmt.Fprintf(w, " (still suppressed: %s)", strings.Join(h.StillSuppressed, ", "))
		}
		fmt.Fprintln(w)
	}
}

// saveSVG writes hold test id's plot to file and returns its size in bytes.
func saveSVG(ctx context.Context, api *apiClient, id, file string) (int, error) {
	req, err := http.NewRequestWithContext(ctx, "GET", strings.TrimRight(api.base, "/")+"/api/v1/holdtests/"+url.PathEscape(id)+"/rise.svg", nil)
	if err != nil {
		return 0, fmt.Errorf("--daemon %q: %w", api.base, err)
	}
	resp, err := api.http.Do(req)
	if err != nil {
		return 0, err
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(io.LimitReader(resp.Body, 16<<20))
	if err != nil {
		return 0, err
	}
	if resp.StatusCode != http.StatusOK {
		return 0, fmt.Errorf("daemon: hold test %s has no plot (%s)", id, resp.Status)
	}
	if err := os.WriteFile(file, b, 0o644); err != nil {
		return 0, fmt.Errorf("--svg: %w", err)
	}
	return len(b), nil
}

func writeIndented(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

// printHoldStart says what a started hold test does next, and who must
// close the valve.
func printHoldStart(w io.Writer, h daemon.HoldTestJSON) {
	switch {
	case h.State == "closing" && h.Coil != nil:
		fmt.Fprintf(w, "hold test %s on %s: valve coil %d on %s written; waiting for %s to read closed, then %gs settling and %gs recording\n",
			h.ID, h.Gauge, h.Coil.Coil, h.Coil.Link, h.Confirm, h.SettleSeconds, h.DurationSeconds)
	default:
		fmt.Fprintf(w, "hold test %s on %s: settling until %s, recording until %s (valve: %s)\n",
			h.ID, h.Gauge, h.RecordFrom.Format("15:04:05"), h.RecordTo.Format("15:04:05"), h.Valve)
	}
	if c := h.StartCheck; c != nil && c.Warning != "" {
		fmt.Fprintf(w, "warning: %s\n", c.Warning)
	}
	if len(h.Suppressed) > 0 {
		fmt.Fprintf(w, "suppressed by design until the chamber is pumped again: %s\n", strings.Join(h.Suppressed, ", "))
	}
	switch h.Valve {
	case "manual":
		fmt.Fprintln(w, "isolate the chamber now; holdfast moves no valve here and is not an interlock")
	case "modbus":
		fmt.Fprintln(w, "holdfast puts the coil back when the test ends; it is not an interlock: the plant's own controls stay in charge")
	}
}
