package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"net/url"
	"text/tabwriter"

	"holdfast/daemon"
)

const alarmsSynopsis = "[list|ack|shelve|unshelve|suppress|unsuppress|out-of-service|in-service|history] [ALARM] [flags]"

// cmdAlarms lists the running daemon's alarms or changes one of them
// through its token-protected API.
func cmdAlarms(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	sub, args := firstArg(args)
	if sub == "" {
		sub = "list"
	}
	fs := newFlags("alarms", alarmsSynopsis, stderr)
	api := addAPIFlags(fs)
	asJSON := fs.Bool("json", false, "print JSON")
	by := fs.String("by", "", "who acts, for the alarm history")
	reason := fs.String("reason", "", "why (shelve, suppress, out-of-service)")
	dur := fs.String("for", "", "shelve for this long, e.g. 2h (default and longest: shelving.default, shelving.max in the config; required for a critical alarm)")
	until := fs.String("until", "", "shelve until this RFC 3339 time")
	name, err := parseWithName(fs, args, sub != "list" && sub != "history", "alarm")
	if err != nil {
		return err
	}
	switch sub {
	case "list":
		var out []daemon.AlarmJSON
		if err := api.do(ctx, "GET", "/api/v1/alarms", nil, &out); err != nil {
			return err
		}
		return printAlarms(stdout, out, *asJSON)
	case "history":
		var out []daemon.EventJSON
		if err := api.do(ctx, "GET", "/api/v1/alarms/history?alarm="+url.QueryEscape(name), nil, &out); err != nil {
			return err
		}
		return printHistory(stdout, out, *asJSON)
	case "ack", "shelve", "unshelve", "suppress", "unsuppress", "out-of-service", "in-service":
		var out daemon.AlarmJSON
		body := daemon.AlarmActionJSON{By: *by, Reason: *reason, For: *dur, Until: *until}
		if err := api.do(ctx, "POST", "/api/v1/alarms/"+url.PathEscape(name)+"/"+sub, body, &out); err != nil {
			return err
		}
		return printAlarms(stdout, []daemon.AlarmJSON{out}, *asJSON)
	}
	fs.Usage()
	return errUsage("unknown alarms command %q", sub)
}

// parseWithName parses flags that may come before or after one name; what
// names what the name is, for the message when it is missing.
func parseWithName(fs *flag.FlagSet, args []string, need bool, what string) (string, error) {
	if err := fs.Parse(args); err != nil {
		return "", err
	}
	rest := fs.Args()
	name := ""
	if len(rest) > 0 {
		name = rest[0]
		if err := fs.Parse(rest[1:]); err != nil {
			return "", err
		}
		rest = fs.Args()
	}
	switch {
	case need && name == "":
		fs.Usage()
		return "", errUsage("name the %s", what)
	case len(rest) > 0:
		fs.Usage()
		return "", errUsage("unexpected arguments %q", rest)
	}
	return name, nil
}

func printAlarms(w io.Writer, as []daemon.AlarmJSON, asJSON bool) error {
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(as)
	}
	tw := tabwriter.NewWriter(w, 2, 8, 2, ' ', 0)
	fmt.Fprintln(tw, "ALARM\tGAUGE\tSEVERITY\tSTATE\tRAISED\tMESSAGE")
	for _, a := range as {
		state := a.State
		if a.Chattering {
			state += " (chattering)"
		}
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%d\t%s\n", a.Alarm, a.Gauge, a.Severity, state, a.Raised, a.Message)
	}
	return tw.Flush()
}

func printHistory(w io.Writer, evs []daemon.EventJSON, asJSON bool) error {
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(evs)
	}
	for _, ev := range evs {
		fmt.Fprintf(w, "%s  %-14s %-24s %s: %s\n", ev.At.Format("2006-01-02 15:04:05"), ev.Kind, ev.State, ev.Alarm, ev.Message)
	}
	return nil
}
