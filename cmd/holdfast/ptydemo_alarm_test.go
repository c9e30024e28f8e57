package main

import (
	"os"
	"path/filepath"
	"regexp"
	"strconv"
	"testing"
	"time"

	"holdfast/calib"
	"holdfast/daemon"
	"holdfast/daemon/config"
)

// The serial demo of the README (simulate pty-sim.yaml at the README's
// --speed, run pty-demo.yaml) must be able to raise its alarm: the daemon
// keeps wall time while the chamber runs sped up, so the time the load-lock
// spends above the limit, divided by the speed, must outlast the alarm's
// on-delay with room for a few polls. The chamber is stepped here on a
// clock of our own instead of waiting a minute of wall time.
func TestPtyDemoAlarmCanFireAtReadmeSpeed(t *testing.T) {
	readme, err := os.ReadFile(filepath.Join("..", "..", "README.md"))
	if err != nil {
		t.Fatal(err)
	}
	m := regexp.MustCompile(`simulate --config deploy/examples/pty-sim\.yaml --pty \S+ --speed (\d+)`).FindSubmatch(readme)
	if m == nil {
		t.Fatal("README has no `holdfast simulate --config deploy/examples/pty-sim.yaml --pty … --speed N` line")
	}
	speed, _ := strconv.ParseFloat(string(m[1]), 64)

	simCfg, err := config.LoadConfig(example("pty-sim.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	demo, err := config.LoadConfig(example("pty-demo.yaml"))
	if err != nil {
		t.Fatal(err)
	}
	var al *config.AlarmConfig
	for i := range demo.Alarms {
		if demo.Alarms[i].Name == "lock-not-holding" {
			al = demo.Alarms[i]
		}
	}
	if al == nil {
		t.Fatal("pty-demo.yaml has no alarm lock-not-holding")
	}
	limit, err := calib.Parse(al.Above.Value, calib.Pressure)
	if err != nil {
		t.Fatal(err)
	}
	poll := demo.Gauges[al.Gauge].Interval.D()

	start := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	now := start
	ch, _, err := daemon.SimChamber(simCfg, "bench", func() time.Time { return now })
	if err != nil {
		t.Fatal(err)
	}
	// Longest simulated stretch above the limit after the pressure first got
	// below it (wait_for_normal arms the alarm only then).
	armed, above := false, time.Duration(0)
	var longest, aboveFrom time.Duration
	for now = start; now.Sub(start) <= 90*time.Minute; now = now.Add(time.Second) {
		p := ch.State().Pressure
		switch {
		case p < limit:
			armed = true
			above = 0
		case armed && above == 0:
			above, aboveFrom = time.Second, now.Sub(start)
		case armed:
			above += time.Second
		}
		if above > longest {
			longest = above
		}
	}
	wall := time.Duration(float64(longest) / speed)
	need := al.For.D() + 3*poll
	t.Logf("above %s from %s simulated = %s of wall time at --speed %g; on-delay %s, poll %s",
		longest, aboveFrom, wall, speed, al.For.D(), poll)
	if wall < need {
		t.Errorf("at the README's --speed %g the load-lock is above %s for %s of wall time, shorter than the alarm's on-delay %s plus three polls: the demo's alarm cannot fire",
			speed, al.Above.Value, wall, al.For.D())
	}
}
