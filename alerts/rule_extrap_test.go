package alerts

import (
	"math"
	"strings"
	"testing"

	"holdfast/calib"
)

// A limit holds an extrapolated value (read outside its calibration's
// range) against its limits like an ok one, and says it is extrapolated.
func TestLimitEvaluatesExtrapolated(t *testing.T) {
	l := &Limit{Gauge: "foreline", Above: 10, Below: math.NaN(), Unit: mustUnit("Pa")}
	for _, tc := range []struct {
		value  float64
		active bool
	}{{12, true}, {0.4, false}} {
		c := l.Observe("foreline", calib.Sample{Value: tc.value, Quality: calib.QualityExtrapolated}, false)
		if !c.Known || c.Active != tc.active || !strings.Contains(c.ValueText, "extrapolated") {
			t.Errorf("extrapolated %g Pa against 10 Pa: known %v active %v (%q); want known, active %v, marked extrapolated",
				tc.value, c.Known, c.Active, c.ValueText, tc.active)
		}
	}
}
