package calib

import (
	"errors"
	"fmt"
	"time"
)

// A Quality says how far a sample's value can be trusted.
type Quality uint8

// The qualities a sample can carry. QualityOK and QualityExtrapolated
// samples have a Value (HasValue); the others do not. The numbers are stored
// with every sample: a new quality takes the next number, never an old one.
const (
	QualityOK          Quality = iota // a valid value
	QualityOverRange                  // above the gauge's or the calibration's range
	QualityUnderRange                 // below the gauge's or the calibration's range
	QualitySensorFault                // the instrument reports a fault
	QualityOff                        // the sensor is switched off
	// QualityExtrapolated is a valid value with reduced trust: the raw
	// signal lies outside the range the active calibration was fitted
	// over, and the value comes from the model extended or the
	// instrument's own curve (see Extended).
	QualityExtrapolated
)

// QualityLast is the highest quality this program knows, for loops over all of them.
const QualityLast = QualityExtrapolated

var qualityNames = [...]string{"ok", "over-range", "under-range", "sensor-fault", "off", "extrapolated"}

// HasValue reports whether a sample of quality q carries a value: it is ok
// or extrapolated.
func (q Quality) HasValue() bool { return q == QualityOK || q == QualityExtrapolated }

// String returns the quality as written in logs and the API.
func (q Quality) String() string {
	if int(q) < len(qualityNames) {
		return qualityNames[q]
	}
	return fmt.Sprintf("quality(%d)", q)
}

// A Sample is one calibrated value of one gauge.
type Sample struct {
	At      time.Time
	Raw     float64 // the reading as the instrument gave it
	Value   float64 // SI: Pa for pressure, °C for temperature; meaningful only when Quality.HasValue()
	Quality Quality
}

// Errors a Transfer returns for raw values outside its valid range.
var (
	ErrBelowRange = errors.New("below the valid range")
	ErrAboveRange = errors.New("above the valid range")
	ErrFault      = errors.New("signal indicates a sensor fault")
	// ErrExtrapolated goes with a value that is still returned: the raw
	// signal lies outside the calibrated range and the value is an
	// extrapolation (QualityExtrapolated).
	ErrExtrapolated = errors.New("extrapolated")
)

// A Transfer maps an instrument's raw signal to a value in SI units.
// Apply returns ErrBelowRange, ErrAboveRange or ErrFault (possibly wrapped)
// when raw lies outside the range the mapping is valid for, or a value
// with an error wrapping ErrExtrapolated when it extends a calibration.
type Transfer interface {
	Apply(raw float64) (float64, error)
}

// Identity passes the raw value through: the instrument already reports SI.
type Identity struct{}

// Apply returns raw.
func (Identity) Apply(raw float64) (float64, error) { return raw, nil }

// Scale converts an instrument that reports in a non-SI unit: value = raw·Factor + Offset.
type Scale struct{ Factor, Offset float64 }

// Apply returns raw·Factor + Offset.
func (s Scale) Apply(raw float64) (float64, error) { return raw*s.Factor + s.Offset, nil }

// QualityOf maps a Transfer error to the quality of the resulting sample.
func QualityOf(err error) Quality {
	switch {
	case err == nil:
		return QualityOK
	case errors.Is(err, ErrExtrapolated):
		return QualityExtrapolated
	case errors.Is(err, ErrBelowRange):
		return QualityUnderRange
	case errors.Is(err, ErrAboveRange):
		return QualityOverRange
	default:
		return QualitySensorFault
	}
}
