package daemon

import (
	"context"
	"holdfast/daemon/config"
	"testing"
)

// contextUntil returns a context cancelled when stop is closed.
func contextUntil(stop <-chan struct{}) (context.Context, context.CancelFunc) {
	ctx, cancel := context.WithCancel(context.Background())
	go func() {
		select {
		case <-stop:
			cancel()
		case <-ctx.Done():
		}
	}()
	return ctx, cancel
}

// runInBackground runs d until the returned stop is called; stop waits for
// Run to return and fails the test on its error.
func runInBackground(t *testing.T, d *Daemon) (stop func()) {
	t.Helper()
	quit := make(chan struct{})
	done := make(chan error, 1)
	go func() {
		ctx, cancel := contextUntil(quit)
		defer cancel()
		done <- d.Run(ctx)
	}()
	return func() {
		t.Helper()
		close(quit)
		if err := <-done; err != nil {
			t.Errorf("Run: %v", err)
		}
	}
}

// newTestDaemon is a bare Daemon running cfg, for tests of one part.
func newTestDaemon(cfg *config.Config) *Daemon {
	d := &Daemon{}
	d.cfgp.Store(cfg)
	return d
}
