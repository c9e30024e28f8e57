package drivers

import (
	"context"
	"errors"
	"fmt"
	"time"
)

// fail closes the port after an I/O error, schedules the next reopen and
// returns the error for the caller, wrapping ErrLinkDown.
func (l *StreamLink) fail(cause error) error {
	if l.p != nil {
		_ = l.p.Close() // the device is already gone or misbehaving; its close error adds nothing
		l.p = nil
	}
	l.silent = 0
	l.everDown = true
	l.lastErr = cause
	l.wait = l.backoff.Min
	l.nextTry = time.Now().Add(l.wait)
	l.updateStats(func(s *LinkStats) {
		if s.Up {
			l.log.Warn("link down", "err", cause, "retry_seconds", l.wait.Seconds())
		}
		s.Up = false
		s.Failures++
		s.LastError = cause.Error()
	})
	return fmt.Errorf("%w: %s: %w", ErrLinkDown, l.target, cause)
}

// reopen opens the device unless the backoff has not yet passed. A failed
// attempt doubles the wait up to the backoff's maximum.
func (l *StreamLink) reopen(ctx context.Context) error {
	if now := time.Now(); now.Before(l.nextTry) {
		return fmt.Errorf("%w: %s: next reopen in %s; last error: %w",
			ErrLinkDown, l.target, l.nextTry.Sub(now).Round(time.Millisecond), l.lastErr)
	}
	p, err := l.open(ctx)
	if err != nil {
		return l.openFailed(err)
	}
	l.p, l.dirty, l.silent, l.wait = p, true, 0, 0
	reconnect := l.everDown
	l.updateStats(func(s *LinkStats) {
		s.Up = true
		if reconnect {
			s.Reconnects++
		}
	})
	if reconnect {
		l.log.Info("link up again")
	} else {
		l.log.Debug("link open")
	}
	return nil
}

func (l *StreamLink) openFailed(err error) error {
	first := !l.everDown
	l.everDown = true
	l.lastErr = err
	switch {
	case l.wait == 0:
		l.wait = l.backoff.Min
	default:
		l.wait = min(2*l.wait, l.backoff.Max)
	}
	l.nextTry = time.Now().Add(l.wait)
	var same bool
	l.updateStats(func(s *LinkStats) {
		same = s.LastError == err.Error()
		s.Up = false
		s.Failures++
		s.LastError = err.Error()
	})
	if first || !same {
		l.log.Warn("cannot open link", "err", err, "retry_seconds", l.wait.Seconds())
	} else {
		l.log.Debug("cannot open link", "err", err, "retry_seconds", l.wait.Seconds())
	}
	return fmt.Errorf("%w: %s: %w", ErrLinkDown, l.target, err)
}

// IsLinkDown reports whether err says the link's device is gone, as opposed
// to an instrument that is present but did not answer or answered wrongly.
func IsLinkDown(err error) bool { return errors.Is(err, ErrLinkDown) }
