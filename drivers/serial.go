package drivers

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"os"
	"time"

	"go.bug.st/serial"
)

// OpenSerial builds a StreamLink over a serial line. Only a configuration
// problem is an error: a device that is missing or busy at start is logged,
// reported through Stats and retried on the next exchanges, so the daemon
// starts and shows the gauges on it as down.
func OpenSerial(cfg SerialConfig, log *slog.Logger) (*StreamLink, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	cfg = cfg.withDefaults()
	mode, err := serialMode(cfg)
	if err != nil {
		return nil, err
	}
	open := func(context.Context) (port, error) { return openSerialPort(cfg, mode) }
	return newStreamLink(cfg.Name, cfg.Device, cfg.Timeout, cfg.Backoff, log, open, compileIdentify(cfg.Identify)), nil
}

func serialMode(cfg SerialConfig) (*serial.Mode, error) {
	m := &serial.Mode{BaudRate: cfg.Baud, DataBits: cfg.DataBits}
	switch cfg.Parity {
	case "none":
		m.Parity = serial.NoParity
	case "even":
		m.Parity = serial.EvenParity
	case "odd":
		m.Parity = serial.OddParity
	case "mark":
		m.Parity = serial.MarkParity
	case "space":
		m.Parity = serial.SpaceParity
	default:
		return nil, fmt.Errorf("parity: unknown parity %q", cfg.Parity)
	}
	m.StopBits = serial.OneStopBit
	if cfg.StopBits == 2 {
		m.StopBits = serial.TwoStopBits
	}
	return m, nil
}

func openSerialPort(cfg SerialConfig, mode *serial.Mode) (port, error) {
	if cfg.RS485 {
		if err := enableRS485(cfg.Device); err != nil {
			return nil, fmt.Errorf("rs485: %w", err)
		}
	}
	lock, err := lockPort(cfg.Device)
	if err != nil {
		return nil, fmt.Errorf("open %s: %w", cfg.Device, err)
	}
	p, err := serial.Open(cfg.Device, mode)
	if err != nil {
		if lock != nil {
			lock.Close()
		}
		return nil, explainOpen(cfg.Device, err)
	}
	return &serialPort{p: p, lock: lock}, nil
}

// explainOpen adds the usual remedy to the errors people meet when opening a port.
func explainOpen(device string, err error) error {
	var pe *serial.PortError
	if errors.As(err, &pe) {
		switch pe.Code() {
		case serial.PortBusy:
			return fmt.Errorf("open %s: %w (another program holds the port)", device, err)
		case serial.PermissionDenied:
			return fmt.Errorf("open %s: %w (add the user to the port's group, often dialout)", device, err)
		}
	}
	return fmt.Errorf("open %s: %w", device, err)
}

type serialPort struct {
	p    serial.Port
	lock *os.File      // holds the advisory lock on the device; nil where there is none
	wait time.Duration // the read timeout last set
}

func (s *serialPort) Write(b []byte) (int, error) { return s.p.Write(b) }
func (s *serialPort) Close() error {
	err := s.p.Close()
	if s.lock != nil {
		err = errors.Join(err, s.lock.Close())
	}
	return err
}
func (s *serialPort) discard() error { return s.p.ResetInputBuffer() }

// readSome relies on go.bug.st/serial returning (0, nil) when the read
// timeout passes with no byte; a hang-up comes back as a PortClosed error.
func (s *serialPort) readSome(buf []byte, wait time.Duration) (int, error) {
	if wait != s.wait {
		if err := s.p.SetReadTimeout(wait); err != nil {
			return 0, err
		}
		s.wait = wait
	}
	return s.p.Read(buf)
}
