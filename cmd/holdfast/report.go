package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"strconv"
	"strings"
	"syscall"
	"time"

	"holdfast/calib"
	"holdfast/daemon"
	"holdfast/daemon/config"
	"holdfast/daemon/report"
)

const reportSynopsis = `[--from T1 --to T2 | --last 12h] -o FILE.html|svg|png|pdf [flags]

Draws the report of one period: every pressure gauge on a log axis,
temperatures below, alarm periods shaded and named, hold tests marked, and
a header with each gauge's minimum and final value, pump-down times, the
maximum temperature and the alarms raised, cleared and still active. The
format follows the file's extension; the HTML is one file with nothing to
fetch, to open from a mail.

With --config, the report is read from the config's data directory when
no daemon holds it, else asked of that daemon (at its http.listen, or
--daemon); without --config, of the daemon at --daemon. Which one was used
is printed on stderr. Times are RFC 3339 (2026-03-02T07:00:00Z), local
("2026-03-02 07:00"), Unix seconds, "now", or relative to now ("-8h").`

// cmdReport writes the morning report to a file.
func cmdReport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("report", reportSynopsis, stderr)
	api := addAPIFlags(fs)
	fromS := fs.String("from", "", "start of the period (`time`)")
	toS := fs.String("to", "now", "end of the period (`time`)")
	last := fs.String("last", "", "the `span` ending at --to, e.g. 12h (default 12h when --from is not given)")
	out := fs.String("o", "", "output `file`: .html, .svg, .png or .pdf")
	file := fs.String("config", "", "config `file`: gauges, units and the data directory")
	data := fs.String("data", "", "data `directory` to read instead of the config's store.dir; alone, every stored series is drawn (as pressure unless --kind says otherwise)")
	kinds := map[string]string{}
	fs.Func("kind", "with --data and no --config: `GAUGE=KIND` (pressure or temperature); repeat for each gauge", func(v string) error {
		g, k, ok := strings.Cut(v, "=")
		if !ok || g == "" {
			return fmt.Errorf("want GAUGE=KIND, e.g. wall-tc=temperature; got %q", v)
		}
		kinds[g] = k
		return nil
	})
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *out == "" || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("report needs -o FILE")
	}
	format, err := report.FormatOf(*out)
	if err != nil {
		fs.Usage()
		return errUsage("-o %v", err)
	}
	from, to, err := reportPeriod(*fromS, *toS, *last, time.Now())
	if err != nil {
		fs.Usage()
		return errUsage("%v", err)
	}
	set := map[string]bool{}
	fs.Visit(func(f *flag.Flag) { set[f.Name] = true })
	b, err := reportBytes(ctx, api, set["daemon"], *file, *data, kinds, from, to, format, stderr)
	if err != nil {
		return fmt.Errorf("report: %w", err)
	}
	if err := os.WriteFile(*out, b, 0o644); err != nil {
		return fmt.Errorf("report: %w", err)
	}
	fmt.Fprintf(stdout, "wrote %s (%s to %s)\n", *out, from.Format("2006-01-02 15:04"), to.Format("2006-01-02 15:04 MST"))
	return nil
}

// reportBytes renders the report from the data directory when it can,
// else asks the daemon, and says on stderr which it did.
func reportBytes(ctx context.Context, api *apiClient, daemonSet bool, file, data string, kinds map[string]string, from, to time.Time, format string, stderr io.Writer) ([]byte, error) {
	if file != "" || data != "" {
		var cfg *config.Config
		var err error
		if file != "" {
			if cfg, err = config.CheckConfig(file); err == nil && data != "" {
				cfg.Store.Dir = data
			}
		} else {
			var guessed []string
			if cfg, guessed, err = daemon.BareReportConfig(data, kinds); err == nil && len(guessed) > 0 {
				fmt.Fprintf(stderr, "holdfast report: no --config: drawing %s as pressure in Pa (name others with --kind GAUGE=temperature)\n",
					strings.Join(guessed, ", "))
			}
		}
		if errors.Is(err, daemon.ErrDataInUse) {
			return nil, fmt.Errorf("%w (give --config, or ask the daemon with --daemon)", err)
		}
		if err != nil {
			return nil, err
		}
		var buf bytes.Buffer
		err = daemon.ReportFromDir(&buf, cfg, from, to, format)
		switch {
		case err == nil:
			fmt.Fprintf(stderr, "holdfast report: read %s directly (no daemon holds it)\n", cfg.Store.Dir)
			return buf.Bytes(), nil
		case !errors.Is(err, daemon.ErrDataInUse):
			return nil, err
		}
		if !daemonSet {
			api.forConfig(cfg)
		}
		fmt.Fprintf(stderr, "holdfast report: a daemon holds %s; asking it at %s\n", cfg.Store.Dir, api.base)
	} else {
		fmt.Fprintf(stderr, "holdfast report: asking the daemon at %s\n", api.base)
	}
	q := url.Values{"from": {from.Format(time.RFC3339Nano)}, "to": {to.Format(time.RFC3339Nano)}, "format": {format}}
	return api.fetch(ctx, "/api/v1/report?"+q.Encode())
}

// fetch GETs path and returns the body as it is (a report, not JSON).
func (c *apiClient) fetch(ctx context.Context, path string) ([]byte, error) {
	req, err := http.NewRequestWithContext(ctx, "GET", strings.TrimRight(c.base, "/")+path, nil)
	if err != nil {
		return nil, fmt.Errorf("--daemon %q: %w", c.base, err)
	}
	resp, err := c.http.Do(req)
	if err != nil {
		if errors.Is(err, syscall.ECONNREFUSED) {
			return nil, fmt.Errorf("no daemon answering at %s (is holdfast run going? see --daemon, or give --config to read a stopped daemon's data)", c.base)
		}
		return nil, err
	}
	defer resp.Body.Close()
	b, err := io.ReadAll(io.LimitReader(resp.Body, 256<<20))
	if err != nil {
		return nil, err
	}
	if resp.StatusCode >= 300 {
		var e struct{ Error string }
		if json.Unmarshal(b, &e) == nil && e.Error != "" {
			return nil, fmt.Errorf("daemon: %s", e.Error)
		}
		return nil, fmt.Errorf("daemon: GET %s: %s", path, resp.Status)
	}
	return b, nil
}

// reportPeriod reads --from, --to and --last.
func reportPeriod(fromS, toS, last string, now time.Time) (time.Time, time.Time, error) {
	to, err := reportTime("to", toS, now)
	if err != nil {
		return time.Time{}, time.Time{}, err
	}
	if fromS != "" && last != "" {
		return time.Time{}, time.Time{}, errors.New("give --from or --last, not both")
	}
	if fromS == "" {
		if last == "" {
			last = "12h"
		}
		span, err := calib.ParseDuration(last)
		if err != nil || span <= 0 {
			return time.Time{}, time.Time{}, fmt.Errorf("--last %q: want a positive span such as 12h or 2d", last)
		}
		return to.Add(-span), to, nil
	}
	from, err := reportTime("from", fromS, now)
	if err != nil {
		return time.Time{}, time.Time{}, err
	}
	if !from.Before(to) {
		return time.Time{}, time.Time{}, fmt.Errorf("--from %s is not before --to %s", from.Format(time.RFC3339), to.Format(time.RFC3339))
	}
	return from, to, nil
}

// reportTime reads a time: "now", a span before now ("-8h"), Unix seconds,
// or a date as parseWhen takes it.
func reportTime(flagName, s string, now time.Time) (time.Time, error) {
	switch {
	case s == "now":
		return now, nil
	case strings.HasPrefix(s, "-"):
		d, err := calib.ParseDuration(s[1:])
		if err != nil || d <= 0 {
			return time.Time{}, fmt.Errorf("--%s %q: want a span before now such as -8h", flagName, s)
		}
		return now.Add(-d), nil
	}
	if sec, err := strconv.ParseFloat(s, 64); err == nil && !strings.ContainsAny(s, "eE") {
		return time.Unix(0, int64(sec*1e9)), nil
	}
	t, err := parseWhen(flagName, s)
	if err != nil {
		return time.Time{}, fmt.Errorf("%w, Unix seconds, now, or -8h", err)
	}
	return t, nil
}
