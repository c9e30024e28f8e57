package drivers

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"sync"

	"github.com/simonvetter/modbus"
)

// ModbusConfig describes the transport of a Modbus link: exactly one of RTU
// (a serial line, possibly an RS-485 bus shared by several units) or TCP.
// For RTU, stop bits left at zero follow the Modbus serial-line rule: two
// without parity, one with. The link's Timeout bounds each request.
type ModbusConfig struct {
	Name string
	RTU  *SerialConfig
	TCP  *TCPConfig
}

// Validate reports every problem with the configuration, each naming its field.
func (c ModbusConfig) Validate() error {
	switch {
	case c.RTU == nil && c.TCP == nil:
		return errors.New("modbus: give rtu (a serial device) or tcp (host:port)")
	case c.RTU != nil && c.TCP != nil:
		return errors.New("modbus: give rtu or tcp, not both")
	case c.RTU != nil:
		var errs []error
		if err := c.RTU.Validate(); err != nil {
			errs = append(errs, fmt.Errorf("rtu: %w", err))
		}
		if c.RTU.Parity == "mark" || c.RTU.Parity == "space" {
			errs = append(errs, fmt.Errorf("rtu.parity: modbus rtu takes none, even or odd, got %q", c.RTU.Parity))
		}
		return errors.Join(errs...)
	}
	if err := c.TCP.Validate(); err != nil {
		return fmt.Errorf("tcp: %w", err)
	}
	return nil
}

// A ModbusLink owns one Modbus client (github.com/simonvetter/modbus), which
// opens its serial device or TCP connection itself. Requests run one at a
// time; each gauge's driver names its unit. Like StreamLink, a link whose
// transport fails is closed and reopened with capped backoff, and Stats feeds
// the daemon's metrics. A request cannot be interrupted once sent: a
// cancelled context is seen before the request and bounds the wait for the
// next, so a read returns at most the link timeout after cancellation.
type ModbusLink struct {
	name        string
	conf        modbus.ClientConfiguration
	reopenAfter int
	rs485       bool

	mu     sync.Mutex
	client *modbus.ModbusClient
	reconnector
}

// OpenModbus builds a ModbusLink. As with OpenSerial, only a configuration
// problem is an error; a device or endpoint that is not there yet is
// retried on later requests.
func OpenModbus(cfg ModbusConfig, logger *slog.Logger) (*ModbusLink, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	if logger == nil {
		logger = slog.New(slog.DiscardHandler)
	}
	l := &ModbusLink{name: cfg.Name}
	if cfg.RTU != nil {
		l.configureRTU(*cfg.RTU)
	} else {
		t := *cfg.TCP
		if t.Timeout <= 0 {
			t.Timeout = DefaultTimeout
		}
		l.target, l.backoff, l.reopenAfter = t.Address, t.Backoff.withDefaults(), tcpSilentLimit
		l.conf = modbus.ClientConfiguration{URL: "tcp://" + t.Address, Timeout: t.Timeout}
	}
	l.log = logger.With("link", cfg.Name, "device", l.target)
	// The library logs through a *log.Logger (to stdout when nil): route it to ours, quietly.
	l.conf.Logger = slog.NewLogLogger(l.log.Handler(), slog.LevelDebug)
	l.conf.Logger.SetFlags(0)
	l.mu.Lock()
	_ = l.reopen()
	l.mu.Unlock()
	return l, nil
}

func (l *ModbusLink) configureRTU(s SerialConfig) {
	stop := s.StopBits
	s = s.withDefaults()
	if stop == 0 && s.Parity == "none" {
		s.StopBits = 2 // Modbus over serial line: two stop bits without parity
	}
	parity := map[string]uint{"none": modbus.PARITY_NONE, "even": modbus.PARITY_EVEN, "odd": modbus.PARITY_ODD}[s.Parity]
	l.target, l.backoff, l.rs485 = s.Device, s.Backoff, s.RS485
	l.conf = modbus.ClientConfiguration{URL: "rtu://" + s.Device, Speed: uint(s.Baud),
		DataBits: uint(s.DataBits), Parity: parity, StopBits: uint(s.StopBits), Timeout: s.Timeout}
}

// Name returns the link's config name.
func (l *ModbusLink) Name() string { return l.name }

// Close closes the transport; a later request reopens it.
func (l *ModbusLink) Close() error {
	l.mu.Lock()
	defer l.mu.Unlock()
	if l.client == nil {
		return nil
	}
	err := l.client.Close()
	l.client = nil
	l.updateStats(func(s *LinkStats) { s.Up = false })
	return err
}

// do runs one request for unit on the open client, reopening it first when
// due, and sorts the outcome: an exception or a garbled frame leaves the link
// up; a transport error takes it down.
func (l *ModbusLink) do(ctx context.Context, unit uint8, req func(*modbus.ModbusClient) error) error {
	l.mu.Lock()
	defer l.mu.Unlock()
	if err := ctx.Err(); err != nil {
		return err
	}
	if l.client == nil {
		if err := l.reopen(); err != nil {
			return err
		}
	}
	if err := l.client.SetUnitId(unit); err != nil {
		return err
	}
	err := req(l.client)
	switch {
	case err == nil:
		l.silent = 0
		return nil
	case errors.Is(err, modbus.ErrRequestTimedOut):
		l.silent++
		l.updateStats(func(s *LinkStats) { s.Timeouts++ })
		err = fmt.Errorf("%s: unit %d: %w (%w)", l.target, unit, ErrNoReply, err)
		if l.reopenAfter > 0 && l.silent >= l.reopenAfter {
			return l.fail(err)
		}
		return err
	case isModbusAnswer(err):
		l.silent = 0
		return fmt.Errorf("%s: unit %d: %w", l.target, unit, err)
	}
	return l.fail(err)
}

// isModbusAnswer reports errors that show the transport works: the unit
// answered with an exception, or a frame arrived damaged.
func isModbusAnswer(err error) bool {
	var me modbus.Error
	if !errors.As(err, &me) {
		return false
	}
	return me != modbus.ErrConfigurationError
}
