package daemon

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"strings"
	"time"

	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/drivers"
)

// A Probe runs one gauge's exchange on demand, for wiring up an instrument:
// it opens only that gauge's link, outside any running daemon.
type Probe struct {
	d *Daemon
	g *gauge
	l *link
}

// A ProbeResult is one exchange's outcome.
type ProbeResult struct {
	Reading drivers.Reading
	Sample  calib.Sample // after the gauge's transfer; Quality says if Value is valid
	Unit    calib.Unit   // the gauge's display unit
	Kind    string       // the gauge's kind: pressure, temperature or state
	Took    time.Duration
	Err     error
}

// OpenProbe prepares gauge name of cfg; trace, when set, sees every message
// sent ("send") and received ("recv"). A gauge with from: is probed through
// the gauge whose exchange feeds it.
func OpenProbe(cfg *config.Config, name string, log *slog.Logger, trace func(dir string, b []byte)) (*Probe, error) {
	gc, ok := cfg.Gauges[name]
	if !ok {
		return nil, fmt.Errorf("no gauge %q in %s (known: %s)", name, cfg.File, strings.Join(sortedKeys(cfg.Gauges), ", "))
	}
	if len(gc.Combine) > 0 {
		return nil, fmt.Errorf("gauge %s combines other gauges; probe one of them", name)
	}
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	d := &Daemon{log: log, clock: wallClock{}, emit: func(Event) {}, trace: trace}
	d.cfgp.Store(cfg)
	l, err := d.buildLink(gc.Link, cfg.Links[gc.Link])
	if err != nil {
		return nil, fmt.Errorf("link %s: %w", gc.Link, err)
	}
	src := gc
	if gc.From != "" {
		src = cfg.Gauges[gc.From] // its exchange feeds this gauge
	}
	g, err := d.buildGauge(name, src, l)
	if err == nil && gc.From != "" {
		g.cfg = gc
		g.transfer, err = config.GaugeTransfer(gc)
	}
	if err != nil {
		if l.close != nil {
			err = errors.Join(err, l.close())
		}
		return nil, fmt.Errorf("gauge %s: %w", name, err)
	}
	return &Probe{d: d, g: g, l: l}, nil
}

// Read runs one exchange and applies the gauge's transfer.
func (p *Probe) Read(ctx context.Context) ProbeResult {
	ctx, cancel := context.WithTimeout(ctx, p.g.cfg.Timeout.D())
	defer cancel()
	start := time.Now()
	var r drivers.Reading
	var err error
	if md, ok := p.g.drv.(drivers.MultiDriver); ok && p.g.cfg.Channel != "" {
		var all map[string]drivers.Reading
		if all, err = md.ReadAll(ctx); err == nil {
			r, err = channelReading(all, p.g.cfg.Channel)
		}
	} else {
		r, err = p.g.drv.Read(ctx)
	}
	res := ProbeResult{Reading: r, Took: time.Since(start), Err: err, Kind: p.g.cfg.Kind}
	res.Unit, _ = calib.ParseUnit(p.g.cfg.Unit, config.GaugeDim(p.g.cfg.Kind))
	if err == nil {
		res.Sample, _ = p.d.sample(p.g, r)
	}
	return res
}

// Close closes the probe's link.
func (p *Probe) Close() error {
	if p.l.close == nil {
		return nil
	}
	return p.l.close()
}
