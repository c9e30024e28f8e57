package daemon

import (
	"context"
	"fmt"
	"log/slog"
	"time"

	"holdfast/calib"
	"holdfast/daemon/alarmstore"
	"holdfast/daemon/config"
	"holdfast/drivers"
)

// valveWait bounds one coil read or write, whatever the link's own timeout.
const valveWait = 5 * time.Second

// ValveJSON is the isolation valve of a hold test as stored: the coil the
// daemon wrote, the state it found there (and puts back at the end), and
// whether that worked.
type ValveJSON struct {
	Link      string `json:"link"`
	Unit      uint8  `json:"unit"`
	Coil      uint16 `json:"coil"`
	ClosedIs  string `json:"closed_is"` // on or off
	Before    bool   `json:"before"`    // the coil's state before the test
	Commanded bool   `json:"commanded"` // a write of the closing state was sent
	Restored  bool   `json:"restored"`  // the coil was put back to Before
	Error     string `json:"error,omitempty"`
}

func (d *Daemon) modbusLink(name string) *drivers.ModbusLink {
	for _, l := range d.links {
		if l.name == name && l.modbus != nil {
			return l.modbus
		}
	}
	return nil
}

// closeValve reads the coil (to put it back later) and writes the state
// that closes the valve. A valve that could not be read is not moved.
func (d *Daemon) closeValve(h *HoldTestJSON, vc *config.ValveConfig) error {
	l := d.modbusLink(vc.Link)
	if l == nil {
		return fmt.Errorf("valve: link %s is not open (the daemon opens only links that carry a gauge)", vc.Link)
	}
	ctx, cancel := context.WithTimeout(context.Background(), valveWait)
	defer cancel()
	before, err := l.ReadCoil(ctx, vc.Unit, *vc.Coil)
	if err != nil {
		return fmt.Errorf("valve: %s: %w; the valve was not moved", vc.Link, err)
	}
	h.Valve = "modbus"
	h.Coil = &ValveJSON{Link: vc.Link, Unit: vc.Unit, Coil: *vc.Coil, ClosedIs: vc.ClosedIs, Before: before, Commanded: true}
	if err := l.WriteCoil(ctx, vc.Unit, *vc.Coil, vc.ClosedIs == "on"); err != nil {
		return fmt.Errorf("valve: %s: %w; the valve may not have closed", vc.Link, err)
	}
	d.log.Info("hold test closed the isolation valve", "id", h.ID, "gauge", h.Gauge, "link", vc.Link, "coil", *vc.Coil)
	return nil
}

// putBackValve writes the coil back to the state found before the test.
// A failure is kept in the report and logged for a person to act on.
func (d *Daemon) putBackValve(log *slog.Logger, h *HoldTestJSON) {
	c := h.Coil
	if c == nil || !c.Commanded || c.Restored {
		return
	}
	l := d.modbusLink(c.Link)
	err := fmt.Errorf("link %s is not open", c.Link)
	if l != nil {
		ctx, cancel := context.WithTimeout(context.Background(), valveWait)
		err = l.WriteCoil(ctx, c.Unit, c.Coil, c.Before)
		cancel()
	}
	if err != nil {
		c.Error = fmt.Sprintf("valve coil not put back: %v", err)
		log.Error("hold test could not put the valve coil back; check the valve and set the coil by hand",
			"id", h.ID, "link", c.Link, "coil", c.Coil, "want_on", c.Before, "err", err)
		return
	}
	c.Restored, c.Error = true, ""
	log.Info("hold test put the valve coil back", "id", h.ID, "link", c.Link, "coil", c.Coil, "on", c.Before)
}

func (d *Daemon) valveTravel(gauge string) time.Duration {
	if hc := d.holdDefaults(gauge); hc != nil && hc.Valve != nil {
		return hc.Valve.Travel.D()
	}
	return 30 * time.Second
}

// Switch states, as a hold test sees its confirm gauge.
const (
	switchUnknown = iota
	switchClosed
	switchOpen
)

// switchState reads the latest sample of a state gauge: closed (1), open
// (0), or unknown (no reading, a stale one, or a fault), with the reason in
// words.
func (d *Daemon) switchState(name string) (int, string) {
	g := d.gaugeNamed(name)
	if g == nil {
		return switchUnknown, name + " is not a polled gauge"
	}
	v := g.view(d.clock.Now())
	switch {
	case !v.seen:
		return switchUnknown, name + " has given no reading yet"
	case v.stale:
		return switchUnknown, name + " has not answered recently"
	case v.last.Quality != calib.QualityOK:
		return switchUnknown, name + " reads " + v.last.Quality.String()
	case v.last.Value == 1:
		return switchClosed, name + " reads closed"
	}
	return switchOpen, name + " reads open"
}

// isolatedBySwitch reports whether the named switch says the chamber is isolated.
func (d *Daemon) isolatedBySwitch(name string) (bool, string) {
	st, why := d.switchState(name)
	return st == switchClosed, why
}

// abortHoldTests ends every running hold test with reason and puts its
// valve back: at startup for tests a crash interrupted, at shutdown for
// the ones still running. With closeLinks, the Modbus links written to are
// closed again afterwards (at shutdown the pollers have closed them).
func (d *Daemon) abortHoldTests(log *slog.Logger, st *alarmstore.Store, reason string, closeLinks bool) {
	hs, err := d.recentHoldTests(5)
	if err != nil {
		log.Warn("hold tests unreadable", "err", err)
	}
	for _, h := range hs {
		if !holdRunning(h.State) {
			continue
		}
		d.failHoldTest(log, &h, d.clock.Now(), reason)
		if err := d.putHoldTest(st, h); err != nil {
			log.Error("hold test not stored", "id", h.ID, "err", err)
		}
		if l := d.linkOf(h.Coil); closeLinks && l != nil {
			_ = l.Close() // reopened only for the write
		}
	}
}

func (d *Daemon) linkOf(c *ValveJSON) *drivers.ModbusLink {
	if c == nil {
		return nil
	}
	return d.modbusLink(c.Link)
}
