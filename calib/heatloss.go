package calib

import "fmt"

// HeatLoss is the thermal-conductivity (Pirani-type) gauge model: the power
// (or bridge signal) needed to hold the sensing element at temperature is
//
//	signal = S0 + A·p/(1 + p/Pt)
//
// where S0 is the pressure-independent loss (radiation, conduction along the
// supports), A the low-pressure (molecular-regime) slope and Pt the
// transition pressure above which the gas conduction saturates toward A·Pt.
// Pressures are in Pa; the signal is in whatever unit the instrument reports.
type HeatLoss struct {
	S0, A, Pt float64
}

// Validate reports parameters that cannot describe a gauge.
func (h HeatLoss) Validate() error {
	if !(h.A > 0) || !(h.Pt > 0) {
		return fmt.Errorf("heat-loss model needs a > 0 and p_t > 0, got a=%g p_t=%g", h.A, h.Pt)
	}
	return nil
}

// Signal returns the signal the model predicts at pressure p (Pa).
func (h HeatLoss) Signal(p float64) float64 { return h.S0 + h.A*p/(1+p/h.Pt) }

// Apply inverts the model: p = s·Pt/(A·Pt − s) with s = signal − S0.
// Signals at or below S0 are ErrBelowRange; at or above the saturation
// S0 + A·Pt they are ErrAboveRange.
func (h HeatLoss) Apply(signal float64) (float64, error) {
	if err := h.Validate(); err != nil {
		return 0, err
	}
	s := signal - h.S0
	sat := h.A * h.Pt
	switch {
	case s <= 0:
		return 0, fmt.Errorf("signal %g at or below the zero-pressure loss %g: %w", signal, h.S0, ErrBelowRange)
	case s >= sat:
		return 0, fmt.Errorf("signal %g at or above saturation %g: %w", signal, h.S0+sat, ErrAboveRange)
	}
	return s * h.Pt / (sat - s), nil
}
