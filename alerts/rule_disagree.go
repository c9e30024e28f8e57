package alerts

import (
	"fmt"
	"math"
	"time"

	"holdfast/calib"
)

// Disagree is the disagreement rule: two gauges that measure the same
// thing, both reading valid values within their ranges, differ by more than
// Factor (pressures: the larger over the smaller) or, when Factor is 0, by
// more than Diff (temperatures, °C). A drifting or contaminated sensor shows
// this way. Readings further apart in time than MaxSkew are not compared.
type Disagree struct {
	Gauge, With string
	Factor      float64
	Diff        float64
	MaxSkew     time.Duration // 0: 1 min
	Unit        calib.Unit

	last [2]calib.Sample
}

// Kind returns "disagree".
func (r *Disagree) Kind() string { return "disagree" }

// Gauges returns both gauges.
func (r *Disagree) Gauges() []string { return []string{r.Gauge, r.With} }

// Tick decides nothing: the rule compares samples.
func (r *Disagree) Tick(time.Time, bool) Condition { return unknown() }

// Observe keeps the newest valid sample of each gauge and compares them.
func (r *Disagree) Observe(gauge string, s calib.Sample, _ bool) Condition {
	i := 0
	if gauge == r.With {
		i = 1
	}
	r.last[i] = s
	a, b := r.last[0], r.last[1]
	skew := r.MaxSkew
	if skew <= 0 {
		skew = time.Minute
	}
	if a.Quality != calib.QualityOK || b.Quality != calib.QualityOK || a.At.IsZero() || b.At.IsZero() ||
		a.At.Sub(b.At).Abs() > skew {
		return unknown() // one is out of range, faulty or old: nothing to compare
	}
	c := Condition{Known: true, Unit: r.Unit.Symbol()}
	pair := fmt.Sprintf("%s reads %s, %s reads %s", r.Gauge, calib.Format(a.Value, r.Unit), r.With, calib.Format(b.Value, r.Unit))
	if r.Factor > 0 {
		hi, lo := math.Max(a.Value, b.Value), math.Min(a.Value, b.Value)
		c.Value, c.Limit = hi/lo, r.Factor
		c.Active = !(lo > 0) || hi/lo > r.Factor
		c.ValueText, c.LimitText = fmt.Sprintf("×%.3g", c.Value), fmt.Sprintf("×%.3g", r.Factor)
	} else {
		c.Value, c.Limit = math.Abs(a.Value-b.Value), r.Diff
		c.Active = c.Value > r.Diff
		c.ValueText, c.LimitText = fmt.Sprintf("%.3g", c.Value), fmt.Sprintf("%.3g", r.Diff)
	}
	c.Detail = fmt.Sprintf("disagrees with %s by %s (limit %s): %s", r.With, c.ValueText, c.LimitText, pair)
	return c
}
