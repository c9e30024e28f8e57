package daemon

import (
	"context"
	"errors"
	"slices"
	"strings"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"holdfast/daemon/config"
)

// A reload applies links, gauges, alarms and shelving live; any other
// difference refuses the whole reload (nothing is applied) with the keys
// that need a restart, so the running daemon never mixes two configs. The
// alarm engine is not rebuilt: it swaps its set of alarms, keeping every
// alarm's state by name (reload_alarms.go). The outbox is not rebuilt:
// notifiers cannot change live.

// ReloadError is a reload that was refused: the old config keeps running.
type ReloadError struct {
	Restart []string // keys that cannot change while running
	Reason  string   // or why the reload cannot happen now
}

func (e *ReloadError) Error() string {
	if len(e.Restart) > 0 {
		return "cannot change while running: " + strings.Join(e.Restart, ", ") + "; restart to apply (nothing was applied)"
	}
	return e.Reason + " (nothing was applied)"
}

type reloadRequest struct {
	cfg   *config.Config
	reply chan reloadResult // buffered: Run never blocks on it
}

type reloadResult struct {
	changes config.Changes
	err     error
}

// Reload re-reads the config file the daemon was started with, checks it
// and applies it without a restart: a gauge added starts polling, one
// removed stops (its stored samples stay), a changed link is reconnected
// and an unchanged one keeps its connection and its gauges their schedule;
// alarms added, removed or changed apply too, each keeping its state by
// name (Engine.Replace), as do new shelving limits.
// An invalid file, or a change that needs a restart, leaves the running
// config as it was; the error is a *config.ConfigError (every problem with
// its line) or a *ReloadError. Reload waits for Run to apply the change.
func (d *Daemon) Reload(ctx context.Context) (config.Changes, error) {
	cfg, err := config.LoadConfig(d.file)
	if err == nil && d.adjust != nil {
		d.adjust(cfg)
	}
	if err == nil {
		req := reloadRequest{cfg: cfg, reply: make(chan reloadResult, 1)}
		select {
		case d.reloads <- req:
			select {
			case r := <-req.reply:
				if r.err == nil {
					d.reloadOK.set(true, time.Now())
					d.log.Info("config reloaded", "file", d.file, "changes", r.changes.String())
					return r.changes, nil
				}
				cfgChanges, err := r.changes, r.err
				d.reloadFailed(err)
				return cfgChanges, err
			case <-ctx.Done():
				return config.Changes{}, ctx.Err() // Run applies it anyway and drops the answer
			}
		case <-ctx.Done():
			return config.Changes{}, ctx.Err()
		}
	}
	d.reloadFailed(err)
	return config.Changes{}, err
}

// reloadFailed logs every problem of a refused reload and says so in the
// metrics.
func (d *Daemon) reloadFailed(err error) {
	d.reloadOK.set(false, time.Time{})
	var ce *config.ConfigError
	if errors.As(err, &ce) {
		for _, p := range ce.Problems {
			d.log.Error("config not reloaded: problem", "file", ce.File, "line", p.Line, "path", p.Path, "problem", p.Msg)
		}
		d.log.Error("config not reloaded; the running config stays", "file", ce.File, "problems", len(ce.Problems))
		return
	}
	d.log.Error("config not reloaded; the running config stays", "file", d.file, "err", err)
}

// restartKeys lists the changes a running daemon cannot take: the
// notifiers and every key outside links, gauges, alarms and shelving.
func restartKeys(c config.Changes) []string {
	keys := slices.DeleteFunc(slices.Clone(c.Keys), liveKey)
	if !c.Notify.Empty() {
		keys = append(keys, "notify")
	}
	return keys
}

// pollers are the link pollers of one config; stop ends them between
// polls, leaving their links open for the next config to take over.
type pollers struct {
	stop chan struct{}
	wg   sync.WaitGroup
}

func (d *Daemon) startPollers(ctx context.Context) *pollers {
	p := &pollers{stop: make(chan struct{})}
	for _, l := range d.links {
		p.wg.Go(func() { d.pollLink(ctx, p.stop, l) })
	}
	return p
}

// apply swaps cfg in for the running config, from Run's goroutine: it
// builds the new links (reusing the connections of unchanged ones),
// gauges and alarms while the old pollers run, stops those between polls,
// swaps under liveMu (the alarm engine's set with the gauges, both or
// neither), closes the connections no longer used and starts the new
// pollers. On any error the old config and its pollers keep running.
func (d *Daemon) apply(ctx context.Context, old *pollers, cfg *config.Config) (*pollers, config.Changes, error) {
	ch := config.Diff(d.conf(), cfg)
	if keys := restartKeys(ch); len(keys) > 0 {
		return old, ch, &ReloadError{Restart: keys}
	}
	defs := d.reloadAlarms(cfg, ch)
	gauges := !ch.Links.Empty() || !ch.Gauges.Empty()
	if !gauges && defs == nil && len(ch.Keys) == 0 {
		return old, ch, nil
	}
	if err := d.holdTestRuns(gauges || defs != nil); err != nil {
		return old, ch, err
	}
	var nd *Daemon
	if gauges {
		var err error
		if nd, err = d.buildReloaded(cfg, ch); err != nil {
			return old, ch, err
		}
		close(old.stop)
		old.wg.Wait()
	}

	d.liveMu.Lock() // no hold test starts from here on
	err := d.holdTestRuns(gauges || defs != nil)
	if err == nil {
		err = d.swapAlarms(cfg, defs)
	}
	if err != nil {
		d.liveMu.Unlock()
		if nd == nil {
			return old, ch, err
		}
		if cerr := nd.closeNew(); cerr != nil {
			d.log.Warn("closing the links of a refused reload", "err", cerr)
		}
		return d.startPollers(ctx), ch, err // the old links, still open, poll on
	}
	var oldLinks []*link
	if nd != nil {
		flushBlends(d.store, d.gauges) // the old combined gauges' last blends; their pollers have stopped
		oldLinks = d.swapGauges(nd)
	}
	d.cfgp.Store(cfg)
	d.liveMu.Unlock()
	d.stopReminders(ch.Alarms.Removed)
	if nd == nil {
		return old, ch, nil
	}

	for _, l := range oldLinks {
		if !nd.keeps(l.name) && l.close != nil {
			if err := l.close(); err != nil {
				d.log.Warn("closing link", "link", l.name, "err", err)
			}
		}
	}
	return d.startPollers(ctx), ch, nil
}

// buildReloaded builds the links and gauges of cfg, taking over the
// running connections of the links that do not change and the drivers of
// the gauges that do not change.
func (d *Daemon) buildReloaded(cfg *config.Config, ch config.Changes) (*Daemon, error) {
	nd := &Daemon{log: d.log, clock: d.clock, emit: d.emit, store: d.store, trace: d.trace,
		reuse: map[string]*link{}, prev: map[string]*gauge{}}
	nd.cfgp.Store(cfg)
	for _, l := range d.links {
		if !slices.Contains(ch.Links.Changed, l.name) && cfg.Links[l.name] != nil {
			nd.reuse[l.name] = l
		}
		for _, g := range l.gauges {
			switch {
			case nd.reuse[l.name] == nil:
			case cfg.Gauges[g.name] != nil && !slices.Contains(ch.Gauges.Changed, g.name):
				nd.prev[g.name] = g // its driver carries on over the kept connection
			case l.sim != nil:
				l.sim.Release(g.name) // built again (or not) on the same chamber
			}
		}
	}
	err := nd.buildGauges()
	if err == nil {
		err = nd.loadCalibrations()
	}
	if err != nil {
		err = errors.Join(err, nd.closeNew())
		return nil, &ReloadError{Reason: "new config not applied: " + err.Error()}
	}
	return nd, nil
}

// swapGauges puts nd's links and gauges in place of the running ones,
// carrying each kept gauge's last reading and schedule over, and returns
// the links it replaced. The caller holds liveMu for writing and has
// stopped the pollers.
func (d *Daemon) swapGauges(nd *Daemon) []*link {
	oldLinks, oldGauges := d.links, d.gauges
	for _, g := range nd.gauges {
		g.slack = pollSlack(d.clock)
		if og := d.gaugeNamed(g.name); og != nil && og.cfg.Kind == g.cfg.Kind {
			og.mu.Lock()
			g.last, g.seen, g.up, g.misses = og.last, og.seen, og.up, og.misses
			if og.cfg.Link == g.cfg.Link && og.cfg.Interval == g.cfg.Interval {
				g.next = og.next
			}
			og.mu.Unlock()
		}
	}
	d.links, d.gauges = nd.links, nd.gauges
	d.met.gaugesChanged(oldGauges, d.gauges)
	return oldLinks
}

// closeNew closes the connections a failed reload had opened, never the
// ones it was to take over.
func (d *Daemon) closeNew() error {
	var errs []error
	for _, l := range d.links {
		if d.reuse[l.name] == nil && l.close != nil {
			errs = append(errs, l.close())
		}
	}
	return errors.Join(errs...)
}

// keeps reports whether this (reloaded) daemon polls over the running
// daemon's connection called name.
func (d *Daemon) keeps(name string) bool {
	return d.reuse[name] != nil && slices.ContainsFunc(d.links, func(l *link) bool { return l.name == name })
}

// holdTestRuns refuses a reload that changes links, gauges or alarms
// (changes) while a hold test runs: it may be driving a valve over a link,
// and it has suppressed the alarms it provokes.
func (d *Daemon) holdTestRuns(changes bool) error {
	if id := d.alarms.RunningHoldTest(); changes && id != "" {
		return &ReloadError{Reason: "hold test " + id + " is running; reload after it ends"}
	}
	return nil
}

// reuseLink returns, for a reload, a link that takes over the open
// connection of the running one called name, or nil.
func (d *Daemon) reuseLink(name string) *link {
	old := d.reuse[name]
	if old == nil {
		return nil
	}
	return &link{name: name, close: old.close, stats: old.stats, sim: old.sim, stream: old.stream, modbus: old.modbus}
}

// gaugesChanged gives new gauges their series and drops removed ones'.
func (m *metrics) gaugesChanged(old, new []*gauge) {
	for _, g := range old {
		if !slices.ContainsFunc(new, func(n *gauge) bool { return n.name == g.name }) {
			m.polls.DeleteLabelValues(g.name)
			m.skipped.DeleteLabelValues(g.name)
			for _, r := range pollFailReasons {
				m.pollErrors.DeleteLabelValues(g.name, r)
			}
		}
	}
	for _, g := range new {
		m.polls.WithLabelValues(g.name)
		m.skipped.WithLabelValues(g.name)
		for _, r := range pollFailReasons {
			m.pollErrors.WithLabelValues(g.name, r)
		}
	}
}

// reloadStatus backs holdfast_config_last_reload_successful and
// holdfast_config_last_reload_success_timestamp_seconds.
type reloadStatus struct {
	mu sync.Mutex
	ok bool
	at time.Time
}

func (s *reloadStatus) set(ok bool, at time.Time) {
	s.mu.Lock()
	defer s.mu.Unlock()
	s.ok = ok
	if ok {
		s.at = at
	}
}

func (s *reloadStatus) get() (bool, time.Time) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.ok, s.at
}

var (
	descReloadOK = prometheus.NewDesc("holdfast_config_last_reload_successful",
		"1 if the last config reload (or the start) succeeded, 0 if the last reload was refused and the config before it still runs.", nil, nil)
	descReloadAt = prometheus.NewDesc("holdfast_config_last_reload_success_timestamp_seconds",
		"Wall-clock time of the last successful config reload, or of the start.", nil, nil)
)

// reloadCollector exports the reload status.
type reloadCollector struct{ s *reloadStatus }

func (c reloadCollector) Describe(ch chan<- *prometheus.Desc) {
	ch <- descReloadOK
	ch <- descReloadAt
}

func (c reloadCollector) Collect(ch chan<- prometheus.Metric) {
	ok, at := c.s.get()
	ch <- prometheus.MustNewConstMetric(descReloadOK, prometheus.GaugeValue, b2f(ok))
	ch <- prometheus.MustNewConstMetric(descReloadAt, prometheus.GaugeValue, float64(at.UnixNano())/1e9)
}
