package daemon

import (
	"bytes"
	"errors"
	"io/fs"
	"net/http"
	"os"
	"slices"
	"strings"
	"time"

	"holdfast/calib"
	"holdfast/daemon/report"
)

// reportRoutes mounts the report API; all of it only reads.
func (d *Daemon) reportRoutes(mux *http.ServeMux) {
	mux.HandleFunc("GET /api/v1/report", d.apiReport)
	mux.HandleFunc("GET /api/v1/reports", d.apiReports)
	mux.HandleFunc("GET /api/v1/reports/{file}", d.apiReportFile)
}

// defaultReportSpan is the period of a report asked for without one.
const defaultReportSpan = 12 * time.Hour

// apiReport renders a report now: from and to are RFC 3339 times (to
// defaults to now), or last is a span ending now ("12h"); format is html
// (default), svg, png or pdf.
func (d *Daemon) apiReport(w http.ResponseWriter, r *http.Request) {
	q := r.URL.Query()
	from, to, err := reportSpan(q.Get("from"), q.Get("to"), q.Get("last"), d.clock.Now())
	if err != nil {
		apiError(w, http.StatusBadRequest, err.Error())
		return
	}
	format := q.Get("format")
	if format == "" {
		format = "html"
	}
	if !slices.Contains(report.Formats, format) {
		apiError(w, http.StatusBadRequest, "format: want one of "+strings.Join(report.Formats, ", "))
		return
	}
	var buf bytes.Buffer
	if err := d.WriteReport(&buf, from, to, format); err != nil {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	w.Header().Set("Content-Type", report.ContentType(format))
	w.Header().Set("Content-Disposition", `inline; filename="`+ReportFileName(d.conf().Chamber.Name, to, format)+`"`)
	_, _ = w.Write(buf.Bytes())
}

// reportSpan reads a report's period: RFC 3339 from and to (to defaults
// to now), or last, a span ending now; neither is the last 12 h.
func reportSpan(fromS, toS, lastS string, now time.Time) (time.Time, time.Time, error) {
	to := now
	var err error
	if toS != "" {
		if to, err = time.Parse(time.RFC3339, toS); err != nil {
			return time.Time{}, time.Time{}, errors.New("to: want an RFC 3339 time such as 2026-03-02T07:00:00Z")
		}
	}
	switch {
	case fromS != "" && lastS != "":
		return time.Time{}, time.Time{}, errors.New("give from or last, not both")
	case fromS != "":
		from, err := time.Parse(time.RFC3339, fromS)
		if err != nil {
			return time.Time{}, time.Time{}, errors.New("from: want an RFC 3339 time such as 2026-03-01T19:00:00Z")
		}
		if !from.Before(to) {
			return time.Time{}, time.Time{}, errors.New("from must be before to")
		}
		return from, to, nil
	case lastS != "":
		span, err := calib.ParseDuration(lastS)
		if err != nil || span <= 0 {
			return time.Time{}, time.Time{}, errors.New("last: want a positive span such as 12h")
		}
		return to.Add(-span), to, nil
	}
	return to.Add(-defaultReportSpan), to, nil
}

// ReportFileJSON is one written report in /api/v1/reports.
type ReportFileJSON struct {
	Name     string    `json:"name"`
	Bytes    int64     `json:"bytes"`
	Modified time.Time `json:"modified"`
	URL      string    `json:"url"`
}

func (d *Daemon) apiReports(w http.ResponseWriter, _ *http.Request) {
	ents, err := os.ReadDir(d.conf().ReportDir())
	if err != nil && !errors.Is(err, fs.ErrNotExist) {
		apiError(w, http.StatusInternalServerError, err.Error())
		return
	}
	out := []ReportFileJSON{}
	for _, e := range ents {
		info, err := e.Info()
		if err != nil || !e.Type().IsRegular() || !isReportFile(e.Name()) {
			continue
		}
		out = append(out, ReportFileJSON{Name: e.Name(), Bytes: info.Size(), Modified: info.ModTime(), URL: d.reportLink(e.Name())})
	}
	writeJSON(w, out)
}

// apiReportFile serves one written report. Only names the daemon writes
// are served, and only from the report directory (os.Root refuses any
// path that leaves it).
func (d *Daemon) apiReportFile(w http.ResponseWriter, r *http.Request) {
	name := r.PathValue("file")
	if !isReportFile(name) {
		apiError(w, http.StatusNotFound, "no report "+name+" (see /api/v1/reports)")
		return
	}
	root, err := os.OpenRoot(d.conf().ReportDir())
	if err != nil {
		apiError(w, http.StatusNotFound, "no reports written yet")
		return
	}
	defer root.Close()
	b, err := root.ReadFile(name)
	if err != nil {
		apiError(w, http.StatusNotFound, "no report "+name+" (see /api/v1/reports)")
		return
	}
	format, _ := report.FormatOf(name)
	w.Header().Set("Content-Type", report.ContentType(format))
	_, _ = w.Write(b)
}

// reportLink is where a person finds a written report.
func (d *Daemon) reportLink(name string) string {
	listen := d.conf().HTTP.Listen
	if d.ln != nil {
		listen = d.Addr()
	}
	return d.conf().ReportURL(listen) + "/api/v1/reports/" + name
}
