package sim

import (
	"fmt"
	"math"
)

// Isolate closes (true) or opens (false) the isolation valve between the
// chamber and its pumps, at the chamber's present time. Closed, the pumping
// speed is 0 and the chamber rises at exactly its gas load over its volume.
func (ch *Chamber) Isolate(closed bool) {
	ch.mu.Lock()
	defer ch.mu.Unlock()
	ch.sync()
	ch.isolated = closed
}

// SetPumps starts (true) or stops (false) both pump stages.
func (ch *Chamber) SetPumps(on bool) {
	ch.mu.Lock()
	defer ch.mu.Unlock()
	ch.sync()
	ch.pumpsOff = !on
}

// SetLeak sets the real leak, in Pa·m³/s.
func (ch *Chamber) SetLeak(q float64) error {
	return ch.set("leak", q, "Pa·m³/s", func() { ch.leak = q })
}

// SetBleed sets the bleed valve's throughput, in Pa·m³/s.
func (ch *Chamber) SetBleed(q float64) error {
	return ch.set("bleed", q, "Pa·m³/s", func() { ch.bleed = q })
}

// Vent fills the chamber to p Pa at once (0 means Atmosphere) and restarts
// the outgassing clock, as admitting air re-wets the walls.
func (ch *Chamber) Vent(p float64) error {
	return ch.set("vent", p, "Pa (0 means atmosphere)", func() { ch.vent(p) })
}

// SetBake sets the heater setpoint in °C; at or below ambient the heater is
// off and the wall relaxes to ambient.
func (ch *Chamber) SetBake(c float64) error {
	if !(c > -273.15) || math.IsInf(c, 1) {
		return fmt.Errorf("bake: must be a finite temperature above -273.15 °C, got %g", c)
	}
	ch.mu.Lock()
	defer ch.mu.Unlock()
	ch.sync()
	ch.heaterC = c
	return nil
}

// set checks a non-negative quantity, brings the chamber up to date and
// applies the change.
func (ch *Chamber) set(what string, v float64, unit string, apply func()) error {
	if !(v >= 0) || math.IsInf(v, 1) {
		return fmt.Errorf("%s: must be a finite value ≥ 0 %s, got %g", what, unit, v)
	}
	ch.mu.Lock()
	defer ch.mu.Unlock()
	ch.sync()
	apply()
	return nil
}
