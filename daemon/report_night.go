package daemon

import (
	"cmp"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"time"

	berrors "go.etcd.io/bbolt/errors"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
	"holdfast/daemon/config"
	"holdfast/daemon/report"
	"holdfast/daemon/store"
)

// reportPoints is how many points per gauge a report draws at most: about
// two per pixel of the plot's width in a PNG.
const reportPoints = 2000

// ErrDataInUse wraps the error of opening a data directory that a running
// daemon holds: ask that daemon's API instead.
var ErrDataInUse = errors.New("the data directory is in use by a running daemon")

// Night gathers the report of from–to from the running daemon's store,
// alarm history and hold tests.
func (d *Daemon) Night(from, to time.Time) (*report.Night, error) {
	return gatherNight(d.conf(), d.store, from, to, d.clock.Now())
}

// WriteReport renders the report of from–to in format (see report.Formats).
func (d *Daemon) WriteReport(w io.Writer, from, to time.Time, format string) error {
	n, err := d.Night(from, to)
	if err != nil {
		return err
	}
	return report.Write(w, n, format)
}

// ReportFromDir renders the report of from–to from cfg's data directory,
// opened read-only; it fails at once, wrapping ErrDataInUse, while a daemon
// holds the directory.
func ReportFromDir(w io.Writer, cfg *config.Config, from, to time.Time, format string) (err error) {
	db, err := openIdle(cfg.Store.Dir)
	if err != nil {
		return err
	}
	defer func() { err = errors.Join(err, db.Close()) }()
	n, err := gatherNight(cfg, db, from, to, time.Now())
	if err != nil {
		return err
	}
	return report.Write(w, n, format)
}

// gatherNight builds a report.Night: each pressure and temperature
// gauge's reduced points, the alarm periods overlapping the span, the hold
// tests recorded in it, and each pump_down rule's target and when it was
// reached. A part that cannot be read becomes a note in the header; only a
// store that cannot be read at all is an error.
func gatherNight(cfg *config.Config, db *store.DB, from, to, now time.Time) (*report.Night, error) {
	if !to.After(from) {
		return nil, fmt.Errorf("report: the period %s to %s is empty; want from before to", from.Format(time.RFC3339), to.Format(time.RFC3339))
	}
	n := &report.Night{Chamber: cfg.Chamber.Name, From: from, To: to, Location: time.Local, Generated: now,
		Pressure: reportUnit(cfg, "pressure"), Temperature: reportUnit(cfg, "temperature")}
	for _, kind := range []string{"pressure", "temperature"} {
		for _, name := range sortedKeys(cfg.Gauges) {
			if g := cfg.Gauges[name]; g != nil && g.Kind == kind {
				s, err := reportSeries(cfg, db, name, from, to)
				if err != nil {
					if errors.Is(err, store.ErrClosed) {
						return nil, err
					}
					n.Notes = append(n.Notes, fmt.Sprintf("%s: some stored samples could not be read: %v", name, err))
				}
				n.Series = append(n.Series, s)
			}
		}
	}
	st := alarmstore.Wrap(db.Bolt())
	evs, err := st.History("", time.Time{}, 0)
	if err != nil {
		n.Notes = append(n.Notes, fmt.Sprintf("alarm history partly unreadable: %v", err))
	}
	n.Alarms = alarmPeriods(evs, from, to)
	hs, err := storedHoldTests(st, 0)
	if err != nil {
		n.Notes = append(n.Notes, fmt.Sprintf("hold tests partly unreadable: %v", err))
	}
	n.HoldTests = reportHoldTests(hs, from, to)
	bakes, berr := storedBakes(st)
	if berr != nil {
		n.Notes = append(n.Notes, fmt.Sprintf("bakes partly unreadable: %v", berr))
	}
	n.Bakes = reportBakes(bakes, from, to)
	n.PumpDowns, err = pumpDowns(cfg, db, from, to)
	if err != nil {
		n.Notes = append(n.Notes, fmt.Sprintf("pump-down times partly unknown: %v", err))
	}
	return n, nil
}

// reportUnit is the report's display unit of a kind: report.unit for
// pressure when set, else the unit most of those gauges show (by name
// order on a tie), else the base unit.
func reportUnit(cfg *config.Config, kind string) calib.Unit {
	dim := config.GaugeDim(kind)
	if r := cfg.Report; r != nil && r.Unit != "" && kind == "pressure" {
		if u, err := calib.ParseUnit(r.Unit, dim); err == nil {
			return u
		}
	}
	votes := map[string]int{}
	best := ""
	for _, name := range sortedKeys(cfg.Gauges) {
		if g := cfg.Gauges[name]; g != nil && g.Kind == kind && g.Unit != "" {
			votes[g.Unit]++
			if votes[g.Unit] > votes[best] {
				best = g.Unit
			}
		}
	}
	if u, err := calib.ParseUnit(best, dim); err == nil && best != "" {
		return u
	}
	return dim.Base()
}

// reportSeries reads one gauge's reduced points. Lines join points no
// further apart than three poll intervals plus a timeout, or than the
// reduction's buckets (2.5 of them), whichever is longer.
func reportSeries(cfg *config.Config, db *store.DB, name string, from, to time.Time) (report.Series, error) {
	g := cfg.Gauges[name]
	iv := gaugeInterval(cfg, name)
	bucket := to.Sub(from) / time.Duration(reportPoints/5)
	s := report.Series{Gauge: name, Kind: g.Kind, MaxStep: max(3*iv+g.Timeout.D(), bucket*5/2)}
	red, err := db.ReduceTiered(name, from, to, reportPoints) // roll-ups over long spans; counts either way
	s.Points = make([]report.Point, 0, len(red.Points))
	for _, p := range red.Points {
		s.Points = append(s.Points, reportPoint(p))
	}
	s.Stored, s.NotOK = red.Count, red.NotOK
	if red.Tier != store.TierRaw { // bucket edges on whole minutes or hours widen the buckets
		s.MaxStep = max(s.MaxStep, red.GapLimit)
	}
	return s, err
}

func reportPoint(p store.Point) report.Point {
	return report.Point{At: p.At, Value: p.Value, Quality: calib.Quality(p.Quality)}
}

// gaugeInterval is a gauge's poll interval; a combined gauge's is its
// slowest member's.
func gaugeInterval(cfg *config.Config, name string) time.Duration {
	g := cfg.Gauges[name]
	if g == nil {
		return config.DefaultInterval
	}
	if len(g.Combine) == 0 {
		return cmp.Or(g.Interval.D(), config.DefaultInterval)
	}
	var iv time.Duration
	for _, m := range g.Combine {
		if mc := cfg.Gauges[m]; mc != nil && len(mc.Combine) == 0 {
			iv = max(iv, mc.Interval.D())
		}
	}
	return cmp.Or(iv, config.DefaultInterval)
}

// alarmPeriods pairs each raise with the clear that follows it and keeps
// the periods that overlap from–to; one not cleared by to is still active.
func alarmPeriods(evs []alerts.Event, from, to time.Time) []report.AlarmPeriod {
	var out []report.AlarmPeriod
	open := map[string]*report.AlarmPeriod{}
	for _, ev := range evs {
		if !ev.At.Before(to) {
			break
		}
		switch ev.Kind {
		case alerts.Raised:
			if open[ev.Alarm] == nil {
				open[ev.Alarm] = &report.AlarmPeriod{Alarm: ev.Alarm, Gauge: ev.Gauge, Severity: string(ev.Severity), Raised: ev.At}
			}
		case alerts.Cleared:
			if p := open[ev.Alarm]; p != nil {
				p.Cleared = ev.At
				if !ev.At.Before(from) {
					out = append(out, *p)
				}
				delete(open, ev.Alarm)
			}
		}
	}
	for _, p := range open {
		out = append(out, *p)
	}
	slices.SortFunc(out, func(a, b report.AlarmPeriod) int {
		return cmp.Or(a.Raised.Compare(b.Raised), cmp.Compare(a.Alarm, b.Alarm))
	})
	return out
}

// reportHoldTests keeps the hold tests recorded (at least in part) within from–to.
func reportHoldTests(hs []HoldTestJSON, from, to time.Time) []report.HoldTest {
	var out []report.HoldTest
	for _, h := range hs {
		if !h.RecordFrom.Before(to) || !h.RecordTo.After(from) {
			continue
		}
		u, err := calib.ParseUnit(h.Unit, calib.Throughput)
		if err != nil {
			u = calib.Throughput.Base()
		}
		r := report.HoldTest{ID: h.ID, Gauge: h.Gauge, From: h.RecordFrom, To: h.RecordTo, Verdict: h.Verdict,
			LeakRate: math.NaN(), Unit: u, Summary: h.Summary}
		switch {
		case holdRunning(h.State):
			r.Verdict = h.State
		case h.State == holdFailed:
			r.Summary = h.Error
		case h.Result != nil && h.Result.Classification != alerts.Inconclusive:
			r.LeakRate = h.Result.LeakRate
		}
		out = append(out, r)
	}
	return out
}

// pumpDowns follows each pump_down rule over the gauge's full record of
// the period (not the reduced one: the time reached is to the sample).
func pumpDowns(cfg *config.Config, db *store.DB, from, to time.Time) ([]report.PumpDown, error) {
	var out []report.PumpDown
	var errs []error
	for _, a := range cfg.Alarms {
		if a == nil || a.PumpDown == nil {
			continue
		}
		p := a.PumpDown
		var rerr error
		seq := func(yield func(report.Point) bool) {
			rerr = db.Range(a.Gauge, from, to, func(sp store.Point) bool { return yield(reportPoint(sp)) })
		}
		began, reached, before := report.FindPumpDown(seq, float64(p.Start), float64(p.Target))
		if rerr != nil {
			errs = append(errs, fmt.Errorf("%s: %w", a.Name, rerr))
		}
		out = append(out, report.PumpDown{Alarm: a.Name, Gauge: a.Gauge, Start: float64(p.Start), Target: float64(p.Target),
			Within: p.Within.D(), Began: began, Reached: reached, BeganBefore: before})
	}
	return out, errors.Join(errs...)
}

// storedHoldTests returns the newest stored hold tests (at most n; 0: all),
// oldest first.
func storedHoldTests(st *alarmstore.Store, n int) ([]HoldTestJSON, error) {
	ids, err := st.HoldTestIDs()
	if err != nil {
		return nil, err
	}
	if n > 0 && len(ids) > n {
		ids = ids[len(ids)-n:]
	}
	var out []HoldTestJSON
	for _, id := range ids {
		b, err := st.HoldTest(id, "report.json")
		if err != nil {
			continue // reserved but not written (a crash between the two): nothing to run or show
		}
		var h HoldTestJSON
		if err := json.Unmarshal(b, &h); err != nil {
			return out, fmt.Errorf("hold test %s: stored report unreadable: %w", id, err)
		}
		out = append(out, h)
	}
	return out, nil
}

// isLocked reports whether opening a store failed because another process
// holds its file lock.
func isLocked(err error) bool { return errors.Is(err, berrors.ErrTimeout) }

// BareReportConfig is the config a report of a data directory needs when no
// config file is at hand (a night brought in by holdfast import): every
// stored series becomes a gauge of the kind kinds gives it, pressure when
// kinds names none; those are returned as guessed, for the caller to say so.
// Units are the base units (Pa, °C); the chamber is named after the directory.
func BareReportConfig(dir string, kinds map[string]string) (cfg *config.Config, guessed []string, err error) {
	db, err := openIdle(dir)
	if err != nil {
		return nil, nil, err
	}
	series, err := db.Series()
	err = errors.Join(err, db.Close())
	if err != nil {
		return nil, nil, err
	}
	cfg = &config.Config{Chamber: config.ChamberConfig{Name: filepath.Base(filepath.Clean(dir))}, Store: config.StoreConfig{Dir: dir},
		Gauges: map[string]*config.GaugeConfig{}}
	for name, k := range kinds {
		if !slices.Contains(series, name) {
			return nil, nil, fmt.Errorf("--kind %s=%s: no series %q stored in %s (stored: %s)", name, k, name, dir, strings.Join(series, ", "))
		}
		if k != "pressure" && k != "temperature" {
			return nil, nil, fmt.Errorf("--kind %s=%s: want pressure or temperature", name, k)
		}
	}
	for _, s := range series {
		k := kinds[s]
		if k == "" {
			k, guessed = "pressure", append(guessed, s)
		}
		cfg.Gauges[s] = &config.GaugeConfig{Kind: k}
	}
	return cfg, guessed, nil
}

// openIdle opens the store in dir read-only, failing at once, wrapping
// ErrDataInUse, while a daemon holds it.
func openIdle(dir string) (*store.DB, error) {
	db, err := store.Open(StorePath(dir), store.Options{ReadOnly: true, Timeout: 300 * time.Millisecond})
	if err != nil && isLocked(err) {
		return nil, fmt.Errorf("%w: %w", ErrDataInUse, err)
	}
	return db, err
}
