package seriesio

import (
	"bufio"
	"cmp"
	"errors"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"time"

	"holdfast/daemon/store"
)

// Formats lists the export formats.
var Formats = []string{"csv", "jsonl", "openmetrics"}

// CSVHeader is the first line of a CSV export; import reads the same columns.
const CSVHeader = "gauge,time,value,raw,quality,calibration"

// A family is the metric a gauge kind is exported as: the same names the
// daemon's /metrics uses, so a backfilled night lines up with scraped data.
type family struct {
	name, unit, help string
}

var families = map[string]family{
	"pressure": {"holdfast_pressure_pascals", "pascals",
		"Pressure after calibration, exported from the store (ok samples only)."},
	"temperature": {"holdfast_temperature_celsius", "celsius",
		"Temperature, exported from the store (ok samples only)."},
	"state": {"holdfast_digital_state", "",
		"State of a digital input (1 on, 0 off), exported from the store (ok samples only)."},
}

// Export describes one export.
type Export struct {
	Series   []string          // the series to write, in this order (OpenMetrics regroups them by metric)
	From, To time.Time         // the span, From ≤ At < To
	Format   string            // csv, jsonl or openmetrics
	Kinds    map[string]string // series → pressure, temperature or state; needed for openmetrics
}

// Write streams the export to w through store.Scan, one step of chunks at
// a time, and returns the samples written. CSV has the header CSVHeader and
// one row per sample; JSON lines one object per sample with the same
// fields; both keep every sample, bit for bit (see formatFloat). OpenMetrics
// keeps ok samples only, as gauges named like the daemon's live metrics
// with a gauge label, timestamps in seconds to the millisecond (a second
// sample of one series in the same millisecond is left out, as Prometheus
// keeps one per millisecond), each metric's samples together, and ends
// with # EOF: the input of promtool tsdb create-blocks-from openmetrics.
func (e Export) Write(w io.Writer, db *store.DB) (int, error) {
	if err := e.Check(); err != nil {
		return 0, err
	}
	bw := bufio.NewWriterSize(w, 64<<10)
	var n int
	var err error
	switch e.Format {
	case "openmetrics":
		n, err = e.openMetrics(bw, db)
	default:
		n, err = e.rows(bw, db)
	}
	return n, errors.Join(err, bw.Flush())
}

// Check says what is wrong with the export before anything is written.
func (e Export) Check() error {
	if !slices.Contains(Formats, e.Format) {
		return fmt.Errorf("format %q: want %s", e.Format, strings.Join(Formats, ", "))
	}
	if !e.From.Before(e.To) {
		return fmt.Errorf("from %s is not before to %s; swap them or widen the span", formatTime(e.From), formatTime(e.To))
	}
	if len(e.Series) == 0 {
		return errors.New("no gauge to export")
	}
	if e.Format != "openmetrics" {
		return nil
	}
	var missing []string
	for _, s := range e.Series {
		if _, ok := families[e.Kinds[s]]; !ok {
			missing = append(missing, s)
		}
	}
	if len(missing) > 0 {
		return fmt.Errorf("openmetrics: the kind (pressure, temperature or state) of %s is not known, and it decides the metric name; give the daemon's config or a kind for them",
			strings.Join(missing, ", "))
	}
	return nil
}

// rows writes CSV or JSON lines.
func (e Export) rows(w *bufio.Writer, db *store.DB) (int, error) {
	if e.Format == "csv" {
		w.WriteString(CSVHeader + "\n")
	}
	n := 0
	var werr error
	for _, s := range e.Series {
		err := db.Scan(s, e.From, e.To, func(p store.Point) bool {
			if e.Format == "csv" {
				werr = writeCSVRow(w, s, p)
			} else {
				werr = writeJSONLine(w, s, p)
			}
			n++
			return werr == nil
		})
		if err = errors.Join(werr, err); err != nil {
			return n, fmt.Errorf("export %s: %w", s, err)
		}
	}
	return n, nil
}

func writeCSVRow(w *bufio.Writer, series string, p store.Point) error {
	_, err := fmt.Fprintf(w, "%s,%s,%s,%s,%s,%d\n", csvField(series), formatTime(p.At), formatFloat(p.Value),
		formatFloat(p.Raw), formatQuality(p.Quality), p.Calibration)
	return err
}

// csvField quotes a field that holds a comma, a quote or a line break.
func csvField(s string) string {
	if !strings.ContainsAny(s, ",\"\r\n") {
		return s
	}
	return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
}

// jsonFloat writes a finite float as a JSON number, anything else as a
// string (JSON has no NaN or infinity).
func jsonFloat(v float64) string {
	s := formatFloat(v)
	if _, err := strconv.ParseFloat(s, 64); err != nil || strings.ContainsAny(s, "NI") {
		return strconv.Quote(s)
	}
	return s
}

func writeJSONLine(w *bufio.Writer, series string, p store.Point) error {
	_, err := fmt.Fprintf(w, `{"gauge":%s,"time":"%s","value":%s,"raw":%s,"quality":"%s","calibration":%d}`+"\n",
		strconv.Quote(series), formatTime(p.At), jsonFloat(p.Value), jsonFloat(p.Raw), formatQuality(p.Quality), p.Calibration)
	return err
}

// openMetrics writes each metric family's series together.
func (e Export) openMetrics(w *bufio.Writer, db *store.DB) (int, error) {
	order := slices.Clone(e.Series)
	slices.SortStableFunc(order, func(a, b string) int { return cmp.Compare(families[e.Kinds[a]].name, families[e.Kinds[b]].name) })
	n, last := 0, ""
	for _, s := range order {
		f := families[e.Kinds[s]]
		if f.name != last {
			fmt.Fprintf(w, "# TYPE %s gauge\n", f.name)
			if f.unit != "" {
				fmt.Fprintf(w, "# UNIT %s %s\n", f.name, f.unit)
			}
			fmt.Fprintf(w, "# HELP %s %s\n", f.name, f.help)
			last = f.name
		}
		label := fmt.Sprintf("%s{gauge=%s}", f.name, omLabel(s))
		prev, werr := int64(-1<<63), error(nil)
		err := db.Scan(s, e.From, e.To, func(p store.Point) bool {
			ms := p.At.UnixMilli()
			if p.Quality != 0 || ms == prev {
				return true
			}
			prev = ms
			_, werr = fmt.Fprintf(w, "%s %s %s\n", label, formatFloatOM(p.Value), omTime(ms))
			n++
			return werr == nil
		})
		if err = errors.Join(werr, err); err != nil {
			return n, fmt.Errorf("export %s: %w", s, err)
		}
	}
	_, err := w.WriteString("# EOF\n")
	return n, err
}

// omLabel quotes a label value as OpenMetrics escapes it.
func omLabel(s string) string {
	r := strings.NewReplacer(`\`, `\\`, `"`, `\"`, "\n", `\n`)
	return `"` + r.Replace(s) + `"`
}

// formatFloatOM writes a value in OpenMetrics' spelling (NaN, +Inf, -Inf).
func formatFloatOM(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// omTime writes Unix milliseconds as seconds with three decimals.
func omTime(ms int64) string {
	sign := ""
	if ms < 0 {
		sign, ms = "-", -ms
	}
	return fmt.Sprintf("%s%d.%03d", sign, ms/1000, ms%1000)
}
