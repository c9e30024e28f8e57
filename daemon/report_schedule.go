package daemon

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"log/slog"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"time"

	"holdfast/alerts/notify"
	"holdfast/daemon/config"
	"holdfast/daemon/outbox"
	"holdfast/daemon/report"
)

// reportLoop writes the scheduled reports (report: every, at) on the
// daemon's clock until ctx is done.
func (d *Daemon) reportLoop(ctx context.Context) {
	rc := d.conf().Report
	if !rc.Scheduled() {
		return
	}
	log := d.log.With("part", "report")
	next := firstReport(d.clock.Now(), rc)
	for {
		select {
		case <-ctx.Done():
			return
		case <-d.clock.After(next.Sub(d.clock.Now())):
		}
		d.liveMu.RLock()
		path, err := d.scheduledReport(next, rc)
		d.liveMu.RUnlock()
		if err != nil {
			log.Error("scheduled report not written", "err", err)
		} else {
			log.Info("report written", "path", path)
		}
		now := d.clock.Now()
		for next = nextReport(next, rc.Every.D()); !next.After(now); next = nextReport(next, rc.Every.D()) {
			log.Warn("scheduled report skipped: the clock passed it", "at", next)
		}
	}
}

// firstReport is the first report time after now: the next at (local
// time of day), or one period from now without at.
func firstReport(now time.Time, rc *config.ReportConfig) time.Time {
	if rc.AtOffset < 0 {
		return now.Add(rc.Every.D())
	}
	y, m, day := now.Date()
	at := time.Date(y, m, day, int(rc.AtOffset/time.Hour), int(rc.AtOffset%time.Hour/time.Minute), 0, 0, now.Location())
	for !at.After(now) {
		at = nextReport(at, rc.Every.D())
	}
	return at
}

// nextReport is the report after one at t: whole days keep the time of
// day across a daylight-saving change; other periods are added as they are.
func nextReport(t time.Time, every time.Duration) time.Time {
	if every%(24*time.Hour) == 0 {
		return t.AddDate(0, 0, int(every/(24*time.Hour)))
	}
	return t.Add(every)
}

// scheduledReport writes the report of the period ending at into the
// report directory, prunes old ones and, with notify, queues the link.
func (d *Daemon) scheduledReport(at time.Time, rc *config.ReportConfig) (string, error) {
	from := at.Add(-rc.Every.D())
	if rc.AtOffset >= 0 && rc.Every.D()%(24*time.Hour) == 0 {
		from = at.AddDate(0, 0, -int(rc.Every.D()/(24*time.Hour)))
	}
	n, err := d.Night(from, at)
	if err != nil {
		return "", err
	}
	path, err := writeReportFile(d.conf().ReportDir(), n, rc.Format)
	if err != nil {
		return "", err
	}
	if rc.Keep > 0 {
		if err := pruneReports(d.conf().ReportDir(), rc.Keep); err != nil {
			d.log.Warn("old reports not removed", "part", "report", "err", err)
		}
	}
	if rc.Notify {
		if err := d.notifyReport(n, filepath.Base(path)); err != nil {
			return path, fmt.Errorf("report %s written, but its notification was not queued: %w", path, err)
		}
	}
	return path, nil
}

// writeReportFile writes the night's report into dir under its usual name
// and returns the path; the file appears whole or not at all.
func writeReportFile(dir string, n *report.Night, format string) (string, error) {
	var buf bytes.Buffer
	if err := report.Write(&buf, n, format); err != nil {
		return "", err
	}
	if err := os.MkdirAll(dir, 0o750); err != nil {
		return "", fmt.Errorf("report directory: %w", err)
	}
	path := filepath.Join(dir, ReportFileName(n.Chamber, n.To, format))
	tmp, err := os.CreateTemp(dir, ".report-*")
	if err != nil {
		return "", err
	}
	_, err = tmp.Write(buf.Bytes())
	if err == nil {
		err = tmp.Sync()
	}
	if cerr := tmp.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tmp.Name(), 0o640)
	}
	if err == nil {
		err = os.Rename(tmp.Name(), path)
	}
	if err != nil {
		os.Remove(tmp.Name())
		return "", fmt.Errorf("write report: %w", err)
	}
	return path, nil
}

var unsafeName = regexp.MustCompile(`[^A-Za-z0-9._-]+`)

// ReportFileName is a report's file name: "report-<chamber>-<end, local
// time to the minute>.<format>".
func ReportFileName(chamber string, to time.Time, format string) string {
	c := strings.Trim(unsafeName.ReplaceAllString(chamber, "-"), "-.")
	return "report-" + c + "-" + to.In(time.Local).Format("2006-01-02T1504") + "." + format
}

var reportFilePattern = regexp.MustCompile(`^report-[A-Za-z0-9._-]*-\d{4}-\d{2}-\d{2}T\d{4}\.(html|svg|png|pdf)$`)

// isReportFile reports whether name is one reportFileName makes.
func isReportFile(name string) bool { return reportFilePattern.MatchString(name) }

// pruneReports removes all but the newest keep reports in dir.
func pruneReports(dir string, keep int) error {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return err
	}
	type file struct {
		name string
		mod  time.Time
	}
	var files []file
	for _, e := range ents {
		if info, err := e.Info(); err == nil && e.Type().IsRegular() && isReportFile(e.Name()) {
			files = append(files, file{e.Name(), info.ModTime()})
		}
	}
	slices.SortFunc(files, func(a, b file) int { return b.mod.Compare(a.mod) })
	var errs []error
	for _, f := range files[min(keep, len(files)):] {
		if err := os.Remove(filepath.Join(dir, f.name)); err != nil {
			errs = append(errs, err)
		}
	}
	if len(errs) > 0 {
		return fmt.Errorf("%d report(s) not removed: %w", len(errs), errs[0])
	}
	return nil
}

// notifyReport queues a notification with the report's link for every
// notifier but the Alertmanagers (an Alertmanager takes alerts, and a
// report is none).
func (d *Daemon) notifyReport(n *report.Night, name string) error {
	ns := d.notifiers()
	if ns == nil {
		return nil
	}
	c := n.Counts()
	tr := notify.Transition{Chamber: n.Chamber, Event: notify.EventReport, At: n.To, Link: d.reportLink(name),
		DedupeKey: n.Chamber + "/report/" + name,
		Message: fmt.Sprintf("report for %s to %s: %d alarm(s) raised, %d cleared, %d still active",
			n.From.In(time.Local).Format("2006-01-02 15:04"), n.To.In(time.Local).Format("2006-01-02 15:04 MST"), c.Raised, c.Cleared, c.Active)}
	return ns.enqueueReport(tr, d.log.With("part", "report"))
}

// enqueueReport puts a report notification in the outbox of every notifier
// that is not an Alertmanager, whatever its min_severity (a report is not
// an alarm and has none).
func (n *notifierSet) enqueueReport(tr notify.Transition, log *slog.Logger) error {
	payload, err := json.Marshal(tr)
	if err != nil {
		return err
	}
	return n.ob.Update(func(t *outbox.Tx) error {
		for _, s := range n.sinks {
			if s.am != nil {
				continue
			}
			if _, err := t.Enqueue(s.cfg.Name, tr.DedupeKey, payload); err != nil {
				return err
			}
			log.Debug("report link queued", "notifier", s.cfg.Name)
		}
		return nil
	})
}
