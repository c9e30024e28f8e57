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

// applyRetention covers every stored series, including gauges since
// removed from the config.
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
