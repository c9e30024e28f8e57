package drivers

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
)

// SCPIOptions configure the "scpi" driver, which reads a multimeter or data
// acquisition unit measuring a gauge's analogue output (calib's transfer
// functions then turn volts into pressure).
//
// Query is sent as written plus Terminator (default "\n"; escapes as in
// Unescape), for instance "MEAS:VOLT:DC? (@101)". The reply is one or more
// IEEE 488.2 numbers separated by commas, such as "+5.50123400E+00". SCPI's
// special values are mapped: +9.9E37 (overload, positive infinity) to
// over-range, -9.9E37 to under-range, 9.91E37 (not a number) to
// sensor-fault. When the query scans several channels, Channels names the
// values in order (default "1", "2", ...), ReadAll returns them all and Read
// returns the one named by Channel (default the first).
type SCPIOptions struct {
	Query      string
	Terminator string
	Channels   []string
	Channel    string
}

// The values SCPI instruments return in place of a number (SCPI-99 vol. 1,
// 7.2.1.5: INFinity 9.9E37, NINF -9.9E37, NAN 9.91E37; from memory).
const (
	scpiInf = 9.9e37
	scpiNaN = 9.91e37
)

// SCPI is the "scpi" driver. It implements MultiDriver.
type SCPI struct {
	link  Link
	opts  Options
	query []byte
	until byte
}

// Validate reports every problem with the options, each naming its field.
func (o SCPIOptions) Validate() error {
	_, _, err := o.compile()
	return err
}

func (o SCPIOptions) compile() (query []byte, until byte, err error) {
	var errs []error
	q, qerr := Unescape(o.Query)
	switch {
	case qerr != nil:
		errs = append(errs, fmt.Errorf("query: %w", qerr))
	case len(bytes.TrimSpace(q)) == 0:
		errs = append(errs, errors.New(`query: missing; give the instrument's query, e.g. "MEAS:VOLT:DC?"`))
	}
	term := []byte("\n")
	if o.Terminator != "" {
		t, terr := Unescape(o.Terminator)
		if terr != nil || len(t) != 1 {
			errs = append(errs, fmt.Errorf(`terminator: want exactly one byte such as "\n", got %q`, o.Terminator))
		} else {
			term = t
		}
	}
	if o.Channel != "" && len(o.Channels) > 0 && !slices.Contains(o.Channels, o.Channel) {
		errs = append(errs, fmt.Errorf("channel: %q is not among channels %q", o.Channel, o.Channels))
	}
	if err := errors.Join(errs...); err != nil {
		return nil, 0, err
	}
	return append(q, term...), term[0], nil
}

// NewSCPI checks opts.SCPI and builds the driver.
func NewSCPI(link Link, opts Options) (*SCPI, error) {
	if link == nil {
		return nil, errors.New("scpi driver needs a link")
	}
	q, until, err := opts.SCPI.compile()
	if err != nil {
		return nil, err
	}
	return &SCPI{link: link, opts: opts, query: q, until: until}, nil
}

// Read returns the configured channel's reading.
func (d *SCPI) Read(ctx context.Context) (Reading, error) {
	all, keys, err := d.read(ctx)
	if err != nil {
		return Reading{}, err
	}
	want := d.opts.SCPI.Channel
	if want == "" {
		want = keys[0]
	}
	r, ok := all[want]
	if !ok {
		return Reading{}, d.fail("parse reply", fmt.Errorf("reply has no channel %q (it has %q)", want, keys))
	}
	return r, nil
}

// ReadAll returns every value of one reply, keyed by channel.
func (d *SCPI) ReadAll(ctx context.Context) (map[string]Reading, error) {
	all, _, err := d.read(ctx)
	return all, err
}

func (d *SCPI) fail(op string, err error) error {
	return &GaugeError{Gauge: d.opts.Gauge, Op: op, Err: err}
}

func (d *SCPI) read(ctx context.Context) (map[string]Reading, []string, error) {
	start := d.opts.now()
	if d.opts.Trace != nil {
		d.opts.Trace("send", bytes.Clone(d.query))
	}
	reply, err := d.link.Exchange(ctx, d.query, d.until)
	if d.opts.Trace != nil && len(reply) > 0 {
		d.opts.Trace("recv", bytes.Clone(reply))
	}
	if err != nil {
		return nil, nil, d.fail("read", err)
	}
	end := d.opts.now()
	at := start.Add(end.Sub(start) / 2)
	fields := strings.Split(strings.TrimSpace(string(reply)), ",")
	names := d.opts.SCPI.Channels
	if len(names) > 0 && len(names) != len(fields) {
		return nil, nil, d.fail("parse reply", fmt.Errorf("reply %q has %d values, channels names %d", reply, len(fields), len(names)))
	}
	all := make(map[string]Reading, len(fields))
	keys := make([]string, len(fields))
	for i, f := range fields {
		r, err := ParseSCPINumber(f)
		if err != nil {
			return nil, nil, d.fail("parse reply", fmt.Errorf("reply %q, value %d: %w", reply, i+1, err))
		}
		r.At = at
		keys[i] = strconv.Itoa(i + 1)
		if len(names) > 0 {
			keys[i] = names[i]
		}
		all[keys[i]] = r
	}
	return all, keys, nil
}

// ParseSCPINumber reads one IEEE 488.2 numeric reply field and maps SCPI's
// infinity and not-a-number values to statuses (the Raw of such a reading
// is NaN).
func ParseSCPINumber(s string) (Reading, error) {
	v, err := ParseNumber(s)
	if err != nil {
		return Reading{}, err
	}
	switch a := math.Abs(v); {
	case a >= scpiNaN*(1-1e-4) && a <= scpiNaN*(1+1e-4):
		return Reading{Raw: math.NaN(), Status: StatusSensorFault}, nil
	case a >= scpiInf*(1-1e-4) && v > 0:
		return Reading{Raw: math.NaN(), Status: StatusOverRange}, nil
	case a >= scpiInf*(1-1e-4):
		return Reading{Raw: math.NaN(), Status: StatusUnderRange}, nil
	}
	return Reading{Raw: v, Status: StatusOK}, nil
}
