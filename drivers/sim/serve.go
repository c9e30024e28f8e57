package sim

import (
	"context"
	"errors"
	"fmt"
	"log/slog"
	"math"
	"strconv"
	"time"

	"holdfast/calib"
	"holdfast/drivers"
)

// ServeOptions say how a Server presents its instruments on a serial line.
type ServeOptions struct {
	// Address, when set, puts the server on an RS-485-style bus: ASCII
	// requests must carry it ("TO 03 READ 1") and replies repeat it
	// ("FROM 03 CH1 ..."); requests for other addresses get no answer. 1 to
	// 8 letters or digits.
	Address string
	// Checksum makes every ASCII request and reply end in an exclusive-or
	// checksum, " ~HH" (see ServeASCII); a request without a good one is
	// refused.
	Checksum bool
	// Unit is the unit pressures are printed and served in; the zero Unit
	// means Pa. Temperatures are always in °C.
	Unit calib.Unit
	// Wait bounds how long one instrument read may take before the channel
	// is taken as silent; 0 means 100 ms.
	Wait time.Duration
	Log  *slog.Logger // nil means discard
}

// A Server plays a simulated controller on a serial line: its channels,
// numbered from 1, are the instruments it was given, in that order. It
// speaks an ASCII question-and-answer protocol (ServeASCII) or Modbus RTU
// (ServeRTU). A Server is safe for concurrent use.
type Server struct {
	ins  []*Instrument
	opts ServeOptions
	log  *slog.Logger
}

// A ServedChannel describes one channel of a Server.
type ServedChannel struct {
	Number int    // 1-based, as requests name it
	Name   string // the instrument's name
	Kind   string // the instrument's kind (pirani, cdg, ion, thermocouple)
	Unit   string // what its values are in: the pressure unit, or "C"
}

// defaultServeWait bounds an instrument read while serving.
const defaultServeWait = 100 * time.Millisecond

// NewServer builds a server for the instruments ins. The error lists every
// problem with the arguments.
func NewServer(ins []*Instrument, opts ServeOptions) (*Server, error) {
	var errs []error
	if len(ins) == 0 {
		errs = append(errs, errors.New("instruments: none to serve; give the simulator link at least one gauge with driver sim"))
	}
	for i, in := range ins {
		if in == nil {
			errs = append(errs, fmt.Errorf("instruments[%d]: nil", i))
		}
	}
	if err := checkAddress(opts.Address); err != nil {
		errs = append(errs, fmt.Errorf("address: %w", err))
	}
	if opts.Unit == (calib.Unit{}) {
		opts.Unit = calib.Pressure.Base()
	} else if opts.Unit.Dim != calib.Pressure {
		errs = append(errs, fmt.Errorf("unit: %s is not a pressure unit (try Pa, mbar or Torr)", opts.Unit))
	}
	if opts.Wait < 0 {
		errs = append(errs, fmt.Errorf("wait: must not be negative, got %s", opts.Wait))
	} else if opts.Wait == 0 {
		opts.Wait = defaultServeWait
	}
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	log := opts.Log
	if log == nil {
		log = slog.New(slog.DiscardHandler)
	}
	return &Server{ins: ins, opts: opts, log: log}, nil
}

func checkAddress(a string) error {
	if len(a) > 8 {
		return fmt.Errorf("at most 8 characters, got %q", a)
	}
	for _, c := range []byte(a) {
		if !('0' <= c && c <= '9' || 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z') {
			return fmt.Errorf("letters and digits only, got %q", a)
		}
	}
	return nil
}

// Channels describes the served channels in order.
func (s *Server) Channels() []ServedChannel {
	out := make([]ServedChannel, len(s.ins))
	for i, in := range s.ins {
		out[i] = ServedChannel{Number: i + 1, Name: in.name, Kind: in.kind, Unit: s.unitOf(in)}
	}
	return out
}

func (s *Server) unitOf(in *Instrument) string {
	if in.kind == KindThermocouple || in.kind == KindRTD {
		return "C"
	}
	return s.opts.Unit.String()
}

// A shown reading is a channel's reading as the controller shows it: the
// value in the served unit (NaN when the instrument gives no number) and
// the status. silent means the instrument did not answer.
type shown struct {
	value  float64
	status drivers.Status
	silent bool
	digits int
}

// show reads channel n (1-based, in range) and converts it for display.
func (s *Server) show(n int) shown {
	in := s.ins[n-1]
	if in.silentNow() {
		return shown{silent: true}
	}
	ctx, cancel := context.WithTimeout(context.Background(), s.opts.Wait)
	defer cancel()
	r, err := in.Read(ctx)
	if err != nil {
		s.log.Debug("instrument did not answer", "gauge", in.name, "err", err)
		return shown{silent: true}
	}
	v := s.convert(in, r)
	return shown{value: v, status: r.Status, digits: in.digits}
}

// convert turns a raw reading into the served unit: through the
// instrument's transfer for a pressure, as is for a temperature. A
// sensor-fault or off reading, or a raw value outside the transfer's range,
// has no number.
func (s *Server) convert(in *Instrument, r drivers.Reading) float64 {
	if r.Status == drivers.StatusSensorFault || r.Status == drivers.StatusOff || math.IsNaN(r.Raw) {
		return math.NaN()
	}
	if in.kind == KindThermocouple && in.probe == "" {
		return r.Raw
	}
	if in.kind == KindThermocouple || in.kind == KindRTD { // shown in °C, as a meter would
		c, err := in.xfer.Apply(r.Raw)
		if err != nil {
			return math.NaN()
		}
		return c
	}
	pa, err := in.xfer.Apply(r.Raw)
	if err != nil {
		return math.NaN()
	}
	return s.opts.Unit.FromSI(pa)
}

// silentNow reports whether the instrument is failed silent right now.
func (in *Instrument) silentNow() bool {
	_, mode := in.ch.observe(in.name)
	return mode == ModeSilent
}

// noNumber is what the ASCII protocol prints in place of a missing value.
const noNumber = "none"

// formatValue prints v with digits significant digits in E notation, as
// a controller's display does: 1.23E-04, -5.0E-01, 2.20E+01.
func formatValue(v float64, digits int) string {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return noNumber
	}
	if digits < 1 {
		digits = 3
	}
	return strconv.FormatFloat(v, 'E', digits-1, 64)
}
