package drivers

import (
	"fmt"
	"time"

	"github.com/simonvetter/modbus"
)

func (l *ModbusLink) fail(cause error) error {
	if l.client != nil {
		_ = l.client.Close() // the transport already failed
		l.client = nil
	}
	l.silent, l.everDown, l.lastErr = 0, true, cause
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

func (l *ModbusLink) reopen() error {
	if now := time.Now(); now.Before(l.nextTry) {
		return fmt.Errorf("%w: %s: next reopen in %s; last error: %w",
			ErrLinkDown, l.target, l.nextTry.Sub(now).Round(time.Millisecond), l.lastErr)
	}
	c, err := l.openClient()
	if err != nil {
		return l.openFailed(err)
	}
	l.client, l.silent, l.wait = c, 0, 0
	reconnect := l.everDown
	l.updateStats(func(s *LinkStats) {
		s.Up = true
		if reconnect {
			s.Reconnects++
		}
	})
	if reconnect {
		l.log.Info("link up again")
	}
	return nil
}

func (l *ModbusLink) openClient() (*modbus.ModbusClient, error) {
	if l.rs485 {
		if err := enableRS485(l.target); err != nil {
			return nil, fmt.Errorf("rs485: %w", err)
		}
	}
	c, err := modbus.NewClient(&l.conf)
	if err != nil {
		return nil, err
	}
	if err := c.Open(); err != nil {
		return nil, fmt.Errorf("open %s: %w", l.target, err)
	}
	return c, nil
}

func (l *ModbusLink) openFailed(err error) error {
	first := !l.everDown
	l.everDown, l.lastErr = true, err
	if l.wait == 0 {
		l.wait = l.backoff.Min
	} else {
		l.wait = min(2*l.wait, l.backoff.Max)
	}
	l.nextTry = time.Now().Add(l.wait)
	var same bool
	l.updateStats(func(s *LinkStats) {
		same = s.LastError == err.Error()
		s.Up, s.LastError = false, err.Error()
		s.Failures++
	})
	if first || !same {
		l.log.Warn("cannot open link", "err", err, "retry_seconds", l.wait.Seconds())
	}
	return fmt.Errorf("%w: %s: %w", ErrLinkDown, l.target, err)
}
