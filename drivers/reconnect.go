package drivers

import (
	"errors"
	"fmt"
	"log/slog"
	"sync"
	"time"
)

// reconnector is the bookkeeping every self-reopening link shares: why it
// is down, when the next reopen may be tried (capped exponential backoff),
// and its health figures. The link holds its own device handle and lock;
// these methods run under that lock.
type reconnector struct {
	target  string // the device path or address, for errors
	backoff Backoff
	log     *slog.Logger

	wait     time.Duration
	nextTry  time.Time
	silent   int   // timeouts in a row
	everDown bool  // a reopen after this counts as a reconnect
	lastErr  error // why the link is down

	statsMu sync.Mutex
	stats   LinkStats
}

// Stats returns a copy of the link's health figures.
func (r *reconnector) Stats() LinkStats {
	r.statsMu.Lock()
	defer r.statsMu.Unlock()
	return r.stats
}

func (r *reconnector) updateStats(f func(*LinkStats)) {
	r.statsMu.Lock()
	f(&r.stats)
	r.statsMu.Unlock()
}

// down records that the link failed (the caller has closed its handle),
// schedules the next reopen and returns the error, wrapping ErrLinkDown.
func (r *reconnector) down(cause error) error {
	r.silent, r.everDown, r.lastErr = 0, true, cause
	r.wait = r.backoff.Min
	r.nextTry = time.Now().Add(r.wait)
	r.updateStats(func(s *LinkStats) {
		if s.Up {
			r.log.Warn("link down", "err", cause, "retry_seconds", r.wait.Seconds())
		}
		s.Up = false
		s.Failures++
		s.LastError = cause.Error()
	})
	return fmt.Errorf("%w: %s: %w", ErrLinkDown, r.target, cause)
}

// due returns nil when a reopen may be tried now, else why not yet.
func (r *reconnector) due() error {
	if now := time.Now(); now.Before(r.nextTry) {
		return fmt.Errorf("%w: %s: next reopen in %s; last error: %w",
			ErrLinkDown, r.target, r.nextTry.Sub(now).Round(time.Millisecond), r.lastErr)
	}
	return nil
}

// up records a successful open.
func (r *reconnector) up() {
	r.silent, r.wait = 0, 0
	reconnect := r.everDown
	r.updateStats(func(s *LinkStats) {
		s.Up = true
		if reconnect {
			s.Reconnects++
		}
	})
	if reconnect {
		r.log.Info("link up again")
	} else {
		r.log.Debug("link open")
	}
}

// openFailed records a failed open: the wait doubles up to the backoff's
// maximum, and a repeated error is logged once at Warn, then at Debug.
func (r *reconnector) openFailed(err error) error {
	first := !r.everDown
	r.everDown, r.lastErr = true, err
	if r.wait == 0 {
		r.wait = r.backoff.Min
	} else {
		r.wait = min(2*r.wait, r.backoff.Max)
	}
	r.nextTry = time.Now().Add(r.wait)
	var same bool
	r.updateStats(func(s *LinkStats) {
		same = s.LastError == err.Error()
		s.Up = false
		s.Failures++
		s.LastError = err.Error()
	})
	if first || !same {
		r.log.Warn("cannot open link", "err", err, "retry_seconds", r.wait.Seconds())
	} else {
		r.log.Debug("cannot open link", "err", err, "retry_seconds", r.wait.Seconds())
	}
	return fmt.Errorf("%w: %s: %w", ErrLinkDown, r.target, err)
}

// IsLinkDown reports whether err says the link's device is gone, as opposed
// to an instrument that is present but did not answer or answered wrongly.
func IsLinkDown(err error) bool { return errors.Is(err, ErrLinkDown) }
