package drivers

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"slices"
	"strings"
	"time"
)

// A Status is what an instrument says about its own reading.
type Status uint8

// The statuses an instrument can report. Every driver maps its protocol's
// codes onto these.
const (
	StatusOK          Status = iota // a valid reading
	StatusOverRange                 // above what the sensor can measure
	StatusUnderRange                // below what the sensor can measure
	StatusSensorFault               // broken filament, open thermocouple, diaphragm fault
	StatusOff                       // sensor switched off (an ionisation gauge's emission off)
)

var statusNames = [...]string{"ok", "over-range", "under-range", "sensor-fault", "off"}

// String returns the status as written in config files and logs.
func (s Status) String() string {
	if int(s) < len(statusNames) {
		return statusNames[s]
	}
	return fmt.Sprintf("status(%d)", s)
}

// ParseStatus parses a status name as String writes it.
func ParseStatus(name string) (Status, error) {
	if i := slices.Index(statusNames[:], name); i >= 0 {
		return Status(i), nil
	}
	return 0, fmt.Errorf("unknown status %q (known: %s)", name, strings.Join(statusNames[:], ", "))
}

// A Reading is one raw answer from an instrument, in the instrument's own
// terms: a voltage, a heat-loss signal, or a pressure in the unit the
// instrument prints. Calibration turns it into a sample in SI units.
type Reading struct {
	Raw    float64
	Status Status
	At     time.Time // the middle of the exchange
}

// A Driver reads one gauge over a link it does not own. Read returns promptly
// once ctx is done, never retries on its own, and gives a Reading{Raw, Status, At}.
// Errors are *GaugeError.
type Driver interface {
	Read(ctx context.Context) (Reading, error)
}

// A MultiDriver is a Driver whose one exchange can answer for several gauges
// (a controller that reports all its channels in one reply). ReadAll returns
// every reading of one exchange keyed by channel; the daemon runs it once per
// poll of the link and hands each gauge its channel's reading. Read returns
// the channel the driver was configured for.
type MultiDriver interface {
	Driver
	ReadAll(ctx context.Context) (map[string]Reading, error)
}

// A Link carries one request/reply exchange; serial and TCP implement it,
// so drivers hold framing and parsing only, and tests can script a Link.
// Exchange writes req (when non-empty) and reads until the byte until has
// arrived, the context is done, or the link's timeout expires.
type Link interface {
	Exchange(ctx context.Context, req []byte, until byte) ([]byte, error)
}

// ErrNoReply means the instrument did not answer within the timeout.
var ErrNoReply = errors.New("no reply")

// A GaugeError records a failed operation on one gauge.
type GaugeError struct {
	Gauge string // config name
	Op    string // "open link", "read", "parse reply"
	Err   error
}

func (e *GaugeError) Error() string { return e.Gauge + ": " + e.Op + ": " + e.Err.Error() }

// Unwrap returns the underlying error.
func (e *GaugeError) Unwrap() error { return e.Err }

// Options configure one driver for one gauge. Protocol-specific settings sit
// in the field named after the protocol; a driver reads only its own.
type Options struct {
	Gauge string           // config name, used in errors
	Now   func() time.Time // the daemon's clock; nil means time.Now
	Log   *slog.Logger     // nil means discard
	// Trace, when set, is called with every message the driver sends
	// (dir "send") and every reply it gets (dir "recv"), including the
	// partial bytes of a failed exchange; holdfast probe prints them.
	Trace func(dir string, b []byte)

	ASCII  ASCIIOptions  // driver "ascii"
	SCPI   SCPIOptions   // driver "scpi"
	Modbus ModbusOptions // driver "modbus" (see NewModbus)
}

func (o Options) now() time.Time {
	if o.Now == nil {
		return time.Now()
	}
	return o.Now()
}

// factories is the complete list of drivers that talk over a Link: adding a
// driver is one line here, never an init().
var factories = map[string]func(Link, Options) (Driver, error){
	"ascii": func(l Link, o Options) (Driver, error) { return NewASCII(l, o) },
	"scpi":  func(l Link, o Options) (Driver, error) { return NewSCPI(l, o) },
}

// Kinds lists the known driver kinds, sorted.
func Kinds() []string {
	kinds := []string{
		"sim",    // built by the daemon from drivers/sim, which owns its own link
		"modbus", // owns its transport: built with NewModbus over a ModbusLink
	}
	for k := range factories {
		kinds = append(kinds, k)
	}
	slices.Sort(kinds)
	return kinds
}

// Known reports whether kind names a driver.
func Known(kind string) bool { return slices.Contains(Kinds(), kind) }

// New builds a driver of the given kind over link.
func New(kind string, link Link, opts Options) (Driver, error) {
	f, ok := factories[kind]
	if kind == "modbus" {
		return nil, errors.New("driver modbus owns its transport: build it with NewModbus over a ModbusLink")
	}
	if !ok {
		return nil, fmt.Errorf("unknown driver %q (known: %s)", kind, strings.Join(Kinds(), ", "))
	}
	return f(link, opts)
}
