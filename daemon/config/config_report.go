package config

import (
	"net/url"
	"path/filepath"
	"slices"
	"strings"
	"time"

	"holdfast/calib"
	"holdfast/daemon/report"
)

// ReportConfig is the report: section. With every or at set, the daemon
// writes the report of the last period on that schedule into dir (and,
// with notify, tells the notifiers where to find it); unit applies to
// every report, scheduled or asked for.
type ReportConfig struct {
	Every  Duration `yaml:"every"`  // period covered and time between reports; default 24h when at is set
	At     string   `yaml:"at"`     // "07:00": the first report at this local time, then every Every
	Dir    string   `yaml:"dir"`    // where reports are written; default <store.dir>/reports
	Format string   `yaml:"format"` // html (default), svg, png or pdf
	Notify bool     `yaml:"notify"` // send each notifier (but Alertmanagers) a link to the report
	URL    string   `yaml:"url"`    // how people reach this daemon's API, for the link; default http://<http.listen>
	Unit   string   `yaml:"unit"`   // pressure unit of the report; default the one most pressure gauges show
	Keep   int      `yaml:"keep"`   // keep the newest this many reports; 0 keeps all

	AtOffset time.Duration `yaml:"-"` // At as time since midnight; -1 when not set
}

// minReportEvery bounds the schedule: a report is a picture of hours, and
// the demo's fast clock makes a minute pass in a tenth of a second.
const minReportEvery = time.Minute

// reportDir is where reports are written and served from.
func (c *Config) ReportDir() string {
	if c.Report != nil && c.Report.Dir != "" {
		return c.Report.Dir
	}
	return filepath.Join(c.Store.Dir, "reports")
}

// scheduled reports whether the daemon writes reports on its own.
func (r *ReportConfig) Scheduled() bool { return r != nil && r.Every > 0 }

// report checks the report: section and fills its defaults.
func (v *checker) report(r *ReportConfig) {
	if r == nil {
		return
	}
	r.AtOffset = -1
	if r.At != "" {
		if t, err := time.Parse("15:04", r.At); err != nil {
			v.problem("report.at", `want a time of day as HH:MM (24-hour), such as "07:00", got %q`, r.At)
		} else {
			r.AtOffset = time.Duration(t.Hour())*time.Hour + time.Duration(t.Minute())*time.Minute
		}
		if r.Every == 0 {
			r.Every = Duration(24 * time.Hour)
		}
	}
	v.expect(r.Every == 0 || r.Every.D() >= minReportEvery, "report.every", "want at least %s, such as every: 24h, got %s", shortDuration(minReportEvery), shortDuration(r.Every.D()))
	if r.Format == "" {
		r.Format = "html"
	}
	v.expect(slices.Contains(report.Formats, r.Format), "report.format", "want one of %s, got %q", strings.Join(report.Formats, ", "), r.Format)
	if r.URL != "" {
		v.httpURL("report.url", r.URL)
	}
	if r.Unit != "" {
		if _, err := calib.ParseUnit(r.Unit, calib.Pressure); err != nil {
			v.problem("report.unit", "%v", err)
		}
	}
	v.expect(r.Keep >= 0, "report.keep", "want a count of reports to keep (0 keeps all), got %d", r.Keep)
	v.expect(!r.Notify || r.Scheduled(), "report.notify", "notify applies to scheduled reports; set every or at as well")
	v.expect(!r.Notify || len(v.cfg.Notify) > 0, "report.notify", "no notifiers are configured under notify: to send the link to")
}

// reportURL is the link base for notifications: report.url, else the
// address the daemon listens on.
func (c *Config) ReportURL(listen string) string {
	if c.Report != nil && c.Report.URL != "" {
		return strings.TrimRight(c.Report.URL, "/")
	}
	return (&url.URL{Scheme: "http", Host: listen}).String()
}
