package drivers

import (
	"context"
	"errors"
	"log/slog"
	"net"
	"os"
	"time"
)

// tcpSilentLimit is how many timeouts in a row make a TCP link reconnect: a
// converter that rebooted leaves a half-open socket that never answers again.
const tcpSilentLimit = 3

// DialTCP builds a StreamLink over a TCP connection. As with OpenSerial, only
// a configuration problem is an error; an endpoint that does not accept is
// retried with backoff.
func DialTCP(cfg TCPConfig, log *slog.Logger) (*StreamLink, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	timeout := cfg.Timeout
	if timeout <= 0 {
		timeout = DefaultTimeout
	}
	open := func(ctx context.Context) (port, error) {
		d := net.Dialer{Timeout: timeout}
		c, err := d.DialContext(ctx, "tcp", cfg.Address)
		if err != nil {
			return nil, err
		}
		return &tcpPort{c: c}, nil
	}
	l := newStreamLink(cfg.Name, cfg.Address, timeout, cfg.Backoff, log, open, compileIdentify(cfg.Identify))
	l.reopenAfter = tcpSilentLimit
	return l, nil
}

type tcpPort struct{ c net.Conn }

func (t *tcpPort) Write(b []byte) (int, error) {
	if err := t.c.SetWriteDeadline(time.Now().Add(time.Second)); err != nil {
		return 0, err
	}
	return t.c.Write(b)
}

func (t *tcpPort) Close() error { return t.c.Close() }

func (t *tcpPort) readSome(buf []byte, wait time.Duration) (int, error) {
	if err := t.c.SetReadDeadline(time.Now().Add(wait)); err != nil {
		return 0, err
	}
	n, err := t.c.Read(buf)
	if errors.Is(err, os.ErrDeadlineExceeded) {
		return n, nil
	}
	return n, err
}

// discard reads whatever a late reply left in the socket, waiting at most a
// millisecond for more.
func (t *tcpPort) discard() error {
	var buf [512]byte
	for range 64 {
		n, err := t.readSome(buf[:], time.Millisecond)
		if err != nil {
			return err
		}
		if n == 0 {
			return nil
		}
	}
	return nil
}
