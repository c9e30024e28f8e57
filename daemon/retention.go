package daemon

import (
	"context"
	"time"
)

// retentionEvery is how often old samples are looked for.
const retentionEvery = time.Hour

// retentionLoop deletes samples older than store.retention, once at start
// and then every hour of the daemon's clock, until ctx is done. Without a
// retention every sample is kept.
func (d *Daemon) retentionLoop(ctx context.Context) {
	keep := d.cfg.Store.Retention.D()
	if keep <= 0 {
		return
	}
	for {
		d.applyRetention(d.clock.Now().Add(-keep))
		select {
		case <-ctx.Done():
			return
		case <-d.clock.After(retentionEvery):
		}
	}
}

func (d *Daemon) applyRetention(before time.Time) {
	for _, g := range d.gauges {
		n, err := d.store.DeleteBefore(g.name, before)
		switch {
		case err != nil:
			d.log.Warn("retention failed; old samples kept", "gauge", g.name, "err", err)
		case n > 0:
			d.log.Info("old samples deleted", "gauge", g.name, "samples", n, "before", before)
		}
	}
}
