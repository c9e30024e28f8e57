package drivers

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"regexp"
	"time"
)

// ErrWrongInstrument means a link's identity exchange failed: the instrument
// on the line did not answer it, or answered with a reply that does not match
// the config's. The link stays down (it wraps ErrLinkDown too) and is tried
// again on its reconnect backoff, so a gauge never reads another instrument's
// values as its own after a port was renumbered or a link points elsewhere.
var ErrWrongInstrument = errors.New("identity check failed")

// Identify is the exchange a serial or TCP link runs each time it opens its
// device, before any gauge's exchange: Send is written, one reply is read up
// to Until (default "\n") and Expect, a Go regular expression (RE2), must
// match it with trailing CR and LF removed. Send and Until take the escapes
// of Unescape; Timeout, when set, is shorter than the link's.
type Identify struct {
	Send    string
	Expect  string
	Until   string
	Timeout time.Duration
}

// identity is an Identify made ready to run.
type identity struct {
	send    []byte
	re      *regexp.Regexp
	until   byte
	timeout time.Duration
}

// Validate reports every problem with the identity exchange, each naming its
// field as the config spells it (send, expect, until, timeout).
func (id Identify) Validate() error {
	_, err := id.compile()
	return err
}

func (id Identify) compile() (*identity, error) {
	var errs []error
	c := &identity{until: '\n', timeout: id.Timeout}
	send, err := Unescape(id.Send)
	switch {
	case err != nil:
		errs = append(errs, fmt.Errorf("send: %w", err))
	case len(send) == 0:
		errs = append(errs, errors.New(`send: missing; give the question that makes the instrument say what it is, e.g. "WHO\r"`))
	}
	c.send = send
	if id.Expect == "" {
		errs = append(errs, errors.New(`expect: missing; give a pattern only this instrument's reply matches, e.g. '^UNIT bench-pirani$'`))
	} else if c.re, err = regexp.Compile(id.Expect); err != nil {
		errs = append(errs, fmt.Errorf("expect: %w", err))
	}
	if id.Until != "" {
		u, err := Unescape(id.Until)
		if err != nil || len(u) != 1 {
			errs = append(errs, fmt.Errorf("until: want exactly one byte such as \"\\n\" or \"\\r\", got %q", id.Until))
		} else {
			c.until = u[0]
		}
	}
	if id.Timeout < 0 {
		errs = append(errs, fmt.Errorf("timeout: must not be negative, got %s", id.Timeout))
	}
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	return c, nil
}

// check runs the identity exchange on a freshly opened port and returns the
// reply that matched, or an error wrapping ErrWrongInstrument that says what
// was sent and what came back.
func (c *identity) check(ctx context.Context, p port, linkTimeout time.Duration) (string, error) {
	wait := linkTimeout
	if c.timeout > 0 && c.timeout < wait {
		wait = c.timeout
	}
	deadline := time.Now().Add(wait)
	if d, ok := ctx.Deadline(); ok && d.Before(deadline) {
		deadline = d
	}
	if err := p.discard(); err != nil {
		return "", err
	}
	if _, err := p.Write(c.send); err != nil {
		return "", err
	}
	var reply []byte
	var buf [256]byte
	for {
		slice := min(time.Until(deadline), readSlice)
		if slice <= 0 {
			if len(reply) == 0 {
				return "", fmt.Errorf("%w: no reply to %q within %s: the instrument on this line is off, "+
					"silent or another one; check the device path and the instrument", ErrWrongInstrument, c.send, wait)
			}
			return "", fmt.Errorf("%w: sent %q, got %q with no terminator %q within %s: check the baud rate and the device path",
				ErrWrongInstrument, c.send, reply, c.until, wait)
		}
		if err := ctx.Err(); err != nil {
			return "", err
		}
		n, err := p.readSome(buf[:], slice)
		if err != nil {
			return "", err
		}
		reply = append(reply, buf[:n]...)
		if i := bytes.IndexByte(reply, c.until); i >= 0 {
			line := string(bytes.TrimRight(reply[:i+1], "\r\n"))
			if !c.re.MatchString(line) {
				return "", fmt.Errorf("%w: sent %q, got %q, which does not match %q: this line reaches another instrument; "+
					"check the device path (prefer /dev/serial/by-id/...) and the link's identify", ErrWrongInstrument, c.send, line, c.re)
			}
			return line, nil
		}
		if len(reply) > maxReply {
			return "", fmt.Errorf("%w: sent %q, got more than %d bytes without the terminator %q: check the baud rate and the device path",
				ErrWrongInstrument, c.send, maxReply, c.until)
		}
	}
}
