package daemon

import (
	"errors"
	"math"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus/testutil"

	"holdfast/calib"
	"holdfast/daemon/config"
)

// A gauge with a valid recent sample exports its value; one whose last
// sample is over-range, or stale, or that is down exports none; an
// extrapolated one exports its value (the
// Prometheus convention for missing data is absence, not NaN).
func TestMetricsOmitInvalidValues(t *testing.T) {
	now := time.Now()
	ok := fakeGauge("ok", time.Second, nil)
	ok.seen, ok.up, ok.last = true, true, calib.Sample{At: now, Value: 2.5e-3, Quality: calib.QualityOK}
	over := fakeGauge("over", time.Second, nil)
	over.seen, over.up, over.last = true, true, calib.Sample{At: now, Value: 1e5, Quality: calib.QualityOverRange}
	stale := fakeGauge("stale", time.Second, nil)
	stale.seen, stale.up, stale.last = true, true, calib.Sample{At: now.Add(-time.Minute), Value: 7, Quality: calib.QualityOK}
	never := fakeGauge("never", time.Second, nil)
	// Extrapolated beyond its calibration: a value with reduced trust, exported.
	extrap := fakeGauge("extrap", time.Second, nil)
	extrap.seen, extrap.up, extrap.last = true, true, calib.Sample{At: now, Value: 0.4, Quality: calib.QualityExtrapolated}
	d := testDaemon(t, ok, over, stale, never, extrap)

	want := `
# HELP holdfast_pressure_pascals Last valid pressure read by the poller, after calibration; also exported when extrapolated beyond a calibration's fitted range (see holdfast_sensor_quality). Absent while the gauge has no valid reading.
# TYPE holdfast_pressure_pascals gauge
holdfast_pressure_pascals{gauge="extrap"} 0.4
holdfast_pressure_pascals{gauge="ok"} 0.0025
# HELP holdfast_sensor_up 1 while the gauge answers its polls, its last sample is recent and it reports no sensor fault, else 0 (holdfast_sensor_quality says why).
# TYPE holdfast_sensor_up gauge
holdfast_sensor_up{gauge="extrap"} 1
holdfast_sensor_up{gauge="never"} 0
holdfast_sensor_up{gauge="ok"} 1
holdfast_sensor_up{gauge="over"} 1
holdfast_sensor_up{gauge="stale"} 0
`
	if err := testutil.GatherAndCompare(d.met.reg, strings.NewReader(want), "holdfast_pressure_pascals", "holdfast_sensor_up"); err != nil {
		t.Error(err)
	}
}

// Metric names follow the Prometheus naming rules (promlint).
func TestMetricsLint(t *testing.T) {
	g := fakeGauge("p", time.Second, nil)
	g.seen, g.up, g.last = true, true, calib.Sample{At: time.Now(), Value: 1, Quality: calib.QualityOK}
	d := testDaemon(t, g)
	problems, err := testutil.GatherAndLint(d.met.reg)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range problems {
		t.Errorf("%s: %s", p.Metric, p.Text)
	}
}

// A gauge whose instrument gave no number (an ion gauge switched off, NaN
// raw) still appears in /api/v1/gauges, without raw or value.
func TestAPIGaugesWithNaNRaw(t *testing.T) {
	g := fakeGauge("ion", time.Second, nil)
	g.seen, g.up, g.last = true, true, calib.Sample{At: time.Now(), Raw: math.NaN(), Value: math.NaN(), Quality: calib.QualityOff}
	d := testDaemon(t, g)
	rec := httptest.NewRecorder()
	d.apiGauges(rec, httptest.NewRequest("GET", "/api/v1/gauges", nil))
	body := rec.Body.String()
	if rec.Code != 200 || !strings.Contains(body, `"quality": "off"`) || strings.Contains(body, `"raw"`) {
		t.Errorf("status %d, body %q; want 200 with quality off and no raw", rec.Code, body)
	}
}

// When the alarm state cannot be loaded, nothing is raised: /healthz says
// so (503), holdfast_alarms_up is 0, and hold tests are refused.
func TestAlarmsDownIsVisible(t *testing.T) {
	d := testDaemon(t, fakeGauge("p", time.Second, nil))
	d.conf().Gauges = map[string]*config.GaugeConfig{"p": {Kind: "pressure"}}
	err := errors.New("alarm bucket unreadable")
	d.alarmsDown.Store(&err)
	rec := httptest.NewRecorder()
	d.healthz(rec, httptest.NewRequest("GET", "/healthz", nil))
	if rec.Code != 503 || !strings.Contains(rec.Body.String(), "alarm bucket unreadable") {
		t.Errorf("healthz: %d %q; want 503 naming the cause", rec.Code, rec.Body.String())
	}
	want := "# HELP holdfast_alarms_up 1 while the alarm engine evaluates alarms, 0 when its stored state could not be loaded (no alarm will be raised).\n# TYPE holdfast_alarms_up gauge\nholdfast_alarms_up 0\n"
	if err := testutil.GatherAndCompare(d.met.reg, strings.NewReader(want), "holdfast_alarms_up"); err != nil {
		t.Error(err)
	}
	if _, err := d.beginHoldTest("p", time.Minute, time.Minute, false, false); err == nil || !strings.Contains(err.Error(), "alarms are not running") {
		t.Errorf("hold test while alarms are down: err %v", err)
	}
}

// holdfast_sensor_quality says what each gauge's value is worth now, not
// what its last sample said: a gauge that stopped answering (or never
// answered) says no-reply though its last sample was ok, one held up past
// its stale limit with no poll failed says stale, one whose instrument reports a fault (it
// answers) says sensor-fault. Exactly one quality is 1 per gauge.
func TestSensorQualitySaysLiveState(t *testing.T) {
	now := time.Now()
	fresh := calib.Sample{At: now, Value: 2e-3, Quality: calib.QualityOK}
	ok := fakeGauge("ok", time.Second, nil)
	ok.seen, ok.up, ok.last = true, true, fresh
	silent := fakeGauge("silent", time.Second, nil)
	silent.seen, silent.up, silent.last, silent.misses = true, false, fresh, downAfter
	fault := fakeGauge("fault", time.Second, nil)
	fault.seen, fault.up, fault.last = true, false, calib.Sample{At: now, Value: math.NaN(), Quality: calib.QualitySensorFault}
	faultThenSilent := fakeGauge("fault-then-silent", time.Second, nil)
	faultThenSilent.seen, faultThenSilent.up, faultThenSilent.last, faultThenSilent.misses = true, false, fault.last, downAfter+2
	stale := fakeGauge("stale", time.Second, nil)
	stale.seen, stale.up, stale.last = true, true, calib.Sample{At: now.Add(-time.Minute), Value: 7, Quality: calib.QualityOK}
	// One poll unanswered, since a sample that is stale by now.
	staleMissed := fakeGauge("stale-missed", time.Second, nil)
	staleMissed.seen, staleMissed.up, staleMissed.last, staleMissed.misses = true, true, stale.last, 1
	never := fakeGauge("never", time.Second, nil)
	d := testDaemon(t, ok, silent, fault, faultThenSilent, stale, staleMissed, never)
	want := map[string]string{"ok": "ok", "silent": "no-reply", "fault": "sensor-fault",
		"fault-then-silent": "no-reply", "stale": "stale", "stale-missed": "no-reply", "never": "no-reply"}
	got := map[string][]string{}
	n := map[string]int{}
	mfs, err := d.met.reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	for _, mf := range mfs {
		if mf.GetName() != "holdfast_sensor_quality" {
			continue
		}
		for _, m := range mf.GetMetric() {
			l := map[string]string{}
			for _, lp := range m.GetLabel() {
				l[lp.GetName()] = lp.GetValue()
			}
			n[l["gauge"]]++
			if m.GetGauge().GetValue() == 1 {
				got[l["gauge"]] = append(got[l["gauge"]], l["quality"])
			}
		}
	}
	for g, w := range want {
		if len(got[g]) != 1 || got[g][0] != w {
			t.Errorf("gauge %s: quality %q is 1, want only %q", g, got[g], w)
		}
		if n[g] != len(liveQualities()) {
			t.Errorf("gauge %s: %d quality series, want one per quality (%d)", g, n[g], len(liveQualities()))
		}
	}
}
