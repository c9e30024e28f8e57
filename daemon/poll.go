package daemon

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"strings"
	"sync"
	"time"

	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
	"holdfast/drivers"
	"holdfast/drivers/sim"
)

// downAfter is how many polls in a row must fail before a gauge is reported down.
const downAfter = 3

// A link is one connection and the gauges polled over it, in turn.
type link struct {
	name   string
	gauges []*gauge
	close  func() error
	stats  func() drivers.LinkStats // nil for a simulator link
	sim    *sim.Chamber             // set for a simulator link
	stream *drivers.StreamLink      // set for a serial or TCP link
	modbus *drivers.ModbusLink      // set for a Modbus link
}

// A gauge is one measured channel and what the daemon last learned of it.
type gauge struct {
	name string
	cfg  *config.GaugeConfig
	dim  calib.Dimension
	unit calib.Unit
	drv  drivers.Driver
	fed  []*gauge     // gauges whose values come in this gauge's exchange (from:)
	amb  *ambientComp // ambient-temperature compensation of the raw signal; nil for none
	corr *correction  // gas and transpiration corrections of the value; nil for none
	live *gaugeLive   // calibration and combined-gauge state; see calib.go

	mu       sync.Mutex
	transfer calib.Transfer // the active calibration, or the instrument's own curve
	calID    uint32         // id of the active calibration; 0 for the instrument's own curve
	last     calib.Sample
	seen     bool // any answer yet
	up       bool
	misses   int
	slack    time.Duration // simulated time a poll may take beyond its timeout (the wall floor on a fast clock); see pollSlack

	next time.Time // the next poll, left by a poller stopped for a reload; written and read with no poller running
}

type gaugeView struct {
	name, kind string
	last       calib.Sample
	seen, up   bool
	stale      bool
	silent     bool // downAfter polls in a row got no answer (or the link is down), or any since the last sample went stale
}

func (g *gauge) view(now time.Time) gaugeView {
	g.mu.Lock()
	defer g.mu.Unlock()
	stale := now.Sub(g.last.At) > 3*g.cfg.Interval.D()+g.cfg.Timeout.D()+g.slack
	return gaugeView{name: g.name, kind: g.cfg.Kind, last: g.last, seen: g.seen, up: g.up, stale: stale,
		silent: g.misses >= downAfter || g.misses > 0 && stale}
}

// pollLink owns l: it polls l's gauges one at a time, each on its interval,
// until ctx is done, then closes l. When stop closes first (a reload), it
// returns between polls with l open for the next config's poller, and
// leaves each gauge's next poll time in the gauge.
func (d *Daemon) pollLink(ctx context.Context, stop <-chan struct{}, l *link) {
	next := make([]time.Time, len(l.gauges))
	handover := false
	defer func() {
		if handover {
			for i, g := range l.gauges {
				g.next = next[i]
			}
			return
		}
		if l.close != nil {
			if err := l.close(); err != nil {
				d.log.Warn("closing link", "link", l.name, "err", err)
			}
		}
	}()
	log := d.log.With("link", l.name)
	now := d.clock.Now()
	for i, g := range l.gauges {
		next[i] = now
		if !g.next.IsZero() {
			next[i] = g.next // the same schedule as under the config before a reload
		}
	}
	for {
		i := earliest(next)
		if wait := next[i].Sub(d.clock.Now()); wait > 0 {
			select {
			case <-ctx.Done():
				return
			case <-stop:
				handover = true
				return
			case <-d.clock.After(wait):
			}
		}
		if ctx.Err() != nil {
			return
		}
		select {
		case <-stop:
			handover = true
			return
		default:
		}
		g := l.gauges[i]
		d.poll(ctx, log, g)
		d.progress.done()
		iv := g.cfg.Interval.D()
		next[i] = next[i].Add(iv)
		if now := d.clock.Now(); next[i].Before(now) {
			skipped := now.Sub(next[i])/iv + 1
			next[i] = next[i].Add(skipped * iv)
			d.met.skipped.WithLabelValues(g.name).Add(float64(skipped))
		}
	}
}

// poll reads g once and passes the sample down the pipeline.
func (d *Daemon) poll(ctx context.Context, log *slog.Logger, g *gauge) {
	if len(g.fed) > 0 {
		d.pollShared(ctx, log, g)
		return
	}
	rctx, cancel := d.withTimeout(ctx, g.cfg.Timeout.D())
	r, err := g.drv.Read(rctx)
	if err != nil && ctx.Err() == nil && errors.Is(context.Cause(rctx), context.DeadlineExceeded) && !errors.Is(err, drivers.ErrNoReply) {
		err = &drivers.GaugeError{Gauge: g.name, Op: "read", Err: fmt.Errorf("%w within %s", drivers.ErrNoReply, g.cfg.Timeout.D())}
	}
	cancel()
	d.met.polls.WithLabelValues(g.name).Inc()
	d.handle(ctx, log, g, r, err)
}

// pollShared runs one exchange that returns the values of g and of the
// gauges fed by it, and hands each its reading.
func (d *Daemon) pollShared(ctx context.Context, log *slog.Logger, g *gauge) {
	rctx, cancel := d.withTimeout(ctx, g.cfg.Timeout.D())
	all, err := g.drv.(drivers.MultiDriver).ReadAll(rctx)
	cancel()
	for _, m := range append([]*gauge{g}, g.fed...) {
		if m != g {
			d.met.polls.WithLabelValues(m.name).Inc()
		}
		if err != nil {
			d.handle(ctx, log, m, drivers.Reading{}, err)
			continue
		}
		r, err := channelReading(all, m.cfg.Channel)
		if err != nil {
			err = &drivers.GaugeError{Gauge: m.name, Op: "parse reply", Err: err}
		}
		d.handle(ctx, log, m, r, err)
	}
}

// handle passes one reading (or its error) down the pipeline.
func (d *Daemon) handle(ctx context.Context, log *slog.Logger, g *gauge, r drivers.Reading, err error) {
	if err != nil {
		if ctx.Err() != nil {
			return // shutting down
		}
		d.pollFailed(log, g, err)
		return
	}
	if r.At.IsZero() {
		r.At = d.clock.Now()
	}
	if res := d.store.Resolution(); !g.afterLast(r.At, res) {
		// A poll right after a stalled one can read within the store's
		// resolution of it: a second sample at one stored time says
		// nothing new, and the series keeps one sample per time.
		d.met.skipped.WithLabelValues(g.name).Inc()
		log.Debug("reading within the store's resolution of the last one; not kept", "gauge", g.name, "at", r.At, "resolution", res)
		return
	}
	s, calID := d.sample(g, r)
	d.store.Append(g.name, store.Point{At: s.At, Raw: s.Raw, Value: s.Value, Quality: uint8(s.Quality), Calibration: calID})
	d.record(log, g, s)
	for _, ev := range d.alarms.Observe(g.name, s) {
		d.alarmEvent(log, ev)
	}
	d.combineAfter(log, g, s)
}

// afterLast reports whether a reading at t falls at a later stored time
// than the gauge's last sample.
func (g *gauge) afterLast(t time.Time, res time.Duration) bool {
	g.mu.Lock()
	defer g.mu.Unlock()
	return !g.seen || laterStored(t, g.last.At, res)
}

// laterStored reports whether t is stored at a later time than than: the
// store cuts both to res.
func laterStored(t, than time.Time, res time.Duration) bool {
	return t.Truncate(res).After(than.Truncate(res))
}

// setTransfer makes t (calibration id, or 0 for the instrument's own
// curve) the gauge's active mapping from the next reading on.
func (g *gauge) setTransfer(t calib.Transfer, id uint32) {
	g.mu.Lock()
	g.transfer, g.calID = t, id
	g.mu.Unlock()
}

// sample applies the gauge's active transfer to a reading and says which
// calibration produced the value.
func (d *Daemon) sample(g *gauge, r drivers.Reading) (calib.Sample, uint32) {
	g.mu.Lock()
	transfer, calID := g.transfer, g.calID
	g.mu.Unlock()
	s := calib.Sample{At: r.At, Raw: r.Raw, Value: math.NaN()}
	if s.At.IsZero() {
		s.At = d.clock.Now()
	}
	switch r.Status {
	case drivers.StatusOK:
		raw := r.Raw
		if g.amb != nil {
			raw, _ = g.amb.compensate(d.log, g.name, raw, s.At)
		}
		v, err := transfer.Apply(raw)
		s.Quality = calib.QualityOf(err)
		if s.Quality.HasValue() {
			s.Value = v
			if g.corr != nil {
				s.Value = g.corr.live(d.log, g.name, v, s.At)
			}
		}
	case drivers.StatusOverRange:
		s.Quality = calib.QualityOverRange
	case drivers.StatusUnderRange:
		s.Quality = calib.QualityUnderRange
	case drivers.StatusOff:
		s.Quality = calib.QualityOff
	default:
		s.Quality = calib.QualitySensorFault
	}
	return s, calID
}

func (d *Daemon) record(log *slog.Logger, g *gauge, s calib.Sample) {
	g.mu.Lock()
	wasUp, wasSeen := g.up, g.seen
	g.last, g.seen, g.misses = s, true, 0
	g.up = s.Quality != calib.QualitySensorFault
	up := g.up
	g.mu.Unlock()
	switch {
	case up && (!wasUp || !wasSeen):
		msg := "reads " + s.Quality.String()
		if s.Quality.HasValue() {
			msg = "reads " + calib.Format(s.Value, g.unit)
		}
		attrs := []any{"gauge", g.name, "quality", s.Quality.String()}
		if s.Quality.HasValue() {
			attrs = append(attrs, "value", calib.Format(s.Value, g.unit))
		}
		log.Info("gauge up", attrs...)
		d.emit(Event{At: s.At, Kind: "gauge-up", Gauge: g.name, Message: msg})
	case !up && (wasUp || !wasSeen):
		log.Warn("gauge reports a sensor fault", "gauge", g.name)
		d.emit(Event{At: s.At, Kind: "gauge-down", Gauge: g.name, Message: "instrument reports a sensor fault"})
	}
	d.bakeObserve(log, g.name, s)
	log.Debug("sample", "gauge", g.name, "raw", s.Raw, "value", s.Value, "quality", s.Quality.String())
}

func (d *Daemon) pollFailed(log *slog.Logger, g *gauge, err error) {
	reason := failReason(err)
	d.met.pollErrors.WithLabelValues(g.name, reason).Inc()
	g.mu.Lock()
	g.misses++
	if drivers.IsLinkDown(err) && g.misses < downAfter {
		g.misses = downAfter // the link itself is gone: no point waiting for more misses
	}
	down := g.up && g.misses == downAfter || !g.seen && g.misses == downAfter
	if down {
		g.up = false
	}
	g.mu.Unlock()
	log.Debug("poll failed", "gauge", g.name, "reason", reason, "err", err)
	if down {
		now := d.clock.Now()
		log.Warn("gauge not answering", "gauge", g.name, "misses", downAfter, "err", err)
		d.emit(Event{At: now, Kind: "gauge-down", Gauge: g.name, Message: "not answering: " + err.Error()})
	}
}

// pollFailReasons are the reason labels of holdfast_poll_errors_total.
var pollFailReasons = []string{"no-reply", "bad-reply", "link", "wrong-instrument"}

// failReason is the reason label of a failed poll: a link down because its
// identity check failed is "wrong-instrument" (something answers, but not
// the instrument configured), any other link failure "link".
func failReason(err error) string {
	var ge *drivers.GaugeError
	switch {
	case errors.Is(err, drivers.ErrWrongInstrument):
		return "wrong-instrument"
	case errors.Is(err, drivers.ErrNoReply), errors.Is(err, context.DeadlineExceeded):
		return "no-reply"
	case errors.As(err, &ge) && strings.Contains(ge.Op, "parse"):
		return "bad-reply"
	default:
		return "link"
	}
}

// simTimeoutFloor is the least wall time a read timeout on a fast
// simulated clock lasts (or the configured timeout itself, when shorter).
// At --speed 600 a 2 s timeout is 3.3 ms of wall time, less than a loaded
// machine may leave a goroutine unscheduled, so without a floor a healthy
// simulated gauge (or a Modbus server on loopback) reads as not answering.
// 500 ms is far above scheduling delays and loopback round trips, and
// short enough that a gauge that really is silent is still seen quickly.
const simTimeoutFloor = 500 * time.Millisecond

// pollSlack is how much simulated time a poll may take beyond its
// configured timeout: on a fast simulated clock a timeout lasts at least
// simTimeoutFloor of wall time (withTimeout), which is speed times longer
// in simulated time, and a sample is not stale while a poll may still be
// under way. It is zero on the wall clock.
func pollSlack(c Clock) time.Duration {
	fast, ok := c.(interface{ Speed() float64 })
	if !ok || fast.Speed() <= 1 {
		return 0
	}
	return time.Duration(float64(simTimeoutFloor) * fast.Speed())
}

// withTimeout is context.WithTimeout on the daemon's clock, so a read
// timeout is as long in simulated time as it is in the config; on a
// simulated clock it also lasts at least min(timeout, simTimeoutFloor) of
// wall time.
func (d *Daemon) withTimeout(ctx context.Context, timeout time.Duration) (context.Context, context.CancelFunc) {
	if _, wall := d.clock.(wallClock); wall {
		return context.WithTimeout(ctx, timeout)
	}
	rctx, cancel := context.WithCancelCause(ctx)
	stop := make(chan struct{})
	go func() {
		floor := time.NewTimer(min(timeout, simTimeoutFloor))
		defer floor.Stop()
		simulated, wall := d.clock.After(timeout), floor.C
		for simulated != nil || wall != nil {
			select {
			case <-simulated:
				simulated = nil
			case <-wall:
				wall = nil
			case <-stop:
				return
			}
		}
		cancel(context.DeadlineExceeded)
	}()
	return rctx, func() { close(stop); cancel(context.Canceled) }
}

// earliest is the index of the earliest time in ts (the first, on a tie).
func earliest(ts []time.Time) int {
	i := 0
	for j, t := range ts {
		if t.Before(ts[i]) {
			i = j
		}
	}
	return i
}

// channelReading picks one gauge's reading from a several-value exchange:
// the one keyed by channel, or the only one when no channel is set.
func channelReading(all map[string]drivers.Reading, channel string) (drivers.Reading, error) {
	if r, ok := all[channel]; ok {
		return r, nil
	}
	if channel == "" && len(all) == 1 {
		for _, only := range all {
			return only, nil
		}
	}
	return drivers.Reading{}, fmt.Errorf("no value for channel %q in the reply (got %s)", channel, strings.Join(sortedKeys(all), ", "))
}
