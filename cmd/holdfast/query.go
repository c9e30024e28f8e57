package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net/url"
	"strconv"
	"strings"
	"time"

	"holdfast/daemon/seriesio"
	"holdfast/daemon/store"
)

const querySynopsis = `--gauge G [--gauge H] [--from T1] [--to T2] [--points N] [--csv|--json] [flags]

Shows a gauge's stored samples between T1 and T2, reduced to at most N
points per gauge so that a plot of them looks like a plot of every sample:
per time bucket the first, lowest, highest and last ok sample, and the
first and last sample that is not ok (over-range, fault, off), so both the
extremes and the quality stay visible. Every point shown is a stored
sample, unchanged; a stretch with no samples is shown as a gap, never
bridged. A span with at most N samples is shown whole.

Times: RFC 3339 (2026-03-02T14:05:00Z), Unix seconds, now, or an offset
from now (-8h, -90m, -2d). Default: the last 8 hours.

With --data DIR (or --config FILE) the data directory is read directly,
read-only, when no daemon holds it; while a daemon runs, the query goes to
its API (--daemon, or the config's http.listen). Which one was used is said
on stderr. Values are in SI units (Pa, °C).`

func cmdQuery(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("query", querySynopsis, stderr)
	src := addSourceFlags(fs)
	var gauges multiFlag
	fs.Var(&gauges, "gauge", "gauge `name` (repeat, or a,b; all for every stored series)")
	from := fs.String("from", "-8h", "start of the span (`time`)")
	to := fs.String("to", "now", "end of the span (`time`)")
	points := fs.Int("points", seriesio.DefaultPoints, fmt.Sprintf("at most `N` points per gauge (2 to %d)", store.MaxReducePoints))
	asCSV := fs.Bool("csv", false, "print CSV: gauge,time,value,raw,quality,calibration (a gap is a row with quality gap)")
	asJSON := fs.Bool("json", false, "print JSON as the API's /api/v1/series gives it")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if len(gauges) == 0 || fs.NArg() > 0 || *asCSV && *asJSON {
		fs.Usage()
		return errUsage("query needs --gauge, and takes at most one of --csv and --json")
	}
	if *points < 2 {
		return fmt.Errorf("query: --points %d: ask for at least 2", *points)
	}
	if err := src.resolve(fs); err != nil {
		return err
	}
	now := time.Now()
	t1, err := seriesio.ParseTime(*from, now)
	if err != nil {
		return fmt.Errorf("query: --from: %w", err)
	}
	t2, err := seriesio.ParseTime(*to, now)
	if err != nil {
		return fmt.Errorf("query: --to: %w", err)
	}
	res, err := runQuery(ctx, src, stderr, gauges, span{t1, t2, *from, *to}, *points)
	if err != nil {
		return fmt.Errorf("query: %w", err)
	}
	if res.Capped {
		fmt.Fprintf(stderr, "holdfast: --points capped at %d\n", res.Points)
	}
	switch {
	case *asCSV:
		return res.WriteCSV(stdout)
	case *asJSON:
		return res.WriteJSON(stdout)
	}
	return res.WriteText(stdout)
}

// runQuery reads the data directory directly or asks the daemon.
// A span is a command's --from and --to, resolved on this machine's clock
// for a direct read and passed as written to a daemon, which resolves
// "now" and offsets on its own clock (the demo's runs fast).
type span struct {
	from, to       time.Time
	fromArg, toArg string
}

// values adds from and to as the daemon should read them.
func (s span) values(v url.Values) url.Values {
	if s.fromArg != "" {
		v.Set("from", s.fromArg)
	}
	if s.toArg != "" {
		v.Set("to", s.toArg)
	}
	return v
}

func runQuery(ctx context.Context, src *source, stderr io.Writer, gauges []string, sp span, points int) (seriesio.QueryResult, error) {
	db, err := src.openDirect(stderr)
	if err != nil {
		return seriesio.QueryResult{}, err
	}
	if db != nil {
		defer db.Close()
		names, err := expandSeries(db, gauges)
		if err != nil {
			return seriesio.QueryResult{}, err
		}
		q := seriesio.Query{Series: names, From: sp.from, To: sp.to, Points: points, Kinds: src.kinds()}
		res, err := q.Run(db)
		var ce *store.ChunkError
		if errors.As(err, &ce) {
			fmt.Fprintf(stderr, "holdfast: warning: %v\n", err)
			err = nil
		}
		return res, err
	}
	v := sp.values(url.Values{"gauge": gauges, "points": {strconv.Itoa(points)}})
	var res seriesio.QueryResult
	err = src.api.do(ctx, "GET", "/api/v1/series?"+v.Encode(), nil, &res)
	return res, err
}

// expandSeries checks the names against the stored series; "all" stands
// for every one.
func expandSeries(db *store.DB, gauges []string) ([]string, error) {
	known, err := db.Series()
	if err != nil {
		return nil, err
	}
	return seriesio.PickGauges(gauges, known)
}

// multiFlag collects a repeated flag.
type multiFlag []string

func (m *multiFlag) String() string     { return strings.Join(*m, ",") }
func (m *multiFlag) Set(s string) error { *m = append(*m, s); return nil }
