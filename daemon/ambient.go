package daemon

import (
	"fmt"
	"log/slog"
	"math"
	"slices"
	"time"

	"holdfast/calib"
	"holdfast/daemon/store"
)

// ambientComp is a gauge's compensation, wired to its temperature gauge.
type ambientComp struct {
	a      calib.Ambient
	from   *gauge
	maxAge time.Duration
	since  time.Time // when it was wired: the ambient gauge's first reading is awaited for maxAge

	missing bool // last reading had no usable ambient (logged on change)
}

// wireAmbient connects every gauge's compensation to its temperature gauge.
func (d *Daemon) wireAmbient() error {
	byName := map[string]*gauge{}
	for _, g := range d.gauges {
		byName[g.name] = g
	}
	for _, g := range d.gauges {
		a := g.cfg.Ambient
		if a == nil {
			continue
		}
		src := byName[a.Gauge]
		if src == nil {
			return fmt.Errorf("gauge %s: ambient.gauge %q was not built", g.name, a.Gauge)
		}
		g.amb = &ambientComp{a: calib.Ambient{Reference: float64(a.Reference), Zero: a.ZeroPerKelvin, Span: a.SpanPerKelvin},
			from: src, maxAge: a.MaxAge.D(), since: d.clock.Now()}
	}
	return nil
}

// compensate corrects raw for the ambient temperature at time at. Without a
// recent valid ambient reading it returns raw unchanged, says so once, and
// reports false.
func (c *ambientComp) compensate(log *slog.Logger, gauge string, raw float64, at time.Time) (float64, bool) {
	v := c.from.view(at)
	fresh := v.seen && v.last.Quality == calib.QualityOK && at.Sub(v.last.At) <= c.maxAge
	var out float64
	var err error
	if fresh {
		out, err = c.a.Apply(raw, v.last.Value)
	}
	ok := fresh && err == nil
	// At the start every gauge polls at once: a gauge read before its
	// ambient gauge's first answer is no news, until max_age has passed.
	awaiting := !v.seen && at.Sub(c.since) <= c.maxAge
	switch {
	case !ok && !c.missing && !awaiting:
		attrs := []any{"gauge", gauge, "ambient_gauge", c.from.name}
		if err != nil {
			attrs = append(attrs, "err", err)
		}
		log.Warn("ambient compensation not applied: no recent valid ambient temperature", attrs...)
	case ok && c.missing:
		log.Info("ambient compensation applied again", "gauge", gauge)
	}
	c.missing = !ok && !awaiting
	if !ok {
		return raw, false
	}
	return out, true
}

// ambientTransfers returns, for reprocessing g's samples in [from, to), the
// transfer to apply at each time: t after the same ambient compensation the
// live pipeline applied, from the ambient gauge's stored samples (the
// latest valid one no older than max_age), or t alone where there is none.
func (d *Daemon) ambientTransfers(g *gauge, t calib.Transfer, from, to time.Time) (func(time.Time) calib.Transfer, error) {
	if g.amb == nil {
		return func(time.Time) calib.Transfer { return t }, nil
	}
	type reading struct {
		at time.Time
		c  float64
	}
	var temps []reading
	err := d.store.Range(g.amb.from.name, from.Add(-g.amb.maxAge), to, func(p store.Point) bool {
		c := math.NaN() // not ok: no correction, as live
		if calib.Quality(p.Quality) == calib.QualityOK {
			c = p.Value
		}
		temps = append(temps, reading{p.At, c})
		return true
	})
	if err != nil {
		return nil, fmt.Errorf("ambient gauge %s: %w", g.amb.from.name, err)
	}
	return func(at time.Time) calib.Transfer {
		i, _ := slices.BinarySearchFunc(temps, at, func(r reading, at time.Time) int { return r.at.Compare(at) })
		if i < len(temps) && temps[i].at.Equal(at) {
			i++
		}
		if i == 0 || at.Sub(temps[i-1].at) > g.amb.maxAge || math.IsNaN(temps[i-1].c) {
			return t
		}
		return compensated{t: t, a: g.amb.a, c: temps[i-1].c}
	}, nil
}

// compensated is a transfer applied after an ambient correction at a fixed
// ambient temperature c.
type compensated struct {
	t calib.Transfer
	a calib.Ambient
	c float64
}

func (x compensated) Apply(raw float64) (float64, error) {
	r, err := x.a.Apply(raw, x.c)
	if err != nil {
		return x.t.Apply(raw)
	}
	return x.t.Apply(r)
}
