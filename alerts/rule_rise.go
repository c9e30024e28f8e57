package alerts

import (
	"fmt"
	"time"

	"holdfast/calib"
)

// RiseWatch is the rise-watch rule: the rate-of-rise analysis (AnalyzeRise)
// run on a sliding window of the gauge's samples while the chamber is
// isolated. The alarm holds while the window shows a leak-dominated or
// mixed rise whose leak rate Q = V·a exceeds MaxLeak. An outgassing-
// dominated rise clears it; an inconclusive one decides nothing.
//
// With Always the window is analysed at all times: a pumped chamber's
// pressure falls or stays flat and so shows no leak, but a pressure that
// climbs while pumped (a bake warming the walls) can look like one; set
// Always only where the isolation is not known otherwise. Without Always,
// SetIsolated tells the rule when the chamber is isolated (from the API,
// or a digital input read as a gauge).
type RiseWatch struct {
	Gauge   string
	Window  time.Duration
	Every   time.Duration // analyse at most this often (0: Window/20)
	MaxLeak float64       // Pa·m³/s
	Volume  float64       // m³
	Always  bool
	// IsolatedBy names the state gauge that reads 1 while the chamber is
	// isolated; when set, SetIsolated has no effect.
	IsolatedBy string
	Unit       calib.Unit // throughput unit for messages, e.g. mbar·L/s
	Options    RiseOptions

	isolated    bool
	switchKnown bool // IsolatedBy has given a valid reading since the last invalid one
	buf         Rise
	t0, last    time.Time
	Last        RiseResult // the newest analysis, for the API
}

// Kind returns "rise-watch".
func (r *RiseWatch) Kind() string { return "rise-watch" }

// Gauges returns the gauge whose rise is watched and the isolation switch, if any.
func (r *RiseWatch) Gauges() []string {
	if r.IsolatedBy != "" {
		return []string{r.Gauge, r.IsolatedBy}
	}
	return []string{r.Gauge}
}

// Tick decides nothing: the analysis runs on samples.
func (r *RiseWatch) Tick(time.Time, bool) Condition { return unknown() }

// SetIsolated says whether the chamber is isolated from its pumps; the
// window starts afresh at each change. It is ignored when IsolatedBy is
// set: the switch decides.
func (r *RiseWatch) SetIsolated(on bool) {
	if r.IsolatedBy == "" {
		r.isolate(on)
	}
}

func (r *RiseWatch) isolate(on bool) {
	if on != r.isolated {
		r.buf.Reset()
		r.last = time.Time{}
	}
	r.isolated = on
}

// Observe reads the isolation switch, or adds a valid sample of the
// watched gauge to the window and analyses it now and then.
func (r *RiseWatch) Observe(gauge string, s calib.Sample, active bool) Condition {
	if r.IsolatedBy != "" && gauge == r.IsolatedBy && gauge != r.Gauge {
		return r.observeSwitch(s)
	}
	if !r.Always && r.IsolatedBy != "" && !r.switchKnown {
		return unknown() // isolation unknown: decide nothing
	}
	if !r.Always && !r.isolated {
		c := unknown()
		c.Known, c.Detail = true, "chamber not isolated; rise watch idle"
		return c
	}
	if s.Quality != calib.QualityOK {
		return unknown()
	}
	if r.t0.IsZero() {
		r.t0 = s.At
	}
	r.buf.Window = r.Window.Seconds()
	r.buf.Add(s.At.Sub(r.t0).Seconds(), s.Value)
	every := r.Every
	if every <= 0 {
		every = r.Window / 20
	}
	if !r.last.IsZero() && s.At.Sub(r.last) < every {
		return unknown()
	}
	r.last = s.At
	if r.buf.Len() < 2 || r.buf.span() < 0.8*r.Window.Seconds() {
		return unknown() // wait for a full window
	}
	res, err := r.analyzeIsolated()
	if err != nil {
		return unknown()
	}
	r.Last = res
	return r.judge(res)
}

// analyzeIsolated analyses the window, or only its part after the chamber
// was isolated when the window holds the knee where a pumped (flat or
// falling) pressure turned into a rise: a fit across the knee mixes two
// regimes and understates the leak. When the isolated part is shorter than
// a full window (0.8 × Window, as for any window), the result is
// inconclusive and says how long the chamber has been isolated.
func (r *RiseWatch) analyzeIsolated() (RiseResult, error) {
	t, p := r.buf.t[r.buf.head:], r.buf.p[r.buf.head:]
	o, ok := IsolationOnset(t, p)
	if !ok {
		return AnalyzeRise(t, p, r.Volume, r.Options)
	}
	since := r.buf.newest - o.At
	knee := fmt.Sprintf("the window holds the start of an isolation %s ago (dp/dt rose from %.3g to %.3g Pa/s)",
		(time.Duration(since * float64(time.Second))).Round(time.Second), o.Before, o.After)
	if need := 0.8 * r.Window.Seconds(); since < need {
		return RiseResult{Classification: Inconclusive, Volume: r.Volume, RiseQuality: RiseQuality{Notes: []string{}},
			Reason: fmt.Sprintf("%s: waiting until the isolated record spans %s before fitting it", knee,
				time.Duration(need*float64(time.Second)).Round(time.Second))}, nil
	}
	var ti, pi []float64
	for i := range t {
		if t[i] >= o.At {
			ti, pi = append(ti, t[i]), append(pi, p[i])
		}
	}
	res, err := AnalyzeRise(ti, pi, r.Volume, r.Options)
	if err == nil {
		res.Notes = append(res.Notes, knee+": fitted only the part after it")
	}
	return res, err
}

// observeSwitch takes the isolation from a state sample: 1 isolated, 0
// not; anything else leaves the isolation unknown. The window empties at
// every change, so a rise never spans a pumped stretch.
func (r *RiseWatch) observeSwitch(s calib.Sample) Condition {
	if s.Quality != calib.QualityOK || (s.Value != 0 && s.Value != 1) {
		r.switchKnown = false
		r.isolate(false)
		return unknown()
	}
	r.switchKnown = true
	r.isolate(s.Value == 1)
	if r.isolated {
		return unknown() // the pressure samples decide
	}
	c := unknown()
	c.Known, c.Detail = true, fmt.Sprintf("chamber not isolated (%s reads open); rise watch idle", r.IsolatedBy)
	return c
}

func (r *RiseWatch) judge(res RiseResult) Condition {
	c := Condition{Known: true, Value: res.LeakRate, Limit: r.MaxLeak, Unit: r.Unit.Symbol(),
		ValueText: calib.Format(res.LeakRate, r.Unit), LimitText: calib.Format(r.MaxLeak, r.Unit)}
	switch res.Classification {
	case Inconclusive:
		return unknown()
	case LeakDominated, Mixed:
		c.Active = res.LeakRate > r.MaxLeak
	}
	c.Detail = fmt.Sprintf("rise over the last %s is %s: leak rate %s ± %s (k = %g; limit %s)", r.Window, res.Classification,
		c.ValueText, calib.Format(res.LeakRateExpanded, r.Unit), res.CoverageFactor, c.LimitText)
	if res.UpperBoundOnly {
		c.Detail = fmt.Sprintf("rise over the last %s is %s: leak rate at most %s (limit %s)", r.Window, res.Classification,
			calib.Format(res.LeakUpperBound, r.Unit), c.LimitText)
	}
	return c
}

// span returns the time from the oldest to the newest sample in the window.
func (r *Rise) span() float64 {
	if r.Len() == 0 {
		return 0
	}
	return r.newest - r.t[r.head]
}
