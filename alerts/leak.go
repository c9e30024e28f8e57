package alerts

import (
	"errors"
	"math"
)

// The leak analysis of a pressure-rise record. After a chamber is isolated
// from its pumps the pressure rises for two reasons: gas entering through a
// leak, at a constant rate while the pressure stays far below atmosphere, and
// gas desorbing from the walls (outgassing, virtual leaks), at a rate that
// falls as the surfaces empty. AnalyzeRise fits
//
//	p(t) = p0 + a·t + b·(1 − e^(−t/τ))
//
// and, when the curved part is not needed, the straight line p0 + a·t. The
// leak rate is Q = V·a (pV throughput, Pa·m³/s), the outgassing at the start
// of the record V·b/τ. Real outgassing often falls as 1/t rather than
// exponentially; the exponential is the simplest term that bends and levels
// off, so a long outgassing tail can leave part of itself in a. Records that
// last several times the settling time separate the two best.

// Classification says what a pressure rise shows.
type Classification string

// The classifications, by the share of the fitted rise over the record that
// the linear (leak) term explains.
const (
	LeakDominated       Classification = "leak-dominated"       // share ≥ 90 %
	OutgassingDominated Classification = "outgassing-dominated" // share ≤ 10 %
	Mixed               Classification = "mixed"                // in between
	Inconclusive        Classification = "inconclusive"         // see RiseResult.Reason
)

// Thresholds of the classification (shares of the fitted rise).
const (
	LeakShareMin       = 0.90
	OutgassingShareMax = 0.10
)

// Model names the curve fitted to a rise.
type Model string

// The models AnalyzeRise chooses between.
const (
	ModelNone   Model = ""                 // no fit was made
	ModelLine   Model = "line"             // p0 + a·t
	ModelCurved Model = "line+exponential" // p0 + a·t + b·(1 − e^(−t/τ))
)

// RiseOptions tune AnalyzeRise. The zero value is ready to use.
type RiseOptions struct {
	// Step is the resolution of the readings. Each reading's quantisation
	// error adds to the noise, and a rise smaller than one step is within
	// noise. nil detects readings with few significant digits.
	Step ReadingStep
	// MinPoints is the fewest distinct times a record needs (default 10).
	MinPoints int
	// MinSpan is the shortest record, in seconds, that is analysed
	// (default 10 s: shorter records cannot tell a leak from a gauge
	// settling; common practice, hold tests last minutes).
	MinSpan float64
	// MaxPoints bounds the work on long records: a longer one is cut into
	// MaxPoints consecutive groups, each replaced by its mean time and
	// median pressure (default 20000).
	MaxPoints int
	// KeepStart keeps a falling start that would otherwise be trimmed (a
	// record that begins before the valve closed).
	KeepStart bool
	// ScaleUncertainty is the relative standard uncertainty (k = 1) of the
	// gauge's pressure scale, as its calibration states it: a scale error
	// carries into dp/dt in full, where an offset cancels. VolumeUncertainty
	// is that of the isolated volume. Q = V·dp/dt is a product, so their
	// squares add to the fit's relative one (JCGM 100:2008, GUM, §5.1.6).
	// 0 means not known: the rates' uncertainties are then the fit's alone.
	ScaleUncertainty, VolumeUncertainty float64
}

// Defaults of RiseOptions, and the fewest points for which the curved model
// is tried (it has four parameters and needs room to show a bend).
const (
	DefaultMinPoints  = 10
	DefaultMinSpan    = 10.0
	DefaultMaxPoints  = 20000
	minCurvedPoints   = 5
	riseCoverage      = 3.0 // a rise below 3 standard uncertainties is not told from noise
	riseOutlierFactor = 3.0 // a residual above 3 noise units counts as an outlier
	// CoverageK is the coverage factor of every stated interval (JCGM
	// 100:2008, §6.3.3: k = 2 gives about 95 % for a normal distribution).
	CoverageK = 2.0
	// TellApartBIC is the |ΔBIC| below which the line and the curved model
	// are not told apart: "not worth more than a bare mention" on the scale
	// of Kass & Raftery, JASA 90 (1995) 773, §3.2 (from memory).
	TellApartBIC = 2.0
)

func (o RiseOptions) withDefaults() RiseOptions {
	if o.MinPoints <= 0 {
		o.MinPoints = DefaultMinPoints
	}
	o.MinPoints = max(o.MinPoints, 3)
	if o.MinSpan <= 0 {
		o.MinSpan = DefaultMinSpan
	}
	if o.MaxPoints <= 0 {
		o.MaxPoints = DefaultMaxPoints
	}
	o.MaxPoints = max(o.MaxPoints, 2*minCurvedPoints)
	return o
}

// RiseResult is the outcome of AnalyzeRise. Rates are pV throughputs in
// Pa·m³/s (1 Pa·m³/s = 10 mbar·L/s), pressures in Pa, times in seconds.
// No field is NaN or infinite, so the result always encodes as JSON.
type RiseResult struct {
	// Classification and Reason: what the rise shows and why, in words.
	Classification Classification `json:"classification"`
	Reason         string         `json:"reason"`
	// LeakRate is Q = V·a with its standard uncertainty (k = 1).
	LeakRate            float64 `json:"leak_rate_pa_m3_per_s"`
	LeakRateUncertainty float64 `json:"leak_rate_uncertainty_pa_m3_per_s"`
	// CoverageFactor is k of the expanded uncertainty U = k·u that results
	// are stated with (2: about 95 % for normal errors; JCGM 100:2008,
	// GUM, §6.2–6.3), and LeakRateExpanded is U of LeakRate.
	CoverageFactor   float64 `json:"coverage_factor"`
	LeakRateExpanded float64 `json:"leak_rate_expanded_uncertainty_pa_m3_per_s"`
	// LeakUpperBound is V·(dp/dt at the end of the record + k·u): outgassing
	// only adds to the rise and falls with time, so the leak cannot exceed
	// the total rate of rise at the end. UpperBoundOnly says the leak can
	// be stated only as that bound (outgassing dominates, or the leak term
	// is not told from zero); LeakRate is then not a finding.
	LeakUpperBound float64 `json:"leak_rate_upper_bound_pa_m3_per_s"`
	UpperBoundOnly bool    `json:"leak_rate_is_upper_bound"`
	// OutgassingRate is V·b/τ, the curved part's throughput at the start
	// of the record (0 for the line model), with its standard uncertainty.
	OutgassingRate            float64 `json:"outgassing_rate_pa_m3_per_s"`
	OutgassingRateUncertainty float64 `json:"outgassing_rate_uncertainty_pa_m3_per_s"`
	// LeakShare is a·T over the fitted rise p(T) − p(0) (0 to 1; 0 when
	// there is no rise).
	LeakShare float64 `json:"leak_share"`
	// Rise is the fitted p(T) − p(0) over the record, T = Span.
	Rise            float64 `json:"rise_pa"`
	RiseUncertainty float64 `json:"rise_uncertainty_pa"`
	// Fit is the chosen model and its parameters.
	Fit RiseFit `json:"fit"`
	// Volume is the isolated volume the rates were computed for, in m³.
	Volume float64 `json:"volume_m3"`
	// ScaleUncertainty and VolumeUncertainty are the relative standard
	// uncertainties of RiseOptions taken into the rates' uncertainties and
	// the upper bound (0: not known, not included).
	ScaleUncertainty  float64 `json:"scale_relative_uncertainty"`
	VolumeUncertainty float64 `json:"volume_relative_uncertainty"`
	RiseQuality
}

// RiseQuality describes the record and how well the fit matches it.
type RiseQuality struct {
	Start       float64 `json:"start_s"`        // input-clock time of t = 0 (after any trimming)
	Span        float64 `json:"span_s"`         // time from the first to the last sample used
	Samples     int     `json:"samples"`        // samples given
	Points      int     `json:"points"`         // points fitted (after merging, trimming, grouping)
	Merged      int     `json:"merged"`         // samples averaged into another with the same time
	Trimmed     int     `json:"trimmed"`        // points dropped from a falling start
	TrimmedSpan float64 `json:"trimmed_span_s"` // seconds dropped from a falling start
	GroupSize   int     `json:"group_size"`     // samples per group in a long record (1: none)
	Outliers    int     `json:"outliers"`       // points more than 3 noise units from the fit
	// Noise is the robust standard deviation of the residuals beyond the
	// readings' quantisation: each point's noise is √(Noise² + step²/12).
	Noise float64 `json:"noise_pa"`
	// Resolution is the median reading step, given or detected (0: none).
	Resolution float64 `json:"resolution_pa"`
	// Autocorrelation is the lag-1 autocorrelation of the residuals; the
	// uncertainties are widened by it (0 for independent noise).
	Autocorrelation float64 `json:"autocorrelation"`
	// CurvedTried tells whether the curved model was fitted with a positive
	// amplitude (the notes say why not); DeltaBIC is then BIC(line) −
	// BIC(curved), and above 0 the curved model was chosen.
	CurvedTried bool    `json:"curved_tried"`
	DeltaBIC    float64 `json:"delta_bic"`
	// altShare is the leak share under the model not chosen (line: 1),
	// for telling whether the choice matters; altKnown says it was fitted.
	altShare float64
	altKnown bool
	// Notes say what was done to the record and what to watch.
	Notes []string `json:"notes"`
}

// RiseFit is a fitted rise curve p(t) = P0 + Slope·t + Curve·(1 − e^(−t/Tau)),
// t in seconds from the start of the record. Curve and Tau are 0 for the line.
type RiseFit struct {
	Model            Model   `json:"model"`
	P0               float64 `json:"p0_pa"`
	P0Uncertainty    float64 `json:"p0_uncertainty_pa"`
	Slope            float64 `json:"slope_pa_per_s"`
	SlopeUncertainty float64 `json:"slope_uncertainty_pa_per_s"`
	Curve            float64 `json:"curve_pa"`
	CurveUncertainty float64 `json:"curve_uncertainty_pa"`
	Tau              float64 `json:"tau_s"`
	TauUncertainty   float64 `json:"tau_uncertainty_s"`
	// Covariance of (P0, Slope, Curve, Tau) in SI units; rows and columns
	// of parameters the model lacks are 0.
	Covariance [4][4]float64 `json:"covariance"`
}

// Pressure returns the fitted pressure at t seconds from the start.
func (f RiseFit) Pressure(t float64) float64 {
	p := f.P0 + f.Slope*t
	if f.Tau > 0 {
		p += f.Curve * -math.Expm1(-t/f.Tau)
	}
	return p
}

// Rate returns the fitted dp/dt at t seconds from the start, in Pa/s.
func (f RiseFit) Rate(t float64) float64 {
	r := f.Slope
	if f.Tau > 0 {
		r += f.Curve / f.Tau * math.Exp(-t/f.Tau)
	}
	return r
}

// gradient returns ∂p(t)/∂(P0, Slope, Curve, Tau).
func (f RiseFit) gradient(t float64) [4]float64 {
	if f.Tau <= 0 {
		return [4]float64{1, t, 0, 0}
	}
	e := math.Exp(-t / f.Tau)
	return [4]float64{1, t, -math.Expm1(-t / f.Tau), -f.Curve * e * t / (f.Tau * f.Tau)}
}

// spread returns √(gᵀ·C·g): the standard uncertainty of a linear function
// of the parameters with gradient g.
func (f RiseFit) spread(g [4]float64) float64 {
	v := 0.0
	for i := range g {
		for j := range g {
			v += g[i] * f.Covariance[i][j] * g[j]
		}
	}
	return math.Sqrt(max(v, 0))
}

// ErrUnreachable reports a target pressure that the fitted curve never reaches.
var ErrUnreachable = errors.New("the fitted rise never reaches that pressure")
