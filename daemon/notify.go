package daemon

import (
	"context"

	"holdfast/alerts"
)

// notify hands an alarm transition to the notifiers. There are none yet.
func (d *Daemon) notify(ev alerts.Event) {}

// notifyLoop delivers queued notifications until ctx is done. There are
// no notifiers yet.
func (d *Daemon) notifyLoop(ctx context.Context) { <-ctx.Done() }
