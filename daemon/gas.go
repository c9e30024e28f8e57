package daemon

import (
	"fmt"
	"log/slog"
	"math"
	"slices"
	"time"

	"holdfast/calib"
	"holdfast/daemon/config"
	"holdfast/daemon/store"
)

// A correction is what the daemon applies to a gauge's calibrated value
// before it is stored: the gas factor, then thermal transpiration. The raw
// value stays the instrument's, so reprocessing redoes both.
type correction struct {
	gas *calib.GasFactor // nil: none
	tr  *transpiration   // nil: none
}

// transpiration is a gauge's transpiration correction, wired to its
// chamber temperature gauge if it has one.
type transpiration struct {
	model    string // molecular or setina
	sensorC  float64
	fixedC   *float64 // chamber_temperature, or nil
	from     *gauge   // chamber_gauge, or nil
	maxAge   time.Duration
	diameter float64 // m, setina
	gas      string  // setina

	missing bool // last value had no chamber temperature (logged on change)
}

// wireCorrections gives every gauge with gas: or transpiration: its
// correction; the config has been checked.
func (d *Daemon) wireCorrections() error {
	for _, g := range d.gauges {
		c, err := d.correctionFor(g.cfg)
		if err != nil {
			return fmt.Errorf("gauge %s: %w", g.name, err)
		}
		g.corr = c
	}
	return nil
}

func (d *Daemon) correctionFor(gc *config.GaugeConfig) (*correction, error) {
	if gc.Gas == nil && gc.Transpiration == nil {
		return nil, nil
	}
	c := &correction{}
	if gc.Gas != nil {
		f, err := config.GasFactor(gc)
		if err != nil {
			return nil, fmt.Errorf("gas: %w", err)
		}
		c.gas = &f
	}
	if t := gc.Transpiration; t != nil {
		tr := &transpiration{model: t.Model, sensorC: float64(*t.SensorTemperature), maxAge: t.MaxAge.D(),
			diameter: float64(t.TubeDiameter), gas: t.Gas}
		if t.ChamberTemperature != nil {
			fc := float64(*t.ChamberTemperature)
			tr.fixedC = &fc
		}
		if t.ChamberGauge != "" {
			if tr.from = d.gaugeNamed(t.ChamberGauge); tr.from == nil {
				return nil, fmt.Errorf("transpiration.chamber_gauge %q was not built", t.ChamberGauge)
			}
		}
		c.tr = tr
	}
	return c, nil
}

// chamberC is the chamber temperature to use at time at, given the chamber
// gauge's latest reading (lastAt, lastC; ok when it was a valid reading),
// or the fixed chamber_temperature; false when there is neither.
func (t *transpiration) chamberC(lastAt time.Time, lastC float64, ok bool, at time.Time) (float64, bool) {
	if t.from != nil && ok && !lastAt.After(at) && at.Sub(lastAt) <= t.maxAge {
		return lastC, true
	}
	if t.fixedC != nil {
		return *t.fixedC, true
	}
	return 0, false
}

// ratio is p_gauge/p_chamber for a gauge reading p (Pa) with the chamber
// at chamberC.
func (t *transpiration) ratio(p, chamberC float64) (float64, error) {
	if t.model == "setina" && p > 0 {
		return calib.Transpiration{GaugeC: t.sensorC, ChamberC: chamberC, Diameter: t.diameter}.Setina(t.gas, p)
	}
	return calib.MolecularRatio(t.sensorC, chamberC) // and the p → 0 limit of Šetina's form
}

// apply corrects a calibrated value v; chamberC is the chamber temperature
// when hasC. Without one the value keeps its gas correction only.
func (c *correction) apply(v, chamberC float64, hasC bool) float64 {
	if c.gas != nil {
		v *= c.gas.Factor
	}
	if c.tr != nil && hasC {
		if r, err := c.tr.ratio(v, chamberC); err == nil {
			v /= r
		}
	}
	return v
}

// live corrects v at time at from the chamber gauge's latest reading,
// logging once when the transpiration correction stops or resumes.
func (c *correction) live(log *slog.Logger, gauge string, v float64, at time.Time) float64 {
	cc, ok := 0.0, false
	if t := c.tr; t != nil {
		var lastAt time.Time
		var lastC float64
		var valid bool
		if t.from != nil {
			view := t.from.view(at)
			lastAt, lastC, valid = view.last.At, view.last.Value, view.seen && view.last.Quality == calib.QualityOK
		}
		cc, ok = t.chamberC(lastAt, lastC, valid, at)
		if !ok && !t.missing {
			log.Warn("transpiration correction not applied: no recent valid chamber temperature", "gauge", gauge, "chamber_gauge", t.from.name) // from is set: a fixed temperature never misses
		} else if ok && t.missing {
			log.Info("transpiration correction applied again", "gauge", gauge)
		}
		t.missing = !ok
	}
	return c.apply(v, cc, ok)
}

// correctedTransfers returns, for reprocessing g's samples in [from, to),
// tAt with g's gas and transpiration corrections applied after it, the
// chamber temperature taken from the chamber gauge's stored samples as the
// live pipeline took it from the latest reading.
func (d *Daemon) correctedTransfers(g *gauge, tAt func(time.Time) calib.Transfer, from, to time.Time) (func(time.Time) calib.Transfer, error) {
	c := g.corr
	if c == nil {
		return tAt, nil
	}
	type reading struct {
		at time.Time
		c  float64
		ok bool
	}
	var temps []reading
	if c.tr != nil && c.tr.from != nil {
		err := d.store.Range(c.tr.from.name, from.Add(-c.tr.maxAge), to, func(p store.Point) bool {
			temps = append(temps, reading{p.At, p.Value, calib.Quality(p.Quality) == calib.QualityOK})
			return true
		})
		if err != nil {
			return nil, fmt.Errorf("chamber gauge %s: %w", c.tr.from.name, err)
		}
	}
	return func(at time.Time) calib.Transfer {
		out := corrected{t: tAt(at), c: c}
		if c.tr == nil {
			return out
		}
		var last reading
		i, _ := slices.BinarySearchFunc(temps, at, func(r reading, at time.Time) int { return r.at.Compare(at) })
		if i < len(temps) && temps[i].at.Equal(at) {
			i++
		}
		if i > 0 {
			last = temps[i-1]
		}
		out.chamberC, out.hasC = c.tr.chamberC(last.at, last.c, last.ok, at)
		return out
	}, nil
}

// corrected is a transfer followed by a gauge's corrections at a fixed
// chamber temperature.
type corrected struct {
	t        calib.Transfer
	c        *correction
	chamberC float64
	hasC     bool
}

func (x corrected) Apply(raw float64) (float64, error) {
	v, err := x.t.Apply(raw)
	if !calib.QualityOf(err).HasValue() {
		return v, err
	}
	return x.c.apply(v, x.chamberC, x.hasC), err // an extrapolated value is corrected too
}

// gasJSON and transpirationJSON describe a gauge's corrections in
// /api/v1/gauges.
type gasJSON struct {
	Name   string  `json:"name"`
	Factor float64 `json:"factor"` // true = factor × indicated
	Source string  `json:"source"`
}

type transpirationJSON struct {
	Model              string   `json:"model"`
	SensorTemperature  float64  `json:"sensor_temperature_c"`
	ChamberTemperature *float64 `json:"chamber_temperature_c,omitempty"`
	ChamberGauge       string   `json:"chamber_gauge,omitempty"`
	MaxAge             float64  `json:"max_age_seconds,omitempty"`
	TubeDiameter       float64  `json:"tube_diameter_m,omitempty"`
	Gas                string   `json:"gas,omitempty"`
	// LowPressureFactor is chamber/reading in the molecular limit, at the
	// chamber temperature in use now (omitted while there is none).
	LowPressureFactor *float64 `json:"low_pressure_factor,omitempty"`
}

// describe returns the JSON form of g's corrections at time now.
func (c *correction) describe(now time.Time) (*gasJSON, *transpirationJSON) {
	if c == nil {
		return nil, nil
	}
	var gj *gasJSON
	if c.gas != nil {
		gj = &gasJSON{Name: c.gas.Gas, Factor: c.gas.Factor, Source: c.gas.Source}
	}
	t := c.tr
	if t == nil {
		return gj, nil
	}
	tj := &transpirationJSON{Model: t.model, SensorTemperature: t.sensorC, ChamberTemperature: t.fixedC, TubeDiameter: t.diameter, Gas: t.gas}
	var lastAt time.Time
	var lastC float64
	var valid bool
	if t.from != nil {
		tj.ChamberGauge, tj.MaxAge = t.from.name, t.maxAge.Seconds()
		view := t.from.view(now)
		lastAt, lastC, valid = view.last.At, view.last.Value, view.seen && view.last.Quality == calib.QualityOK
	}
	if cc, ok := t.chamberC(lastAt, lastC, valid, now); ok {
		if r, err := calib.MolecularRatio(t.sensorC, cc); err == nil && !math.IsNaN(r) {
			f := 1 / r
			tj.LowPressureFactor = &f
		}
	}
	return gj, tj
}
