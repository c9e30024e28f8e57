package report

import (
	"math"
	"testing"
	"time"

	"holdfast/calib"
)

// benchNight is a full-size night as the daemon hands it over: four
// pressure gauges and two thermometers at the reduction's 2000 points
// each, three alarms and a hold test.
func benchNight(b *testing.B) *Night {
	n := testNight(b)
	n.Series = n.Series[:0]
	step := n.To.Sub(n.From) / 2000
	for g, name := range []string{"rough", "chamber-a", "chamber-b", "ion", "wall", "flange"} {
		s := Series{Gauge: name, Kind: "pressure", MaxStep: 3 * step}
		if g >= 4 {
			s.Kind = "temperature"
		}
		for i := range 2000 {
			h := float64(i) / 2000 * 12
			v := 1e5*math.Exp(-h*(3+float64(g))) + 1e-4*float64(g+1)
			if s.Kind == "temperature" {
				v = 22 + 100*math.Sin(h/4)
			}
			s.Points = append(s.Points, Point{At: n.From.Add(time.Duration(i) * step), Value: v, Quality: calib.QualityOK})
		}
		n.Series = append(n.Series, s)
	}
	n.Alarms = append(n.Alarms, AlarmPeriod{Alarm: "rough-slow", Severity: "low", Raised: n.From.Add(time.Hour), Cleared: n.From.Add(2 * time.Hour)})
	return n
}

func BenchmarkRenderNight(b *testing.B) {
	n := benchNight(b)
	for _, f := range Formats {
		b.Run(f, func(b *testing.B) {
			var size counter
			for b.Loop() {
				size = 0
				if err := Write(&size, n, f); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(b.Elapsed().Milliseconds())/float64(b.N), "ms/report")
			b.ReportMetric(float64(size)/1024, "KiB/report")
		})
	}
}

// counter counts the bytes written to it.
type counter int

func (c *counter) Write(p []byte) (int, error) { *c += counter(len(p)); return len(p), nil }
