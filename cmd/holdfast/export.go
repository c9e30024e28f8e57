package main

import (
	"bufio"
	"context"
	"fmt"
	"io"
	"net/url"
	"slices"
	"time"

	"holdfast/daemon/seriesio"
)

const exportSynopsis = `--gauge G|--all [--from T1] [--to T2] [--format csv|jsonl|openmetrics] [flags]

Writes every stored sample of the gauges between T1 and T2 to stdout (or
-o FILE), streamed: the span is never loaded into memory whole.

  csv          gauge,time,value,raw,quality,calibration; times RFC 3339 in
               UTC to the nanosecond, numbers exactly (NaN, +Inf, -Inf
               spelled out). holdfast import reads it back bit for bit.
  jsonl        one JSON object per sample with the same fields (numbers
               that JSON cannot hold, such as NaN, as strings).
  openmetrics  ok samples only, as the daemon's live metrics
               (holdfast_pressure_pascals{gauge="..."} and so on), for
               promtool tsdb create-blocks-from openmetrics FILE DIR.
               Needs each gauge's kind: from --config or --kind.

Times: RFC 3339, Unix seconds, now, or an offset such as -8h; default
everything stored (samples stamped in the future included). With --data DIR (or --config FILE) the directory is read
directly when no daemon holds it; otherwise the running daemon streams the
export (--daemon). Which one was used is said on stderr.`

func cmdExport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("export", exportSynopsis, stderr)
	src := addSourceFlags(fs)
	var gauges multiFlag
	fs.Var(&gauges, "gauge", "gauge `name` (repeat, or a,b)")
	all := fs.Bool("all", false, "every stored series")
	from := fs.String("from", "", "start of the span (`time`; default the first sample)")
	to := fs.String("to", "", "end of the span (`time`; default the last sample)")
	format := fs.String("format", "csv", "`format`: csv, jsonl or openmetrics")
	kind := fs.String("kind", "", "`kind` (pressure, temperature, state) for gauges the config does not name (openmetrics)")
	out := fs.String("o", "", "write to `file` instead of stdout")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if len(gauges) == 0 && !*all || len(gauges) > 0 && *all || fs.NArg() > 0 {
		fs.Usage()
		return errUsage("export needs --gauge G or --all")
	}
	if !slices.Contains(seriesio.Formats, *format) {
		return fmt.Errorf("export: --format %q: want csv, jsonl or openmetrics", *format)
	}
	if err := src.resolve(fs); err != nil {
		return err
	}
	now := time.Now()
	t1, t2 := time.Date(1678, 1, 1, 0, 0, 0, 0, time.UTC), time.Date(2262, 1, 1, 0, 0, 0, 0, time.UTC)
	var err error
	if *from != "" {
		if t1, err = seriesio.ParseTime(*from, now); err != nil {
			return fmt.Errorf("export: --from: %w", err)
		}
	}
	if *to != "" {
		if t2, err = seriesio.ParseTime(*to, now); err != nil {
			return fmt.Errorf("export: --to: %w", err)
		}
	}
	if *all {
		gauges = multiFlag{"all"}
	}
	w, done, err := outputFile(*out, stdout)
	if err != nil {
		return err
	}
	n, err := runExport(ctx, src, stderr, w, gauges, span{t1, t2, *from, *to}, *format, *kind)
	if err = done(err); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	if n >= 0 {
		fmt.Fprintf(stderr, "holdfast: exported %d samples\n", n)
	}
	return nil
}

func runExport(ctx context.Context, src *source, stderr io.Writer, w io.Writer, gauges []string, sp span, format, kind string) (int, error) {
	db, err := src.openDirect(stderr)
	if err != nil {
		return 0, err
	}
	if db != nil {
		defer db.Close()
		names, err := expandSeries(db, gauges)
		if err != nil {
			return 0, err
		}
		kinds := src.kinds()
		for _, s := range names {
			if kinds[s] == "" && kind != "" {
				kinds[s] = kind
			}
		}
		e := seriesio.Export{Series: names, From: sp.from, To: sp.to, Format: format, Kinds: kinds}
		return e.Write(w, db)
	}
	if kind != "" {
		fmt.Fprintln(stderr, "holdfast: --kind is ignored: the daemon knows its gauges' kinds")
	}
	v := sp.values(url.Values{"gauge": gauges, "format": {format}})
	_, err = src.api.stream(ctx, "GET", "/api/v1/export?"+v.Encode(), "Holdfast-Export-Error", w)
	return -1, err
}

// outputFile returns stdout, or a buffered file that done closes (and
// removes when the command failed).
func outputFile(path string, stdout io.Writer) (io.Writer, func(error) error, error) {
	if path == "" {
		return stdout, func(err error) error { return err }, nil
	}
	f, err := createNew(path)
	if err != nil {
		return nil, nil, err
	}
	bw := bufio.NewWriterSize(f, 1<<16)
	return bw, func(err error) error {
		if err == nil {
			err = bw.Flush()
		}
		if cerr := f.Close(); err == nil {
			err = cerr
		}
		if err != nil {
			removeFile(path)
		}
		return err
	}, nil
}
