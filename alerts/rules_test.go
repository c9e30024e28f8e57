package alerts

import (
	"math"
	"strings"
	"testing"
	"time"

	"holdfast/calib"
)

func at(sec float64) time.Time { return t0.Add(time.Duration(sec * float64(time.Second))) }

func ok(v, sec float64) calib.Sample {
	return calib.Sample{At: at(sec), Value: v, Quality: calib.QualityOK}
}

// The pump-down deadline's guidance is t = (V/S)·ln(p0/p): 100 L through
// 10 L/s from 1013.25 to 1 mbar takes 69.209 s (REFERENCES.md §4a, the
// pump-down time check); the message rounds it to 1m9s.
func TestPumpDeadlineGuidance(t *testing.T) {
	r := &PumpDeadline{Gauge: "rough", Start: 101325.0001, Target: 100, Within: 5 * time.Minute,
		Guide: PumpDown{Volume: 0.100, Speed: 0.010}, Unit: mustUnit("mbar")}
	if got, _ := r.Guide.Time(101325, 100); math.Abs(got-69.209) > 0.001 {
		t.Fatalf("expected pump-down time %g s, want 69.209 s", got)
	}
	e := started(t, &Alarm{Name: "slow-pump-down", Gauge: "rough", Rule: r})
	e.Observe("rough", ok(101000, 0))
	e.Observe("rough", ok(5000, 60))
	if evs := e.Tick(at(299)); len(evs) != 0 {
		t.Errorf("before the deadline: %v", kinds(evs))
	}
	evs := e.Tick(at(301))
	if len(evs) != 1 || evs[0].Kind != Raised || !strings.Contains(evs[0].Message, "about 1m9s") {
		t.Fatalf("after the deadline: %v %q; want a raise offering about 1m9s", kinds(evs), evs[0].Message)
	}
	if evs := e.Observe("rough", ok(90, 400)); len(evs) != 1 || evs[0].Kind != Cleared {
		t.Errorf("target reached: %v, want cleared", kinds(evs))
	}
}

// The rise watch on the rate-of-rise worked check of REFERENCES.md §3b:
// V = 100 L, 1.0e-2 → 5.0e-2 mbar in 600 s gives Q = 6.6667e-4 Pa·m³/s,
// above a 1e-3 mbar·L/s limit, so the alarm is raised with that leak rate.
func TestRiseWatchOnWorkedExample(t *testing.T) {
	rw := &RiseWatch{Gauge: "chamber", Window: 10 * time.Minute, Every: 30 * time.Second, MaxLeak: 1e-4,
		Volume: 0.100, Always: true, Unit: mustUnit("mbar*L/s")}
	e := started(t, &Alarm{Name: "leaking", Gauge: "chamber", Rule: rw})
	var raised []Event
	for s := 0; s <= 600; s++ {
		p := 1.0 + 4.0*float64(s)/600 // Pa: 1.0e-2 → 5.0e-2 mbar
		for _, ev := range e.Observe("chamber", ok(p, float64(s))) {
			if ev.Kind == Raised {
				raised = append(raised, ev)
			}
		}
	}
	if len(raised) != 1 {
		t.Fatalf("raised %d times, want once", len(raised))
	}
	if q := raised[0].Value; math.Abs(q/6.6667e-4-1) > 1e-4 {
		t.Errorf("leak rate %g Pa·m³/s, want 6.6667e-4", q)
	}
	if r := e.RiseResults()["leaking"]; r.Classification != LeakDominated {
		t.Errorf("classification %s, want leak-dominated", r.Classification)
	}
	rw2 := &RiseWatch{Gauge: "chamber", Window: time.Minute, MaxLeak: 1e-4, Volume: 0.1}
	if c := rw2.Observe("chamber", ok(3, 0), false); !c.Known || c.Active {
		t.Errorf("not isolated: %+v, want known and inactive", c)
	}
}

// A bake ramp of exactly 3 °C/min against a 2 °C/min limit: the window's
// least-squares slope is 0.05 °C/s (gonum's stat.LinearRegression on an
// exact line; the limit is invented, ramp limits are common practice).
func TestRateRuleOnABakeRamp(t *testing.T) {
	r := &Rate{Gauge: "wall", Window: 5 * time.Minute, Above: 2.0 / 60, Below: math.NaN(), Unit: mustUnit("C")}
	var c Condition
	for s := 0; s <= 300; s += 5 {
		c = r.Observe("wall", ok(22+0.05*float64(s), float64(s)), false)
	}
	if !c.Active || math.Abs(c.Value-0.05) > 1e-12 || !strings.Contains(c.Detail, "3 °C/min") {
		t.Errorf("ramp: %+v; want active at 0.05 °C/s shown as 3 C/min", c)
	}
	r2 := &Rate{Gauge: "wall", Window: 5 * time.Minute, Above: 2.0 / 60, Below: math.NaN(), Unit: mustUnit("C")}
	if c := r2.Observe("wall", ok(22, 0), false); c.Known {
		t.Error("a rate decided from one sample")
	}
}

// Stale and fault rules raise on the clock when a gauge falls silent or
// keeps reporting a sensor fault, and not before their time.
func TestStaleAndFault(t *testing.T) {
	e := started(t, &Alarm{Name: "cdg-silent", Gauge: "cdg", Rule: &Stale{Gauge: "cdg", After: 2 * time.Minute}},
		&Alarm{Name: "cdg-fault", Gauge: "cdg", Rule: &Fault{Gauge: "cdg", After: time.Minute}})
	e.Observe("cdg", ok(1, 0))
	e.Observe("cdg", calib.Sample{At: at(10), Quality: calib.QualitySensorFault})
	if evs := e.Observe("cdg", calib.Sample{At: at(59), Quality: calib.QualitySensorFault}); len(evs) != 0 {
		t.Errorf("59 s after the last good sample: %v", kinds(evs))
	}
	if evs := e.Tick(at(60)); len(evs) != 1 || evs[0].Alarm != "cdg-fault" {
		t.Errorf("tick at 60 s: %v, want the fault raised", kinds(evs))
	}
	if evs := e.Tick(at(178)); len(evs) != 0 {
		t.Errorf("tick at 178 s: %v, want nothing (the last answer came at 59 s)", kinds(evs))
	}
	if evs := e.Tick(at(179)); len(evs) != 1 || evs[0].Alarm != "cdg-silent" {
		t.Errorf("tick at 179 s: %v, want stale raised", kinds(evs))
	}
	if evs := e.Observe("cdg", ok(1, 190)); len(evs) != 2 {
		t.Errorf("a good sample: %v, want both cleared", kinds(evs))
	}
}

// Two pressure gauges disagree when both read valid values more than a
// factor apart; one out of range decides nothing.
func TestDisagree(t *testing.T) {
	r := &Disagree{Gauge: "pirani", With: "cdg", Factor: 2, Unit: mustUnit("Pa")}
	r.Observe("pirani", ok(1.0, 0), false)
	if c := r.Observe("cdg", ok(2.5, 1), false); !c.Active || math.Abs(c.Value-2.5) > 1e-12 {
		t.Errorf("1.0 vs 2.5 Pa: %+v, want active at ×2.5", c)
	}
	if c := r.Observe("cdg", ok(1.5, 2), false); !c.Known || c.Active {
		t.Errorf("1.0 vs 1.5 Pa: %+v, want agreement", c)
	}
	if c := r.Observe("cdg", calib.Sample{At: at(3), Quality: calib.QualityOverRange}, false); c.Known {
		t.Errorf("over-range: %+v, want no decision", c)
	}
}

// The daemon's own health: disk free share and failing store writes.
func TestHealth(t *testing.T) {
	e := started(t, &Alarm{Name: "disk", Gauge: "holdfast", Rule: &Health{Check: HealthDiskFree, Below: 0.05}},
		&Alarm{Name: "writes", Gauge: "holdfast", Rule: &Health{Check: HealthStoreWrites}})
	if evs := e.Observe(HealthDiskFree, ok(0.04, 0)); len(evs) != 1 || !strings.Contains(evs[0].Message, "4.0 %") {
		t.Errorf("4 %% free: %v", evs)
	}
	if evs := e.Observe(HealthStoreWrites, ok(1, 0)); len(evs) != 1 || evs[0].Kind != Raised {
		t.Errorf("writes failing: %v", kinds(evs))
	}
}
