package report

import (
	"testing"
	"time"

	"holdfast/calib"
)

// Extrapolated readings are drawn in the line and marked; readings without
// a value only marked.
func TestRunsDrawAndMarkExtrapolated(t *testing.T) {
	t0 := time.Date(2026, 3, 2, 20, 0, 0, 0, time.UTC)
	s := Series{Gauge: "foreline", Kind: "pressure", Points: []Point{
		{At: t0, Value: 6, Quality: calib.QualityOK},
		{At: t0.Add(time.Second), Value: 4, Quality: calib.QualityExtrapolated},
		{At: t0.Add(2 * time.Second), Value: 3, Quality: calib.QualityExtrapolated},
		{At: t0.Add(3 * time.Second), Quality: calib.QualitySensorFault},
	}}
	lines, bad := runs(s)
	if len(lines) != 1 || len(lines[0]) != 3 || len(bad) != 3 {
		t.Errorf("runs: %d lines (first of %d points), %d marks; want 1 line of 3 points and 3 marks", len(lines), len(lines[0]), len(bad))
	}
	s.Points = s.Points[:3] // the last reading extrapolated
	g := (&Night{Series: []Series{s}}).Summaries()[0]
	if g.Final != 3 || g.LastStatus != calib.QualityExtrapolated {
		t.Errorf("summary: final %g, last %s; want 3, extrapolated", g.Final, g.LastStatus)
	}
}
