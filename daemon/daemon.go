package daemon

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"slices"
	"sync"
	"sync/atomic"
	"time"

	"holdfast/alerts"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
)

// A Clock gives the daemon every timestamp and every delay. In production it
// is the wall clock; the demo passes the simulator's faster clock.
type Clock interface {
	Now() time.Time
	After(d time.Duration) <-chan time.Time
}

type wallClock struct{}

func (wallClock) Now() time.Time                         { return time.Now() }
func (wallClock) After(d time.Duration) <-chan time.Time { return time.After(d) }

// An Event is one thing a person watching the daemon wants to see: a gauge
// coming up or going down, a limit crossed, an alarm raised or cleared.
type Event struct {
	At       time.Time
	Kind     string // gauge-up, gauge-down, limit-crossed, alarm-raised, alarm-cleared
	Gauge    string
	Alarm    string
	Severity string
	Message  string
}

// Options configure a Daemon beyond its config file.
type Options struct {
	Log     *slog.Logger // nil discards
	Clock   Clock        // nil is the wall clock
	OnEvent func(Event)  // called from pollers; must not block for long
	// EventsShown says OnEvent shows every alarm event to the person
	// watching (the demo prints them): the log then leaves alarm events
	// out, so that each prints once.
	EventsShown bool
	// Adjust, when set, is applied to every config a reload reads, as the
	// caller applied it to the first: the demo points the store, the
	// listener and the token at its own directory, so a reload of its
	// scenario file does not read as a change of those.
	Adjust func(*config.Config)
}

// conf returns the running config. A reload swaps in a new one whose
// parts other than links, gauges, alarms and shelving are the same, so a
// caller may keep the pointer for one piece of work.
func (d *Daemon) conf() *config.Config { return d.cfgp.Load() }

// A Daemon polls every gauge of one config and serves what it reads.
type Daemon struct {
	cfgp        atomic.Pointer[config.Config] // the running config; a reload swaps it (see conf)
	log         *slog.Logger
	clock       Clock
	emit        func(Event)
	eventsShown bool // alarm events are shown by emit, not logged
	adjust      func(*config.Config)
	store       *store.DB
	links       []*link
	gauges      []*gauge // sorted by name
	alarms      *alerts.Engine
	alarmDefs   []*alerts.Alarm // what alarms runs, as built from cfg; a reload keeps the unchanged ones
	bake        *baker          // nil without a bake plan
	met         *metrics
	ln          net.Listener
	token       string // bearer token for changes; empty refuses them
	progress    progress
	ntfMu       sync.Mutex
	ntf         *notifierSet          // nil when no notifiers are configured
	alarmsDown  atomic.Pointer[error] // set when the alarm state could not be loaded
	alarmsReady chan struct{}         // closed once the alarm loop has restored its state
	retryMu     sync.Mutex
	retry       []alerts.Event             // transitions whose queueing for notification failed
	trace       func(dir string, b []byte) // set by OpenProbe: every message each driver sends and receives
	repeats     *repeatHandler             // holds back repeated error lines; nil in tests that build a Daemon by hand

	rw *remoteWriter // nil without remote_write

	flushMu  sync.Mutex
	flushErr error

	// Reload (reload.go): Run swaps cfgp, links, gauges and the engine's
	// alarms under liveMu, which HTTP handlers and the daemon's loops hold
	// while they read them; pollers are stopped across a swap of gauges.
	file     string // the config file, read again by Reload
	reloads  chan reloadRequest
	reloadOK *reloadStatus
	liveMu   sync.RWMutex
	reuse    map[string]*link  // while building a reloaded config: the running links it keeps
	prev     map[string]*gauge // and the running gauges whose drivers it keeps
}

// StorePath is the bbolt file inside a data directory.
func StorePath(dir string) string { return filepath.Join(dir, "holdfast.db") }

// New builds a daemon: it opens the store and the links' drivers and binds
// the HTTP listener, so that every startup problem is reported before Run.
func New(cfg *config.Config, opt Options) (_ *Daemon, err error) {
	d := &Daemon{log: opt.Log, clock: opt.Clock, emit: opt.OnEvent, eventsShown: opt.EventsShown, adjust: opt.Adjust, alarmsReady: make(chan struct{}),
		file: cfg.File, reloads: make(chan reloadRequest), reloadOK: &reloadStatus{ok: true, at: time.Now()}}
	d.cfgp.Store(cfg)
	if d.log == nil {
		d.log = slog.New(slog.DiscardHandler)
	}
	// Log volume is a wall-time matter, so the repeat limit reads the wall clock.
	d.repeats = newRepeatHandler(d.log.Handler(), time.Now)
	d.log = slog.New(d.repeats)
	if d.clock == nil {
		d.clock = wallClock{}
	}
	if d.emit == nil {
		d.emit = func(Event) {}
	}
	defer func() {
		if err != nil {
			err = errors.Join(err, d.closeAll()) // nothing opened stays open
		}
	}()
	if err := d.buildGauges(); err != nil {
		return nil, err
	}
	for _, g := range d.gauges {
		g.slack = pollSlack(d.clock)
	}
	d.alarmDefs = d.limits()
	d.alarms = alerts.NewEngine(d.alarmDefs)
	d.alarms.SetShelfLimits(alerts.ShelfLimits{Default: cfg.Shelving.Default.D(), Max: cfg.Shelving.Max.D()})
	if d.token, err = config.ReadToken(cfg.HTTP.TokenPath()); err != nil {
		return nil, err
	}
	if err := os.MkdirAll(cfg.Store.Dir, 0o750); err != nil {
		return nil, fmt.Errorf("data directory: %w", err)
	}
	if d.store, err = store.Open(StorePath(cfg.Store.Dir), store.Options{Resolution: cfg.Store.Resolution.D()}); err != nil {
		return nil, err
	}
	if err := d.loadCalibrations(); err != nil {
		return nil, err
	}
	if len(cfg.Notify) > 0 {
		if d.ntf, err = newNotifierSet(cfg, d.store.Bolt(), d.clock, d.log.With("part", "notify")); err != nil {
			return nil, fmt.Errorf("notifiers: %w", err)
		}
	}
	d.met = newMetrics(d)
	d.met.reg.MustRegister(d.repeats.shared.suppressed)
	d.met.reg.MustRegister(reloadCollector{d.reloadOK})
	if d.rw, err = newRemoteWriter(d); err != nil {
		return nil, err
	}
	if d.ln, err = d.listen(); err != nil {
		return nil, err
	}
	return d, nil
}

// closeAll closes what a failed New had opened: its links and its store.
func (d *Daemon) closeAll() error {
	var errs []error
	for _, l := range d.links {
		if l.close != nil {
			errs = append(errs, l.close())
		}
	}
	if d.store != nil {
		errs = append(errs, d.store.Close())
	}
	return errors.Join(errs...)
}

// Addr is the address the HTTP server listens on.
func (d *Daemon) Addr() string { return d.ln.Addr().String() }

// Run polls until ctx is done and returns only after its goroutines have
// exited and the store has been flushed and closed.
func (d *Daemon) Run(parent context.Context) error {
	ctx, cancel := context.WithCancelCause(parent)
	defer cancel(nil)
	var wg sync.WaitGroup
	polling := d.startPollers(ctx)
	var handlers sync.WaitGroup // requests in flight; the store outlives them
	h := d.handler()
	srv := d.server(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		handlers.Add(1)
		defer handlers.Done()
		h.ServeHTTP(w, r)
	}))
	srv.BaseContext = func(net.Listener) context.Context { return ctx }
	wg.Go(func() {
		if err := srv.Serve(d.ln); !errors.Is(err, http.ErrServerClosed) {
			cancel(fmt.Errorf("http: %w", err))
		}
	})
	wg.Go(func() { d.flushLoop(ctx) })
	wg.Go(func() { d.alarmLoop(ctx) })
	wg.Go(func() { d.notifyLoop(ctx) })
	wg.Go(func() { d.retentionLoop(ctx) })
	wg.Go(func() { d.systemdLoop(ctx) })
	wg.Go(func() { d.reportLoop(ctx) })
	wg.Go(func() { d.rw.run(ctx) })
	d.log.Info("daemon started", "chamber", d.conf().Chamber.Name, "gauges", len(d.gauges), "listen", d.Addr())
	for running := true; running; {
		select {
		case <-ctx.Done():
			running = false
		case req := <-d.reloads:
			var r reloadResult
			polling, r.changes, r.err = d.apply(ctx, polling, req.cfg)
			req.reply <- r
		}
	}
	shut, done := context.WithTimeout(context.Background(), 3*time.Second)
	httpErr := srv.Shutdown(shut)
	done()
	if httpErr != nil {
		httpErr = nil // requests still running after 3 s: wait for them below, then close
		_ = srv.Close()
	}
	wg.Wait()
	polling.wg.Wait()
	handlers.Wait() // a reprocess or hold-test request finishes before the store closes
	flushBlends(d.store, d.gauges)
	err := context.Cause(ctx)
	if parent.Err() != nil {
		err = nil // asked to stop, or the caller's time is up
	}
	err = errors.Join(err, httpErr, d.store.Close())
	d.log.Info("daemon stopped")
	return err
}

func (d *Daemon) flushLoop(ctx context.Context) {
	t := time.NewTicker(d.conf().Store.FlushEvery.D())
	defer t.Stop()
	for {
		select {
		case <-ctx.Done():
			d.flush()
			return
		case <-t.C:
			d.flush()
		}
	}
}

func (d *Daemon) flush() {
	err := d.store.Flush()
	d.flushMu.Lock()
	was := d.flushErr
	d.flushErr = err
	d.flushMu.Unlock()
	switch {
	case err != nil && was == nil:
		d.log.Error("store writes failing; samples are kept in memory and retried", "err", err)
	case err == nil && was != nil:
		d.log.Info("store writes working again")
	}
}

// CountSamples opens the store in dir read-only and counts the samples kept
// for each of the named gauges. It fails fast while a daemon holds the file.
func CountSamples(dir string, gauges []string) (counts map[string]int, err error) {
	db, err := store.Open(StorePath(dir), store.Options{ReadOnly: true})
	if err != nil {
		return nil, err
	}
	defer func() { err = errors.Join(err, db.Close()) }()
	counts = map[string]int{}
	for _, g := range gauges {
		if counts[g], err = db.Count(g); err != nil {
			return nil, fmt.Errorf("count %s: %w", g, err)
		}
	}
	return counts, nil
}

// Alarms returns every alarm's status.
func (d *Daemon) Alarms() []alerts.AlarmStatus { return d.alarms.Status() }

// GaugeNames lists the configured gauges, sorted.
func (d *Daemon) GaugeNames() []string {
	names := make([]string, len(d.gauges))
	for i, g := range d.gauges {
		names[i] = g.name
	}
	return slices.Clip(names)
}
