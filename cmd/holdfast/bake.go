package main

import (
	"context"
	"fmt"
	"io"
	"net/url"
	"time"

	"holdfast/daemon"
)

// cmdBake lists, shows and starts bakes on the running daemon.
func cmdBake(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	sub, args := firstArg(args)
	if sub == "" {
		sub = "list"
	}
	fs := newFlags("bake", "[list | show ID | start] [flags]", stderr)
	api := addAPIFlags(fs)
	asJSON := fs.Bool("json", false, "print JSON")
	id, err := parseWithName(fs, args, sub == "show", "bake (its ID, from holdfast bake list)")
	if err != nil {
		return err
	}
	switch sub {
	case "list":
		var bs []daemon.BakeJSON
		if err := api.do(ctx, "GET", "/api/v1/bakes", nil, &bs); err != nil {
			return err
		}
		if *asJSON {
			return writeIndented(stdout, bs)
		}
		if len(bs) == 0 {
			fmt.Fprintln(stdout, "no bakes recorded")
		}
		for _, b := range bs {
			fmt.Fprintf(stdout, "%s  %s  %-5s %-9s %-9s max %s\n", b.ID, b.Start.Local().Format("2006-01-02 15:04"), b.Phase,
				dur(b.ElapsedSeconds), b.Verdict, celsius(b.MaxC))
		}
		return nil
	case "show":
		var b daemon.BakeJSON
		if err := api.do(ctx, "GET", "/api/v1/bakes/"+url.PathEscape(id), nil, &b); err != nil {
			return err
		}
		if *asJSON {
			return writeIndented(stdout, b)
		}
		printBake(stdout, b)
		return nil
	case "start":
		var b daemon.BakeJSON
		if err := api.do(ctx, "POST", "/api/v1/bakes", struct{}{}, &b); err != nil {
			return err
		}
		fmt.Fprintf(stdout, "bake %s started at %s\n", b.ID, b.Start.Local().Format("2006-01-02 15:04:05"))
		return nil
	}
	fs.Usage()
	return errUsage("unknown bake command %q (known: list, show, start)", sub)
}

func printBake(w io.Writer, b daemon.BakeJSON) {
	fmt.Fprintf(w, "bake %s on %s: %s", b.ID, b.Chamber, b.Phase)
	if b.Verdict != "" {
		fmt.Fprintf(w, " (%s)", b.Verdict)
	}
	fmt.Fprintf(w, ", %s since %s, started by %s\n", dur(b.ElapsedSeconds), b.Start.Local().Format("2006-01-02 15:04:05"), b.StartedBy)
	for _, s := range b.Steps {
		fmt.Fprintf(w, "  %s  %s\n", s.At.Local().Format("15:04:05"), s.Phase)
	}
	fmt.Fprintf(w, "hold %g C ± %g C for %s: %s at temperature\n", b.HoldC, b.ToleranceC, dur(b.HoldForSeconds), dur(b.AtTempSeconds))
	fmt.Fprintf(w, "temperature from %s, maximum %s (%s)\n", celsius(b.StartC), celsius(b.MaxC), b.MaxGauge)
	fmt.Fprintf(w, "pressure before %s, after %s, highest %s\n", pascal(b.PressBeforePa), pascal(b.PressAfterPa), pascal(b.PressMaxPa))
	fmt.Fprintf(w, "steepest heating %s, cooling %s\n", perMin(b.HeatingCMin), perMin(b.CoolingCMin))
	if h := b.HoldTest; h != nil {
		fmt.Fprintf(w, "last hold test %s (%s): %s %s\n", h.ID, h.At.Local().Format("2006-01-02 15:04"), h.Verdict, h.Summary)
	} else if b.Phase == "done" {
		fmt.Fprintln(w, "no hold test finished before the bake was done")
	}
}

func dur(sec float64) string { return (time.Duration(sec) * time.Second).String() }

func celsius(p *float64) string {
	if p == nil {
		return "—"
	}
	return fmt.Sprintf("%.1f C", *p)
}

func pascal(p *float64) string {
	if p == nil {
		return "—"
	}
	return fmt.Sprintf("%.3g Pa", *p)
}

func perMin(p *float64) string {
	if p == nil {
		return "—"
	}
	return fmt.Sprintf("%.2g C/min", *p)
}
