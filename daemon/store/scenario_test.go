package store

import (
	"math"
	"math/rand/v2"
	"strconv"
	"time"
)

// Demo data: an invented overnight bake of a small chamber ("bakeout-3"),
// sampled at 1 Hz from 22:00. The curves are made up for size and speed
// figures; no test checks physics against them.

// nightStart is when the invented bake begins.
var nightStart = time.Date(2031, 3, 14, 22, 0, 0, 0, time.UTC)

// round3 keeps sig significant digits, as a gauge display does.
func roundSig(v float64, sig int) float64 {
	s := strconv.FormatFloat(v, 'e', sig-1, 64)
	r, _ := strconv.ParseFloat(s, 64)
	return r
}

// schedule returns poll times: every second, a fixed latency plus jitter
// (σ = 0.3 ms), as a poller that stamps the middle of a serial exchange sees.
func schedule(rng *rand.Rand, i int, latency time.Duration) time.Time {
	jitter := time.Duration(rng.NormFloat64() * 300e3)
	return nightStart.Add(time.Duration(i)*time.Second + latency + jitter)
}

// pirani is a foreline gauge pumped down from air: raw in mbar with three
// significant digits, value in Pa by unit scaling (calibration 0).
func pirani(n int) []Point {
	rng := rand.New(rand.NewPCG(11, 1))
	pts := make([]Point, n)
	for i := range pts {
		t := float64(i)
		p := 1000*math.Exp(-t/40) + 2e-3*(1+0.5*math.Exp(-t/20000)) // mbar
		raw := roundSig(p*(1+0.004*rng.NormFloat64()), 3)
		pts[i] = Point{At: schedule(rng, i, 12*time.Millisecond), Raw: raw, Value: raw * 100}
	}
	return pts
}

// ion is the chamber gauge: off until the foreline is low, then 1e-4 mbar
// falling to the 1e-8 range with a bump when the bake heats the walls; raw
// in mbar, three digits; value through a gas factor (calibration 7).
func ion(n int) []Point {
	rng := rand.New(rand.NewPCG(12, 1))
	pts := make([]Point, n)
	for i := range pts {
		t := float64(i)
		pts[i].At = schedule(rng, i, 31*time.Millisecond)
		if i < 600 {
			pts[i].Quality = 4 // the gauge is switched off
			continue
		}
		p := 1e-4*math.Exp(-(t-600)/900) + 3e-8 + 4e-7*math.Exp(-math.Pow((t-15000)/6000, 2))
		raw := roundSig(p*(1+0.01*rng.NormFloat64()), 3)
		pts[i].Raw, pts[i].Value, pts[i].Calibration = raw, raw*100*0.83, 7
	}
	return pts
}

// thermocouple is the bake heater: °C with 0.1 °C resolution, ramping from
// 22 °C to 150 °C over two hours, holding, and cooling in the early morning;
// value with a calibration offset (calibration 3).
func thermocouple(n int) []Point {
	rng := rand.New(rand.NewPCG(13, 1))
	pts := make([]Point, n)
	for i := range pts {
		t := float64(i)
		temp := 22 + 128*math.Min(t/7200, 1)
		if t > 36000 {
			temp = 22 + 128*math.Exp(-(t-36000)/3000)
		}
		raw := math.Round((temp+0.08*rng.NormFloat64())*10) / 10
		pts[i] = Point{At: schedule(rng, i, 45*time.Millisecond), Raw: raw, Value: raw + 0.37, Calibration: 3}
	}
	return pts
}

// night is the three gauges for 12 hours.
func night() map[string][]Point {
	const n = 12 * 3600
	return map[string][]Point{"foreline": pirani(n), "chamber-ion": ion(n), "heater-tc": thermocouple(n)}
}
