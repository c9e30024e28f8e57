package sim

import (
	"errors"
	"math"
	"math/rand/v2"
	"strconv"

	"holdfast/calib"
	"holdfast/drivers"
)

// A sensor turns the chamber's true state into what one kind of instrument
// measures: a raw value (before printing) and the instrument's status.
type sensor interface {
	measure(st State, r *rand.Rand) (raw float64, status drivers.Status)
}

// DefaultHeatLoss is the typical Pirani sensor the simulator uses when an
// instrument's HeatLoss is zero: signal in mW, S0 = 2 mW of radiation and
// end losses (a modelling choice), A = 0.5 mW/Pa and Pt = 100 Pa (the
// worked example of REFERENCES.md §5b), so the gas term saturates toward
// A·Pt = 50 mW near atmosphere. The daemon can apply the same curve as the
// gauge's transfer.
func DefaultHeatLoss() calib.HeatLoss { return calib.HeatLoss{S0: 2, A: 0.5, Pt: 100} }

// Pirani limits: below piraniLow the signal is lost in noise and print
// resolution; above piraniHigh the gas conduction has saturated. Modelling
// choices in line with the usual 1e-1 Pa … 1e4 Pa span of heat-loss gauges
// without convection (from memory).
const (
	piraniLow        = 5e-2 // Pa
	piraniHigh       = 1e4  // Pa
	piraniFloorPa    = 2e-2 // Pa: the absolute noise floor, as a pressure at the low-pressure slope
	piraniDefaultRel = 2e-3
)

type pirani struct {
	h          calib.HeatLoss
	rel, floor float64 // noise: fraction of the gas term; absolute, signal units
}

func newPirani(ic InstrumentConfig, v *checker) (sensor, calib.Transfer) {
	h := ic.HeatLoss
	if h == (calib.HeatLoss{}) {
		h = DefaultHeatLoss()
	}
	if err := h.Validate(); err != nil {
		v.expect(false, "heat_loss", "%v", err)
	}
	// A noise override scales the floor with it, so a quieter sensor is
	// quieter at low pressure too.
	rel := or(ic.Noise, piraniDefaultRel)
	return pirani{h: h, rel: rel, floor: h.A * piraniFloorPa * rel / piraniDefaultRel}, h
}

func (s pirani) measure(st State, r *rand.Rand) (float64, drivers.Status) {
	gas := s.h.Signal(st.Pressure) - s.h.S0
	sig := s.h.S0 + gas*(1+s.rel*r.NormFloat64()) + s.floor*r.NormFloat64()
	p, err := s.h.Apply(sig)
	switch {
	case errors.Is(err, calib.ErrBelowRange) || err == nil && p < piraniLow:
		return sig, drivers.StatusUnderRange
	case err != nil || p > piraniHigh:
		return sig, drivers.StatusOverRange
	}
	return sig, drivers.StatusOK
}

// CDG output: 0–10 V over full scale, over-range above 11 V (1.1·FS), where
// the output is clipped; under-range below 1e-4 of full scale, the usual
// bottom of a diaphragm gauge's range (from memory).
const (
	cdgVoltsFS      = 10.0
	cdgClipVolts    = 11.0
	cdgLowFraction  = 1e-4
	cdgDefaultNoise = 1e-4
)

type cdg struct{ fs, rel float64 }

func newCDG(ic InstrumentConfig, v *checker) (sensor, calib.Transfer) {
	v.expect(ic.FullScale > 0 && !math.IsInf(ic.FullScale, 1), "full_scale",
		"a cdg needs its full scale, a finite pressure > 0 Pa, got %g", ic.FullScale)
	return cdg{fs: ic.FullScale, rel: or(ic.Noise, cdgDefaultNoise)}, calib.Scale{Factor: ic.FullScale / cdgVoltsFS}
}

func (s cdg) measure(st State, r *rand.Rand) (float64, drivers.Status) {
	u := cdgVoltsFS * (st.Pressure/s.fs + s.rel*r.NormFloat64())
	switch {
	case u > cdgClipVolts:
		return cdgClipVolts, drivers.StatusOverRange
	case u < cdgVoltsFS*cdgLowFraction:
		return u, drivers.StatusUnderRange
	}
	return u, drivers.StatusOK
}

// Ionisation gauge: emission switches off above the protect pressure and
// back on below it. The default is the top of a hot-cathode (Bayard–Alpert)
// gauge's range, about 1e-3 Torr ≈ 0.13 Pa (a CRC Handbook of Chemistry and
// Physics range table, not re-read: from memory; REFERENCES.md §8), rounded
// down to 1e-1 Pa. Below ionFloor the reading is under-range (the order of
// a hot-cathode gauge's lower limit, from memory).
const (
	ionDefaultProtect = 1e-1 // Pa
	ionFloor          = 1e-8 // Pa
	ionDefaultNoise   = 1e-2
)

type ion struct{ protect, rel float64 }

func newIon(ic InstrumentConfig, v *checker) sensor {
	v.expect(ic.Protect >= 0 && !math.IsInf(ic.Protect, 1) && (ic.Protect == 0 || ic.Protect > ionFloor), "protect",
		"must be a finite pressure above %g Pa (0 means %g), got %g", ionFloor, ionDefaultProtect, ic.Protect)
	return ion{protect: or(ic.Protect, ionDefaultProtect), rel: or(ic.Noise, ionDefaultNoise)}
}

func (s ion) measure(st State, r *rand.Rand) (float64, drivers.Status) {
	p := st.Pressure * (1 + s.rel*r.NormFloat64())
	switch {
	case p > s.protect:
		return 0, drivers.StatusOff
	case p < ionFloor:
		return math.Max(p, 0), drivers.StatusUnderRange
	}
	return p, drivers.StatusOK
}

const thermocoupleDefaultNoise = 0.2 // K

// thermocouple is a temperature instrument. It reports °C, or with a
// probe its sensor's raw signal from calib's reference functions: a
// thermocouple's EMF E(t) − E(t_room) in mV, its reference junction at the
// room's temperature, or an RTD's resistance R(t) in Ω (drivers/sim may
// import calib; DEVELOPERS.md). Beyond the function's range the raw signal
// is what it would be at the range's end, flagged over- or under-range.
type thermocouple struct {
	ambient bool
	sigma   float64 // K
	tc      *calib.Thermocouple
	rtd     *calib.RTD
}

func newThermocouple(ic InstrumentConfig, v *checker) (sensor, calib.Transfer) {
	v.expect(ic.Where == "" || ic.Where == "wall" || ic.Where == "ambient", "where",
		"must be \"wall\" or \"ambient\", got %q", ic.Where)
	s := thermocouple{ambient: ic.Where == "ambient", sigma: or(ic.Noise, thermocoupleDefaultNoise)}
	var xfer calib.Transfer = calib.Identity{}
	switch {
	case ic.Kind == KindRTD:
		name := ic.Probe
		if name == "" {
			name = "pt100"
		}
		el, err := calib.PlatinumRTD(name)
		if err != nil {
			v.expect(false, "probe", "%v", err)
		}
		s.rtd, xfer = &el, calib.RTDInput{RTD: el, OhmsPerUnit: 1}
	case ic.Probe != "":
		tc, err := calib.ThermocoupleType(ic.Probe)
		if err != nil {
			v.expect(false, "probe", "%v", err)
		}
		s.tc, xfer = &tc, calib.ThermocoupleInput{Type: tc, MillivoltsPerUnit: 1} // cold junction: the room, set by Chamber.Instrument
	}
	return s, xfer
}

func (s thermocouple) measure(st State, r *rand.Rand) (float64, drivers.Status) {
	t := st.WallC
	if s.ambient {
		t = st.AmbientC
	}
	t += s.sigma * r.NormFloat64()
	switch {
	case s.rtd != nil:
		lo, hi := s.rtd.TemperatureRange()
		v, _ := s.rtd.Resistance(math.Min(math.Max(t, lo), hi))
		return v, rangeStatus(t, lo, hi)
	case s.tc != nil:
		lo, hi := s.tc.TemperatureRange()
		v, err := s.tc.EMFBetween(math.Min(math.Max(t, lo), hi), st.AmbientC)
		if err != nil {
			return math.NaN(), drivers.StatusSensorFault
		}
		return v, rangeStatus(t, lo, hi)
	}
	return t, drivers.StatusOK
}

func rangeStatus(t, lo, hi float64) drivers.Status {
	switch {
	case t < lo:
		return drivers.StatusUnderRange
	case t > hi:
		return drivers.StatusOverRange
	}
	return drivers.StatusOK
}

// or returns v, or def when v is 0.
func or(v, def float64) float64 {
	if v == 0 {
		return def
	}
	return v
}

// roundDigits rounds v to d significant decimal digits exactly as an
// instrument that prints "%.*e" would: formatting is correctly rounded, so
// the result is the float nearest to the printed decimal.
func roundDigits(v float64, d int) float64 {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return v
	}
	var buf [32]byte
	b := strconv.AppendFloat(buf[:0], v, 'e', d-1, 64)
	r, err := strconv.ParseFloat(string(b), 64)
	if err != nil { // cannot happen: AppendFloat wrote a valid number
		return v
	}
	return r
}
