package alerts

import (
	"math"
	"testing"
	"time"

	"holdfast/calib"
)

func minute(m float64) time.Time { return at(60 * m) }

func testPlan() BakePlan {
	return BakePlan{Temperatures: []string{"wall"}, Pressure: "cdg", OnRamp: true, StartRise: 10,
		RampUp: 2.0 / 60, CoolDown: 2.0 / 60, Hold: 150, Tolerance: 5, HoldFor: 30 * time.Minute,
		CoolTo: 50, MaxTemperature: 160, MaxPressure: 5e-3, RateWindow: 10 * time.Minute}
}

// handBake is a hand-built bake, one wall reading a minute (at whole
// minutes) and one pressure reading a minute (at half past):
//
//	minutes   0–9: 20 °C, resting
//	10–140: 20 + (m − 10) °C, a ramp of 1 °C/min to 150 °C
//	140–200: 150 °C, the hold
//	200–300: 150 − (m − 200) °C, cooling at 1 °C/min to 50 °C
//
// Pressure 1e-4 + 1e-6·m Pa before minute 20, 1e-3 Pa during the bake
// with one reading of 5e-3 Pa at minute 150.5, and 5e-5 Pa from minute 290.
func handBake(b *Bake) []BakeStep {
	var steps []BakeStep
	for m := 0; m <= 310; m++ {
		T := 20.0
		switch {
		case m >= 300:
			T = 50 // stays at 50
		case m >= 200:
			T = 150 - float64(m-200)
		case m >= 140:
			T = 150
		case m >= 10:
			T = 20 + float64(m-10)
		}
		st, _ := b.Observe("wall", calib.Sample{At: minute(float64(m)), Value: T, Quality: calib.QualityOK})
		steps = append(steps, st...)
		p := 1e-3
		switch {
		case m < 20:
			p = 1e-4 + 1e-6*float64(m)
		case m == 150:
			p = 5e-3
		case m >= 290:
			p = 5e-5
		}
		st, _ = b.Observe("cdg", calib.Sample{At: minute(float64(m) + 0.5), Value: p, Quality: calib.QualityOK})
		steps = append(steps, st...)
	}
	return steps
}

// The phases and summary of handBake, worked by hand:
//   - the resting level is 20 °C, so the bake starts when the wall reaches
//     20 + 10 = 30 °C: minute 20;
//   - hold from the first reading at or above 150 − 5 = 145 °C: minute 135;
//   - cool from the first reading below 145 − 5/2 = 142.5 °C (half the
//     tolerance of hysteresis): 150 − (m − 200) < 142.5 at m = 208;
//   - done at the first reading at or below 50 °C: minute 300;
//   - readings within 145–155 °C are those of minutes 135 to 205; each
//     counts the minute to the next reading: 71 min at temperature, and the
//     30 min hold is complete at the reading of minute 135 + 30 = 165;
//   - the maximum, 150 °C, is first read at minute 140;
//   - the pressure before is the last one while the wall read at most
//     20 + 10/4 = 22.5 °C: the wall read 22 °C at minute 12, so the
//     reading of minute 12.5, 1e-4 + 12e-6 = 1.12e-4 Pa; after is the last
//     reading before minute 300, 5e-5 Pa; the highest 5e-3 Pa;
//   - on exactly linear stretches the least-squares slope is the line's
//     own, 1 °C/min heating and cooling; windows across a corner are flatter.
func TestBakeTrackerPhasesAndSummary(t *testing.T) {
	b := NewBake(testPlan())
	steps := handBake(b)
	want := []BakeStep{{BakeRamp, minute(20)}, {BakeHold, minute(135)}, {BakeHold, minute(165)}, {BakeCool, minute(208)}, {BakeDone, minute(300)}}
	if len(steps) != len(want) {
		t.Fatalf("steps %v, want %v", steps, want)
	}
	for i := range want {
		if steps[i].Phase != want[i].Phase || !steps[i].At.Equal(want[i].At) {
			t.Errorf("step %d: %s at +%s, want %s at +%s", i, steps[i].Phase, steps[i].At.Sub(t0), want[i].Phase, want[i].At.Sub(t0))
		}
	}
	r := b.Snapshot()
	checks := []struct {
		name      string
		got, want float64
	}{
		{"start temperature", r.StartTemp, 20},
		{"max temperature", r.MaxTemp, 150},
		{"minutes at temperature", r.AtTemp.Minutes(), 71},
		{"pressure before", r.PressBefore, 1.12e-4},
		{"pressure after", r.PressAfter, 5e-5},
		{"pressure max", r.PressMax, 5e-3},
		{"max heating C/min", r.MaxHeating * 60, 1},
		{"max cooling C/min", r.MaxCooling * 60, 1},
	}
	for _, c := range checks {
		if math.Abs(c.got-c.want) > 1e-9*math.Max(1, math.Abs(c.want)) {
			t.Errorf("%s = %g, want %g", c.name, c.got, c.want)
		}
	}
	if r.Phase != BakeDone || !r.Start.Equal(minute(20)) || !r.End.Equal(minute(300)) || !r.MaxAt.Equal(minute(140)) ||
		!r.HoldDone.Equal(minute(165)) || r.MaxGauge != "wall" || r.StartedBy != "temperature" {
		t.Errorf("record %+v", r)
	}
}

// A bake whose heat goes off before the hold goes ramp → cool → done and
// its record says the hold was never reached: ramp 1 °C/min from 20 °C
// to 120 °C (minute 100), then cool 1 °C/min. Cool begins at the first
// reading below 120 − 5 = 115 °C (minute 106), done at 50 °C (minute 170).
func TestBakeTrackerHeatOffEarly(t *testing.T) {
	b := NewBake(testPlan())
	var steps []BakeStep
	for m := 0; m <= 200; m++ {
		T := 20 + math.Min(float64(m), 100)
		if m > 100 {
			T = 120 - float64(m-100)
		}
		st, _ := b.Observe("wall", calib.Sample{At: minute(float64(m)), Value: T, Quality: calib.QualityOK})
		steps = append(steps, st...)
	}
	want := []BakeStep{{BakeRamp, minute(10)}, {BakeCool, minute(106)}, {BakeDone, minute(170)}}
	if len(steps) != len(want) {
		t.Fatalf("steps %v, want %v", steps, want)
	}
	for i := range want {
		if steps[i] != want[i] {
			t.Errorf("step %d: %v, want %v", i, steps[i], want[i])
		}
	}
	if r := b.Snapshot(); r.AtTemp != 0 || !r.HoldDone.IsZero() || r.MaxTemp != 120 || !math.IsNaN(r.PressBefore) {
		t.Errorf("record %+v; want no time at temperature, max 120 °C, no pressure", r)
	}
}

// noise is a fixed ±1.5 °C alternation: the worst case for a rate taken
// from two readings (3 °C in 5 s is 36 °C/min), and one a least-squares
// line over minutes averages out.
func noise(i int) float64 { return 1.5 * float64(1-2*(i%2)) }

func rampEvents(t *testing.T, ratePerMin float64) []Event {
	t.Helper()
	p := testPlan()
	p.RateWindow = 5 * time.Minute
	b := NewBake(p)
	e := started(t, &Alarm{Name: "bake-heating-fast", Gauge: "wall", Rule: &BakeRule{Bake: b, Check: BakeHeatingFast,
		Deadband: 0.2 / 60, Unit: mustUnit("C")}})
	var evs []Event
	// 10 min at rest, then the ramp until 140 °C, every 5 s.
	for i := 0; ; i++ {
		sec := float64(5 * i)
		T := 20.0
		if sec > 600 {
			T += ratePerMin * (sec - 600) / 60
		}
		if T > 140 {
			break
		}
		s := calib.Sample{At: at(sec), Value: T + noise(i), Quality: calib.QualityOK}
		b.Observe("wall", s)
		evs = append(evs, e.Observe("wall", s)...)
	}
	return evs
}

// Ramp-rate detection on noisy readings: with a 2 °C/min limit, a
// 3 °C/min ramp raises the alarm and a 1.5 °C/min one does not, though
// reading to reading the noise alone swings by 36 °C/min. (By hand: the
// least-squares slope of e_i = a·(−1)^i at t_i = i·Δt is
// Σ(i − ī)e_i / (Δt·Σ(i − ī)²); for even n, Σ i·(−1)^i = −n/2 and
// Σ(i − ī)² = n(n² − 1)/12, so |slope| = 6a/((n² − 1)·Δt), and 0 for
// odd n. A 5 min window of 5 s readings holds n = 60 or 61:
// 6·1.5/(3599·5 s) = 5.0e-4 °C/s = 0.03 °C/min, far inside the
// 0.5 °C/min margins either side of the limit.)
func TestBakeRampRateWithNoise(t *testing.T) {
	evs := rampEvents(t, 3)
	var raised *Event
	for i, ev := range evs {
		if ev.Kind == Raised {
			raised = &evs[i]
			break
		}
	}
	if raised == nil {
		t.Fatalf("3 °C/min ramp against 2 °C/min: no raise; events %v", kinds(evs))
	}
	// The ramp starts at 600 s; the regression over 5 min passes 2 °C/min
	// once more than a little of the window is ramp, well before the
	// window is all ramp (900 s).
	if got := raised.At.Sub(t0); got < 600*time.Second || got > 900*time.Second {
		t.Errorf("raised at +%s, want between the ramp's start (+10m) and one full window later (+15m)", got)
	}
	if !(raised.Value > 2.0/60) {
		t.Errorf("raised with rate %g C/s, want above the limit", raised.Value)
	}
	for _, ev := range rampEvents(t, 1.5) {
		if ev.Kind == Raised {
			t.Errorf("1.5 °C/min ramp raised %q", ev.Message)
		}
	}
}

// Over-temperature holds whatever the phase; the pressure limit only
// during a bake: 1e-2 Pa at rest raises nothing, during the ramp it does.
func TestBakeOverTemperatureAndPressure(t *testing.T) {
	b := NewBake(testPlan())
	u := mustUnit("C")
	e := started(t,
		&Alarm{Name: "over", Gauge: "wall", Rule: &BakeRule{Bake: b, Check: BakeOverTemperature, Deadband: 2, Unit: u}},
		&Alarm{Name: "press", Gauge: "cdg", Rule: &BakeRule{Bake: b, Check: BakePressureHigh, Deadband: 5e-4, Unit: mustUnit("Pa")}})
	feed := func(g string, v, sec float64) []Event {
		s := calib.Sample{At: at(sec), Value: v, Quality: calib.QualityOK}
		b.Observe(g, s)
		return e.Observe(g, s)
	}
	feed("wall", 20, 0)
	if evs := feed("cdg", 1e-2, 1); len(evs) != 0 {
		t.Errorf("high pressure with no bake running: %v", kinds(evs))
	}
	// 15 °C above rest: the bake starts, with the pressure already high.
	if evs := feed("wall", 35, 60); len(evs) != 1 || evs[0].Kind != Raised || evs[0].Alarm != "press" {
		t.Errorf("bake started at 1e-2 Pa: %v, want press raised", kinds(evs))
	}
	if evs := feed("cdg", 4.8e-3, 61); len(evs) != 0 {
		t.Errorf("4.8e-3 Pa, inside the 5e-4 Pa deadband: %v, want no change", kinds(evs))
	}
	if evs := feed("cdg", 4e-4, 62); len(evs) != 1 || evs[0].Kind != Cleared {
		t.Errorf("4e-4 Pa: %v, want press cleared", kinds(evs))
	}
	if evs := feed("wall", 161, 120); len(evs) != 1 || evs[0].Kind != Raised || evs[0].Alarm != "over" {
		t.Errorf("161 °C against a 160 °C maximum: %v, want over raised", kinds(evs))
	}
	if evs := feed("wall", 159, 180); len(evs) != 0 {
		t.Errorf("159 °C, inside the 2 °C deadband: %v, want no change", kinds(evs))
	}
	if evs := feed("wall", 157, 240); len(evs) != 1 || evs[0].Kind != Cleared {
		t.Errorf("157 °C, past the deadband: %v, want cleared", kinds(evs))
	}
}

// A bake begun on request starts at once, from the temperature then, and
// a second request while it runs is refused.
func TestBakeBeginOnRequest(t *testing.T) {
	p := testPlan()
	p.OnRamp = false
	b := NewBake(p)
	for m := 0; m < 30; m++ { // a 60 °C rise that does not start a bake on its own
		b.Observe("wall", calib.Sample{At: minute(float64(m)), Value: 20 + 2*float64(m), Quality: calib.QualityOK})
	}
	if r := b.Snapshot(); r.Phase != BakeIdle {
		t.Fatalf("phase %s before the request, want idle", r.Phase)
	}
	if !b.Begin(minute(29.5)) || b.Begin(minute(29.6)) {
		t.Fatal("Begin: want the first request accepted and the second refused")
	}
	if r := b.Snapshot(); r.Phase != BakeRamp || r.StartTemp != 78 || r.StartedBy != "request" {
		t.Errorf("record %+v; want a ramp from 78 °C started by request", r)
	}
}
