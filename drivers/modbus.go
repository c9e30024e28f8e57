package drivers

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/simonvetter/modbus"
)

// ModbusOptions configure the "modbus" driver for one gauge: which unit,
// table and address to read and how to turn it into a number.
//
// Table is holding (function 3), input (function 4), coil (function 1) or
// discrete (function 2). Address is the 0-based address on the wire: a
// manual's register "40001" or "30001" is address 0 of the holding or input
// table. Registers hold Type (int16, uint16, int32, uint32 or float32; 32-bit
// types span two registers, WordOrder "high-first" (default) or "low-first").
// The reading is value·Scale + Offset (Scale 0 means 1), in the instrument's
// unit; the gauge's transfer function or calibration goes from there.
// Coils and discrete inputs read as 1 (on) or 0 (off), Invert swapping them,
// for digital states such as a valve-closed switch.
//
// StatusRegister, when set, is a register of the same table holding the
// instrument's status code, read in the same poll; Status maps its decimal
// code to ok, over-range, under-range, sensor-fault or off (a code missing
// from the map is an error naming it). Without a status register a value
// that decodes as NaN reads as sensor-fault, never as an ok NaN.
type ModbusOptions struct {
	Unit           uint8 // 1..247 on a serial bus; 0 means 1
	Table          string
	Address        uint16
	Type           string
	WordOrder      string
	Scale          float64
	Offset         float64
	Invert         bool
	StatusRegister *uint16
	Status         map[string]Status
}

// Validate reports every problem with the options, each naming its field.
func (o ModbusOptions) Validate() error {
	var errs []error
	if !validTable(o.Table) {
		errs = append(errs, fmt.Errorf("table: unknown table %q (known: %s)", o.Table, strings.Join(modbusTables, ", ")))
	}
	if isBitTable(o.Table) {
		if o.Type != "" {
			errs = append(errs, fmt.Errorf("type: %s reads one bit; remove type %q", o.Table, o.Type))
		}
	} else if validTable(o.Table) {
		if _, err := registerCount(o.Type); err != nil {
			errs = append(errs, fmt.Errorf("type: %w", err))
		}
		if o.Invert {
			errs = append(errs, errors.New("invert: only for coil and discrete tables"))
		}
	}
	if o.WordOrder != "" && o.WordOrder != "high-first" && o.WordOrder != "low-first" {
		errs = append(errs, fmt.Errorf("word_order: want high-first or low-first, got %q", o.WordOrder))
	}
	if o.Unit > 247 {
		errs = append(errs, fmt.Errorf("unit: serial-line units are 1..247, got %d", o.Unit))
	}
	if o.StatusRegister != nil && isBitTable(o.Table) {
		errs = append(errs, fmt.Errorf("status_register: a %s has no status register", o.Table))
	}
	if o.StatusRegister != nil && len(o.Status) == 0 {
		errs = append(errs, errors.New(`status: map the status register's codes, e.g. status: {"1": ok, "2": under-range, "4": over-range, "8": sensor-fault}`))
	}
	return errors.Join(errs...)
}

// Modbus is the "modbus" driver: one gauge's value on a ModbusLink.
type Modbus struct {
	link  *ModbusLink
	opts  Options
	mo    ModbusOptions
	count uint16
}

// NewModbus checks opts.Modbus and builds the driver over link.
func NewModbus(link *ModbusLink, opts Options) (*Modbus, error) {
	if link == nil {
		return nil, errors.New("modbus driver needs a modbus link")
	}
	mo := opts.Modbus
	if err := mo.Validate(); err != nil {
		return nil, err
	}
	if mo.Unit == 0 {
		mo.Unit = 1
	}
	if mo.Scale == 0 {
		mo.Scale = 1
	}
	count := uint16(1)
	if !isBitTable(mo.Table) {
		count, _ = registerCount(mo.Type)
	}
	return &Modbus{link: link, opts: opts, mo: mo, count: count}, nil
}

// Read reads the configured coil, input or registers once.
func (d *Modbus) Read(ctx context.Context) (Reading, error) {
	start := d.opts.now()
	d.tracePDU("send", d.requestPDU())
	var v float64
	var code uint16
	err := d.link.do(ctx, d.mo.Unit, func(c *modbus.ModbusClient) error {
		var err error
		if v, err = d.readValue(c); err != nil || d.mo.StatusRegister == nil {
			return err
		}
		code, err = c.ReadRegister(*d.mo.StatusRegister, d.registerKind())
		return err
	})
	if err != nil {
		return Reading{}, &GaugeError{Gauge: d.opts.Gauge, Op: "read", Err: err}
	}
	end := d.opts.now()
	r := Reading{Raw: v*d.mo.Scale + d.mo.Offset, Status: StatusOK, At: start.Add(end.Sub(start) / 2)}
	switch {
	case d.mo.StatusRegister != nil:
		st, ok := d.mo.Status[strconv.Itoa(int(code))]
		if !ok {
			return Reading{}, &GaugeError{Gauge: d.opts.Gauge, Op: "parse reply",
				Err: fmt.Errorf("status register %d holds code %d, which status does not map", *d.mo.StatusRegister, code)}
		}
		r.Status = st
	case math.IsNaN(r.Raw):
		r.Status = StatusSensorFault
	}
	return r, nil
}

func (d *Modbus) registerKind() modbus.RegType {
	if d.mo.Table == "input" {
		return modbus.INPUT_REGISTER
	}
	return modbus.HOLDING_REGISTER
}

func (d *Modbus) readValue(c *modbus.ModbusClient) (float64, error) {
	switch d.mo.Table {
	case "coil", "discrete":
		var bits []bool
		var err error
		if d.mo.Table == "coil" {
			bits, err = c.ReadCoils(d.mo.Address, 1)
		} else {
			bits, err = c.ReadDiscreteInputs(d.mo.Address, 1)
		}
		if err != nil {
			return 0, err
		}
		d.traceBits(bits)
		if bits[0] != d.mo.Invert {
			return 1, nil
		}
		return 0, nil
	}
	regs, err := c.ReadRegisters(d.mo.Address, d.count, d.registerKind())
	if err != nil {
		return 0, err
	}
	d.traceRegs(regs)
	v, err := DecodeRegisters(regs, d.mo.Type, d.mo.WordOrder == "low-first")
	if errors.Is(err, errNotMeasurement) {
		return math.NaN(), nil // read as a sensor fault unless a status register says otherwise
	}
	if err != nil {
		return 0, fmt.Errorf("decode: %w", err)
	}
	return v, nil
}
