package daemon

import (
	"context"
	"time"

	"holdfast/daemon/store"
)

// retentionEvery is how often old samples are looked for.
const retentionEvery = time.Hour

// retentionLoop deletes raw samples and roll-ups older than their
// store.retention, once at start and then every hour of the daemon's
// clock, until ctx is done. A tier without a retention is kept for ever.
// The store deletes in small transactions, so polling and flushing go on
// meanwhile.
func (d *Daemon) retentionLoop(ctx context.Context) {
	raw, minute, hour := d.conf().Store.Retention.Tiers()
	if raw <= 0 && minute <= 0 && hour <= 0 {
		return
	}
	for {
		now := d.clock.Now()
		if raw > 0 {
			d.applyRetention(now.Add(-raw))
		}
		for _, t := range []struct {
			tier store.Tier
			keep time.Duration
		}{{store.TierMinute, minute}, {store.TierHour, hour}} {
			if t.keep > 0 {
				d.applyRollupRetention(t.tier, now.Add(-t.keep))
			}
		}
		select {
		case <-ctx.Done():
			return
		case <-d.clock.After(retentionEvery):
		}
	}
}

// applyRetention deletes raw samples before before, covering every stored
// series, including gauges since removed from the config; their roll-ups
// stay.
func (d *Daemon) applyRetention(before time.Time) {
	series, err := d.store.Series()
	if err != nil {
		d.log.Warn("retention failed; old samples kept", "err", err)
		return
	}
	for _, name := range series {
		n, err := d.store.DeleteBefore(name, before)
		switch {
		case err != nil:
			d.log.Warn("retention failed; old samples kept", "gauge", name, "err", err)
		case n > 0:
			d.log.Info("old samples deleted", "gauge", name, "samples", n, "before", before)
		}
	}
}

// applyRollupRetention deletes roll-ups of tier t before before, for every
// stored series.
func (d *Daemon) applyRollupRetention(t store.Tier, before time.Time) {
	series, err := d.store.Series()
	if err != nil {
		d.log.Warn("retention failed; old roll-ups kept", "tier", t.String(), "err", err)
		return
	}
	for _, name := range series {
		n, err := d.store.DeleteRollupsBefore(name, t, before)
		switch {
		case err != nil:
			d.log.Warn("retention failed; old roll-ups kept", "gauge", name, "tier", t.String(), "err", err)
		case n > 0:
			d.log.Info("old roll-ups deleted", "gauge", name, "tier", t.String(), "rollups", n, "before", before)
		}
	}
}
