package drivers

import (
	"errors"
	"fmt"
	"net"
	"slices"
	"strings"
	"time"
)

// Defaults the link constructors fill in for zero fields.
const (
	DefaultTimeout    = 500 * time.Millisecond // per exchange
	DefaultMinBackoff = 100 * time.Millisecond // first wait before reopening a failed link
	DefaultMaxBackoff = 1600 * time.Millisecond
	maxReply          = 4096 // bytes accepted without a terminator before a reply is refused
)

// Backoff sets how a failed link is reopened: the first attempt waits Min,
// each failed attempt doubles the wait, up to Max. Zero fields take
// DefaultMinBackoff and DefaultMaxBackoff. The cap is kept short on purpose:
// reopening a missing device path costs one failed open, and a short cap
// means a replugged adapter is back within about two seconds.
type Backoff struct {
	Min, Max time.Duration
}

func (b Backoff) withDefaults() Backoff {
	if b.Min <= 0 {
		b.Min = DefaultMinBackoff
	}
	if b.Max <= 0 {
		b.Max = DefaultMaxBackoff
	}
	return b
}

func (b Backoff) validate(path string) error {
	var errs []error
	if b.Min < 0 {
		errs = append(errs, fmt.Errorf("%s.min: must not be negative, got %s", path, b.Min))
	}
	if b.Max < 0 {
		errs = append(errs, fmt.Errorf("%s.max: must not be negative, got %s", path, b.Max))
	}
	if b.Min > 0 && b.Max > 0 && b.Min > b.Max {
		errs = append(errs, fmt.Errorf("%s: min %s is above max %s", path, b.Min, b.Max))
	}
	return errors.Join(errs...)
}

// SerialConfig describes one serial line. Zero values mean 9600 baud, 8 data
// bits, no parity, 1 stop bit, DefaultTimeout.
type SerialConfig struct {
	Name     string // the link's config name, used in logs and errors
	Device   string // a path; prefer /dev/serial/by-id/..., which survives replugging
	Baud     int
	DataBits int    // 5..8
	Parity   string // none, even, odd, mark or space
	StopBits int    // 1 or 2
	// RS485 asks the kernel's UART driver to switch the line to RS-485
	// (transmitter enabled by RTS while sending). USB adapters with automatic
	// direction control need nothing and should leave this false; where the
	// driver has no RS-485 mode, opening fails with a clear error.
	RS485   bool
	Timeout time.Duration // per exchange, unless the context ends sooner
	Backoff Backoff
	// Identify, when set, is run on every open before any gauge's exchange;
	// a wrong or silent instrument keeps the link down (ErrWrongInstrument).
	Identify *Identify
}

var parities = []string{"none", "even", "odd", "mark", "space"}

func (c SerialConfig) withDefaults() SerialConfig {
	if c.Baud == 0 {
		c.Baud = 9600
	}
	if c.DataBits == 0 {
		c.DataBits = 8
	}
	if c.Parity == "" {
		c.Parity = "none"
	}
	if c.StopBits == 0 {
		c.StopBits = 1
	}
	if c.Timeout == 0 {
		c.Timeout = DefaultTimeout
	}
	c.Backoff = c.Backoff.withDefaults()
	return c
}

// Validate reports every problem with the configuration, each naming its field.
func (c SerialConfig) Validate() error {
	var errs []error
	add := func(field, format string, a ...any) {
		errs = append(errs, fmt.Errorf(field+": "+format, a...))
	}
	if c.Device == "" {
		add("device", "missing: give the port's path, e.g. /dev/serial/by-id/usb-...-if00 (see holdfast ports)")
	}
	if c.Baud < 0 || c.Baud > 4_000_000 {
		add("baud", "must be between 50 and 4000000, got %d", c.Baud)
	}
	if c.DataBits != 0 && (c.DataBits < 5 || c.DataBits > 8) {
		add("data_bits", "must be 5, 6, 7 or 8, got %d", c.DataBits)
	}
	if c.Parity != "" && !slices.Contains(parities, c.Parity) {
		add("parity", "unknown parity %q (known: none, even, odd, mark, space)", c.Parity)
	}
	if c.StopBits != 0 && c.StopBits != 1 && c.StopBits != 2 {
		add("stop_bits", "must be 1 or 2, got %d", c.StopBits)
	}
	if c.Timeout < 0 {
		add("timeout", "must not be negative, got %s", c.Timeout)
	}
	errs = append(errs, c.Backoff.validate("backoff"), identifyErr(c.Identify))
	return errors.Join(errs...)
}

// TCPConfig describes one TCP endpoint: a serial-to-Ethernet converter in raw
// mode or an instrument's own socket.
type TCPConfig struct {
	Name     string // the link's config name, used in logs and errors
	Address  string // host:port
	Timeout  time.Duration
	Backoff  Backoff
	Identify *Identify // as SerialConfig.Identify
}

// Validate reports every problem with the configuration, each naming its field.
func (c TCPConfig) Validate() error {
	var errs []error
	if _, port, err := net.SplitHostPort(c.Address); err != nil {
		errs = append(errs, fmt.Errorf("address: want host:port, e.g. 127.0.0.1:5025, got %q", c.Address))
	} else if port == "" {
		errs = append(errs, fmt.Errorf("address: missing port in %q", c.Address))
	}
	if c.Timeout < 0 {
		errs = append(errs, fmt.Errorf("timeout: must not be negative, got %s", c.Timeout))
	}
	errs = append(errs, c.Backoff.validate("backoff"), identifyErr(c.Identify))
	return errors.Join(errs...)
}

// identifyErr is id's problems with each field under "identify.", or nil.
func identifyErr(id *Identify) error {
	if id == nil {
		return nil
	}
	err := id.Validate()
	if err == nil {
		return nil
	}
	var errs []error
	for _, e := range strings.Split(err.Error(), "\n") {
		errs = append(errs, errors.New("identify."+e))
	}
	return errors.Join(errs...)
}

// compileIdentify readies id to run; nil stays nil. The config was validated.
func compileIdentify(id *Identify) *identity {
	if id == nil {
		return nil
	}
	c, err := id.compile()
	if err != nil {
		return nil // unreachable after Validate
	}
	return c
}
