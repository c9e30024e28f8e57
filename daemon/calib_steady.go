package daemon

import (
	"fmt"
	"math"
	"time"

	"gonum.org/v1/gonum/stat"
)

// minWindowSamples is the fewest samples a calibration point averages.
const minWindowSamples = 5

// Defaults for taking a calibration point. Half a percent of drift over a
// minute is our choice: well below the scatter of a thermal-conductivity
// gauge's fit (a few percent) and above the noise of a minute's average.
const (
	defaultPointWindow = time.Minute
	defaultMaxDrift    = 0.005
)

// driftSEs is how many standard errors a drift must stand out of the noise
// to refuse a point. At 2 a gauge holding still, whose noise reaches the
// limit, would be refused about one point in twenty (a normal variable
// passes ±2σ with probability 4.6 %); at 3, about one in 370 (0.27 %;
// common practice for "out of the noise", as the leak analysis uses).
const driftSEs = 3

// steadiness is what a window of samples says about a gauge holding still.
// The trend is the least-squares line through the samples; drift is the
// change of that line across the window relative to the mean.
type steadiness struct {
	n       int
	mean    float64
	sd      float64       // scatter about the trend line
	drift   float64       // signed relative change across the window
	driftSE float64       // standard error of drift
	tau     time.Duration // settling time constant; 0 when the rate is not falling
}

// analyse fits the trend of y at times t (seconds from the window's start)
// over a window of w seconds. For a reading settling exponentially,
// y = y∞ + A·e^(−t/τ), the least-squares slope over the second half of a
// uniformly sampled window is that over the first half times e^(−w/2τ), so
// the two slopes give τ.
func analyse(t, y []float64, w float64) steadiness {
	s := steadiness{n: len(y), mean: stat.Mean(y, nil)}
	if s.n < 3 || !(w > 0) {
		return s
	}
	alpha, beta := stat.LinearRegression(t, y, nil, false)
	ss, sxx := 0.0, 0.0
	tm := stat.Mean(t, nil)
	for i := range y {
		r := y[i] - (alpha + beta*t[i])
		ss += r * r
		sxx += (t[i] - tm) * (t[i] - tm)
	}
	s.sd = math.Sqrt(ss / float64(s.n-2))
	if s.mean != 0 && sxx > 0 {
		s.drift = beta * w / math.Abs(s.mean)
		s.driftSE = s.sd / math.Sqrt(sxx) * w / math.Abs(s.mean)
	}
	b1, ok1 := halfSlope(t, y, 0, w/2)
	b2, ok2 := halfSlope(t, y, w/2, math.Inf(1))
	if ok1 && ok2 && b1*b2 > 0 && math.Abs(b2) < math.Abs(b1) {
		s.tau = time.Duration(w / 2 / math.Log(b1/b2) * float64(time.Second))
	}
	return s
}

// halfSlope is the least-squares slope of the samples with lo ≤ t < hi.
func halfSlope(t, y []float64, lo, hi float64) (float64, bool) {
	var ts, ys []float64
	for i := range t {
		if t[i] >= lo && t[i] < hi {
			ts, ys = append(ts, t[i]), append(ys, y[i])
		}
	}
	if len(ts) < 3 {
		return 0, false
	}
	_, b := stat.LinearRegression(ts, ys, nil, false)
	return b, true
}

// check refuses a window that is not steady enough for a calibration
// point, saying how much it drifts and how long to wait. A drift over the
// limit counts only when it stands out of the noise, beyond driftSEs
// standard errors: a drift hidden in the noise moves the mean by about as
// much as the noise itself does, and the point records both.
func (s steadiness) check(limit float64, window time.Duration) error {
	pct := func(x float64) string { return fmt.Sprintf("%+.3g %%", 100*x) }
	switch {
	case s.n < minWindowSamples:
		return refuse("only %d usable samples in the last %s; need %d: wait, or use a longer window", s.n, window, minWindowSamples)
	case math.Abs(s.drift) > limit && math.Abs(s.drift) > driftSEs*s.driftSE:
		msg := fmt.Sprintf("still drifting: the reading changed %s over the last %s (limit %.3g %%)", pct(s.drift), window, 100*limit)
		if s.tau > 0 {
			wait := time.Duration(float64(s.tau) * math.Log(math.Abs(s.drift)/limit))
			msg += fmt.Sprintf("; it is settling with a time constant of about %s: wait about %s and try again", roundDur(s.tau), roundDur(wait))
		} else {
			msg += "; the rate is not falling, so it is not settling: wait until the pressure holds (check valves, pumps and leaks), or allow more with --max-drift"
		}
		return refuse("%s", msg)
	}
	return nil
}

// roundDur rounds d for people: seconds under ten minutes, else minutes.
func roundDur(d time.Duration) time.Duration {
	if d < 10*time.Minute {
		return d.Round(time.Second)
	}
	return d.Round(time.Minute)
}
