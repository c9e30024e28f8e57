package drivers

import "context"

// fail closes the port after an I/O error, schedules the next reopen and
// returns the error for the caller, wrapping ErrLinkDown.
func (l *StreamLink) fail(cause error) error {
	if l.p != nil {
		_ = l.p.Close() // the device is already gone or misbehaving; its close error adds nothing
		l.p = nil
	}
	return l.down(cause)
}

// reopen opens the device unless the backoff has not yet passed, and runs
// the link's identity exchange, if any, before the link counts as up. A
// failed attempt, a wrong instrument or one that does not answer, doubles
// the wait up to the backoff's maximum.
func (l *StreamLink) reopen(ctx context.Context) error {
	if err := l.due(); err != nil {
		return err
	}
	p, err := l.open(ctx)
	if err != nil {
		return l.openFailed(err)
	}
	if l.ident != nil {
		reply, err := l.ident.check(ctx, p, l.timeout)
		if err != nil {
			_ = p.Close() // the instrument is not ours; its close error adds nothing
			return l.openFailed(err)
		}
		l.log.Info("instrument identified", "reply", reply)
	}
	l.p, l.dirty = p, true
	l.up()
	return nil
}
