package daemon

import (
	"math"
	"testing"
	"time"

	"holdfast/alerts"
	"holdfast/calib"
	"holdfast/daemon/alarmstore"
)

// An alarm removed by a reload while its state cannot be stored (a full
// disk) loses nothing: its raise waits and is stored once writes work,
// with its state, so that configured again it carries on from that state
// and numbers on: raise 1, acknowledgement 2, under different keys.
func TestReloadRemovesAnAlarmWhoseStateWaits(t *testing.T) {
	d := testDaemon(t)
	pa, _ := calib.LookupUnit("Pa")
	rough := func() *alerts.Alarm {
		return &alerts.Alarm{Name: "rough-lost", Gauge: "chamber", Severity: "high",
			Rule: &alerts.Limit{Gauge: "chamber", Above: 10, Below: math.NaN(), Unit: pa}}
	}
	vented := &alerts.Alarm{Name: "vented", Gauge: "chamber", Severity: "low",
		Rule: &alerts.Limit{Gauge: "chamber", Above: 5e4, Below: math.NaN(), Unit: pa}}
	d.alarms = alerts.NewEngine([]*alerts.Alarm{rough(), vented})
	st, err := alarmstore.Open(d.store.Bolt())
	if err != nil {
		t.Fatal(err)
	}
	as := &refusingAlarmStore{Store: st}
	if _, err := d.alarms.Attach(as); err != nil {
		t.Fatal(err)
	}
	t0 := time.Date(2031, 5, 6, 1, 0, 0, 0, time.UTC)
	at := func(sec int) time.Time { return t0.Add(time.Duration(sec) * time.Second) }
	d.alarms.Observe("chamber", calib.Sample{At: at(0), Value: 5, Quality: calib.QualityOK})
	as.fail = true
	d.alarms.Observe("chamber", calib.Sample{At: at(10), Value: 12, Quality: calib.QualityOK}) // raised; waits
	if err := d.alarms.Replace([]*alerts.Alarm{vented}); err != nil {
		t.Fatal(err)
	}
	as.fail = false
	if evs := d.alarms.Tick(at(11)); len(evs) != 1 || evs[0].Kind != alerts.Raised || evs[0].Seq != 1 {
		t.Fatalf("the tick after writes work again handed over %+v; want the waiting raise, seq 1", evs)
	}
	if err := d.alarms.Replace([]*alerts.Alarm{rough(), vented}); err != nil {
		t.Fatal(err)
	}
	if s := d.alarms.Status()[0]; s.Alarm != "rough-lost" || s.State != alerts.Unacknowledged || s.Raised != 1 {
		t.Fatalf("rough-lost configured again: %+v; want its stored state, unacknowledged, raised once", s)
	}
	ack, err := d.alarms.Ack(alerts.Action{Alarm: "rough-lost", At: at(12)})
	if err != nil || ack.Seq != 2 {
		t.Fatalf("ack: seq %d, %v; want seq 2", ack.Seq, err)
	}
	hist, err := st.History("rough-lost", time.Time{}, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(hist) != 2 || hist[0].Kind != alerts.Raised || hist[1].Kind != alerts.Acked || hist[0].DedupeKey == hist[1].DedupeKey {
		t.Errorf("history %+v; want the raise and the acknowledgement under two keys", hist)
	}
}
