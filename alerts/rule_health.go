package alerts

import (
	"fmt"
	"time"

	"holdfast/calib"
)

// The daemon's own health reaches the engine as samples of these pseudo
// gauges: the free share of the data disk (0 to 1) and whether store
// writes fail (1) or work (0). Their names cannot clash with a configured
// gauge, whose names have no colon.
const (
	HealthDiskFree      = "holdfast:disk-free"
	HealthStoreWrites   = "holdfast:store-writes"
	HealthNotifyRefused = "holdfast:notify-refused" // notifications parked lately (a receiver refused them for good)
)

// Health is the daemon-health rule on one of the pseudo gauges: the data
// disk's free share below Below, store writes failing, or notifications
// refused for good lately.
type Health struct {
	Check string  // HealthDiskFree, HealthStoreWrites or HealthNotifyRefused
	Below float64 // disk: the free share that is too little
}

// Kind returns "health".
func (r *Health) Kind() string { return "health" }

// Gauges returns the pseudo gauge.
func (r *Health) Gauges() []string { return []string{r.Check} }

// Tick decides nothing: the daemon sends health samples.
func (r *Health) Tick(time.Time, bool) Condition { return unknown() }

// Observe judges one health sample.
func (r *Health) Observe(_ string, s calib.Sample, _ bool) Condition {
	c := Condition{Known: true, Value: s.Value, Limit: r.Below, Unit: "%"}
	if r.Check == HealthStoreWrites {
		c.Active, c.Limit, c.Unit = s.Value > 0, 0, ""
		c.Detail = "sample store writes work again"
		if c.Active {
			c.Detail = "sample store writes are failing; samples are held in memory and retried"
		}
		return c
	}
	if r.Check == HealthNotifyRefused {
		c.Active, c.Limit, c.Unit = s.Value > 0, 0, ""
		c.ValueText = fmt.Sprintf("%g", s.Value)
		c.Detail = "no notification refused lately"
		if c.Active {
			c.Detail = fmt.Sprintf("%g notification(s) refused for good by a receiver lately and parked; see holdfast alarms history", s.Value)
		}
		return c
	}
	c.Active = s.Value < r.Below
	c.ValueText, c.LimitText = fmt.Sprintf("%.1f %%", 100*s.Value), fmt.Sprintf("%.1f %%", 100*r.Below)
	c.Detail = fmt.Sprintf("data disk has %s free (limit %s)", c.ValueText, c.LimitText)
	return c
}
