package store

import (
	"math"
	"math/rand/v2"
	"time"
)

// The benchmark night: an invented coating chamber ("line-2") left pumping
// overnight, eight channels polled at 10 Hz for 8 hours from 21:00. Three
// pressures come from one controller exchange and share its time, three
// temperatures from another, and two status channels (pump state, valve
// position) from a third. Times are in whole milliseconds with jitter, as a
// poller stamps a serial exchange. The curves are made up for size and
// speed figures; no test checks physics against them.

// night8Start is when the invented night begins.
var night8Start = time.Date(2031, 9, 2, 21, 0, 0, 0, time.UTC)

// night8Samples is the number of polls per channel: 8 h at 10 Hz.
const night8Samples = 8 * 3600 * 10

// night8Names lists the channels, grouped by exchange.
var night8Names = []string{"chamber", "backing", "loadlock", "wall-tc", "shroud-tc", "source-tc", "pump-state", "valve-pos"}

// night8Times returns one exchange's poll times: every 100 ms plus a fixed
// latency plus jitter (σ = 1 ms), rounded to the millisecond.
func night8Times(seed uint64, latency time.Duration) []time.Time {
	rng := rand.New(rand.NewPCG(seed, 8))
	out := make([]time.Time, night8Samples)
	for i := range out {
		jit := time.Duration(rng.NormFloat64() * 1e6)
		at := night8Start.Add(time.Duration(i)*100*time.Millisecond + latency + jit)
		out[i] = at.Round(time.Millisecond)
	}
	return out
}

// night8 returns the eight channels of the benchmark night.
func night8() map[string][]Point {
	pt, tt, st := night8Times(21, 14*time.Millisecond), night8Times(22, 37*time.Millisecond), night8Times(23, 52*time.Millisecond)
	rng := rand.New(rand.NewPCG(24, 8))
	out := map[string][]Point{}
	for _, name := range night8Names {
		out[name] = make([]Point, night8Samples)
	}
	pump, valve := 0.0, 0.0
	for i := range night8Samples {
		h := float64(i) / 36000 // hours since the start
		pressure := func(p, noise float64) float64 { return roundSig(p*(1+noise*rng.NormFloat64()), 3) }
		chamber := pressure(2e-3*math.Exp(-h*1.7)+4e-7+3e-6*math.Exp(-math.Pow((h-4)/0.8, 2)), 0.005)
		fore := pressure(4.1e-2+2e-3*math.Sin(h), 0.01)
		lock := pressure(1013, 0.0005)
		if h > 5 { // the load lock is pumped down at 02:00
			lock = pressure(1013*math.Exp(-(h-5)*40)+2e-2, 0.01)
		}
		for j, p := range []float64{chamber, fore, lock} {
			q := uint8(0)
			if j == 0 && h > 6 && h < 6.05 {
				q = 2 // over-range for three minutes
			}
			out[night8Names[j]][i] = Point{At: pt[i], Raw: p, Value: p * 100, Quality: q}
		}
		for j, base := range []float64{22 + 60*math.Min(h/2, 1), 25 + 30*math.Min(h/3, 1), 180 - 20*math.Max(h-6, 0)} {
			raw := math.Round((base+0.06*rng.NormFloat64())*10) / 10
			out[night8Names[3+j]][i] = Point{At: tt[i], Raw: raw, Value: raw + 273.15, Calibration: 3}
		}
		if i == 1200 || i == 180000 {
			pump = 1 - pump // the pump comes on after 2 min and changes once at 02:00
		}
		if i%72000 == 36000 { // the valve steps once every two hours
			valve = math.Mod(valve+1, 4)
		}
		out["pump-state"][i] = Point{At: st[i], Raw: pump, Value: pump}
		out["valve-pos"][i] = Point{At: st[i], Raw: valve, Value: valve}
	}
	return out
}
