package config

import (
	"fmt"
	"strings"

	"holdfast/calib"
	"holdfast/drivers"
)

// SerialLinkConfig is a serial line (RS-232, or RS-485 through an adapter).
type SerialLinkConfig struct {
	Device    string           `yaml:"device"` // prefer /dev/serial/by-id/..., which survives replugging
	Baud      int              `yaml:"baud"`   // default 9600
	DataBits  int              `yaml:"data_bits"`
	Parity    string           `yaml:"parity"` // none, even, odd, mark, space
	StopBits  int              `yaml:"stop_bits"`
	RS485     bool             `yaml:"rs485"`
	Timeout   Duration         `yaml:"timeout"` // per exchange
	Reconnect *ReconnectConfig `yaml:"reconnect"`
}

// TCPLinkConfig is a TCP endpoint (a serial-to-Ethernet converter, a DAQ).
type TCPLinkConfig struct {
	Address   string           `yaml:"address"` // host:port
	Timeout   Duration         `yaml:"timeout"`
	Reconnect *ReconnectConfig `yaml:"reconnect"`
}

// ReconnectConfig bounds the capped exponential backoff of a failed link.
type ReconnectConfig struct {
	Min Duration `yaml:"min"`
	Max Duration `yaml:"max"`
}

// StepConfig is one send/expect step of an ASCII exchange.
type StepConfig struct {
	Send    string   `yaml:"send"`
	Expect  string   `yaml:"expect"`
	Until   string   `yaml:"until"`
	Wait    Duration `yaml:"wait"`
	Timeout Duration `yaml:"timeout"`
	Gauge   string   `yaml:"gauge"`
}

// ChecksumConfig is the checksum an ASCII exchange carries.
type ChecksumConfig struct {
	Kind string `yaml:"kind"` // sum8, xor8, crc16-modbus
	Form string `yaml:"form"` // hex or raw
	Skip int    `yaml:"skip"` // leading bytes not covered
}

// ModbusGaugeConfig says where a gauge's value sits in a Modbus device.
type ModbusGaugeConfig struct {
	Unit      uint8   `yaml:"unit"`
	Table     string  `yaml:"table"` // holding, input, coil, discrete
	Address   uint16  `yaml:"address"`
	Type      string  `yaml:"type"`       // int16, uint16, int32, uint32, float32
	WordOrder string  `yaml:"word_order"` // high-first, low-first
	Scale     float64 `yaml:"scale"`
	Offset    float64 `yaml:"offset"`
	Invert    bool    `yaml:"invert"`
	// StatusRegister holds the instrument's status code, mapped by the
	// gauge's status: key.
	StatusRegister *uint16 `yaml:"status_register"`
}

// TransferConfig maps an analogue output (volts) to pressure. Exactly one
// of log_linear, linear and table is set.
type TransferConfig struct {
	LogLinear *struct {
		VoltsPerDecade float64 `yaml:"volts_per_decade"`
		OffsetVolts    float64 `yaml:"offset_volts"` // the voltage at 1 unit
		Unit           string  `yaml:"unit"`
	} `yaml:"log_linear"`
	Linear *struct {
		ZeroVolts      float64  `yaml:"zero_volts"`
		FullScaleVolts float64  `yaml:"full_scale_volts"`
		FullScale      Pressure `yaml:"full_scale"`
	} `yaml:"linear"`
	Table *struct {
		Volts     []float64 `yaml:"volts"`
		Pressures []float64 `yaml:"pressures"`
		Unit      string    `yaml:"unit"`
	} `yaml:"table"`
	ValidVolts  []float64 `yaml:"valid_volts"`  // [min, max]
	BelowWindow string    `yaml:"below_window"` // what a signal below means; default sensor-fault
	AboveWindow string    `yaml:"above_window"` // default over-range
}

func (c *SerialLinkConfig) Driver(name string) drivers.SerialConfig {
	return drivers.SerialConfig{Name: name, Device: c.Device, Baud: c.Baud, DataBits: c.DataBits, Parity: c.Parity,
		StopBits: c.StopBits, RS485: c.RS485, Timeout: c.Timeout.D(), Backoff: c.Reconnect.backoff()}
}

func (c *TCPLinkConfig) Driver(name string) drivers.TCPConfig {
	return drivers.TCPConfig{Name: name, Address: c.Address, Timeout: c.Timeout.D(), Backoff: c.Reconnect.backoff()}
}

func (r *ReconnectConfig) backoff() drivers.Backoff {
	if r == nil {
		return drivers.Backoff{}
	}
	return drivers.Backoff{Min: r.Min.D(), Max: r.Max.D()}
}

// linkKinds lists which kinds a link config sets.
func linkKinds(l *LinkConfig) []string {
	var k []string
	for _, c := range []struct {
		set  bool
		name string
	}{{l.Simulator != nil, "simulator"}, {l.Serial != nil, "serial"}, {l.TCP != nil, "tcp"},
		{l.ModbusRTU != nil, "modbus_rtu"}, {l.ModbusTCP != nil, "modbus_tcp"}} {
		if c.set {
			k = append(k, c.name)
		}
	}
	return k
}

func (l *LinkConfig) IsModbus() bool { return l.ModbusRTU != nil || l.ModbusTCP != nil }

// driverOptions maps a gauge's protocol keys to the drivers' options.
func DriverOptions(name string, g *GaugeConfig) (drivers.Options, error) {
	o := drivers.Options{Gauge: name}
	var errs []string
	switch g.Driver {
	case "ascii":
		o.ASCII = drivers.ASCIIOptions{Address: g.Address, Channel: g.Channel}
		for _, s := range g.Exchange {
			if s == nil {
				continue
			}
			o.ASCII.Steps = append(o.ASCII.Steps, drivers.Step{Send: s.Send, Expect: s.Expect, Until: s.Until,
				Wait: s.Wait.D(), Timeout: s.Timeout.D(), Gauge: s.Gauge})
		}
		if g.Checksum != nil {
			o.ASCII.Checksum = &drivers.Checksum{Kind: g.Checksum.Kind, Form: g.Checksum.Form, Skip: g.Checksum.Skip}
		}
		o.ASCII.Status, errs = statusMap(g.Status, errs)
		if err := o.ASCII.Validate(); err != nil {
			errs = append(errs, strings.Split(err.Error(), "\n")...)
		}
	case "scpi":
		o.SCPI = drivers.SCPIOptions{Query: g.Query, Terminator: g.Terminator, Channels: g.Channels, Channel: g.Channel}
		if err := o.SCPI.Validate(); err != nil {
			errs = append(errs, strings.Split(err.Error(), "\n")...)
		}
	case "modbus":
		if g.Modbus == nil {
			errs = append(errs, "modbus: say where the value is, e.g. modbus: {table: input, address: 0, type: float32}")
			break
		}
		m := g.Modbus
		o.Modbus = drivers.ModbusOptions{Unit: m.Unit, Table: m.Table, Address: m.Address, Type: m.Type,
			WordOrder: m.WordOrder, Scale: m.Scale, Offset: m.Offset, Invert: m.Invert, StatusRegister: m.StatusRegister}
		if len(g.Status) > 0 {
			o.Modbus.Status, errs = statusMap(g.Status, errs)
		}
		if err := o.Modbus.Validate(); err != nil {
			for _, e := range strings.Split(err.Error(), "\n") {
				errs = append(errs, "modbus."+e)
			}
		}
	}
	if len(errs) > 0 {
		return o, fieldErrors(errs)
	}
	return o, nil
}

// statusMap parses a gauge's status: codes, appending a problem per bad name.
func statusMap(codes map[string]string, errs []string) (map[string]drivers.Status, []string) {
	m := make(map[string]drivers.Status, len(codes))
	for code, name := range codes {
		s, err := drivers.ParseStatus(name)
		if err != nil {
			errs = append(errs, fmt.Sprintf("status.%s: %v", code, err))
		}
		m[code] = s
	}
	return m, errs
}

// fieldErrors carries problems that each begin with the field they name.
type fieldErrors []string

func (e fieldErrors) Error() string { return strings.Join(e, "\n") }

// transfer builds the gauge's mapping from raw to SI: an analogue transfer
// function, a unit conversion (raw_unit), or the identity.
func GaugeTransfer(g *GaugeConfig) (calib.Transfer, error) {
	dim := GaugeDim(g.Kind)
	if g.Probe != nil {
		return ProbeTransfer(g.Probe)
	}
	if g.Transfer != nil {
		return analogue(g.Transfer)
	}
	if g.RawUnit == "" {
		return calib.Identity{}, nil
	}
	u, err := calib.ParseUnit(g.RawUnit, dim)
	if err != nil {
		return nil, fmt.Errorf("raw_unit: %w", err)
	}
	return unitTransfer{u}, nil
}

// unitTransfer converts an instrument that prints in a non-SI unit.
type unitTransfer struct{ u calib.Unit }

func (t unitTransfer) Apply(raw float64) (float64, error) { return t.u.ToSI(raw), nil }

func analogue(t *TransferConfig) (calib.Transfer, error) {
	var win calib.Window
	var errs []string
	if len(t.ValidVolts) != 0 {
		if len(t.ValidVolts) != 2 {
			errs = append(errs, fmt.Sprintf("valid_volts: want [min, max], got %d numbers", len(t.ValidVolts)))
		} else {
			win.Min, win.Max = t.ValidVolts[0], t.ValidVolts[1]
		}
	}
	for _, side := range []struct {
		key, v string
		q      *calib.Quality
	}{{"below_window", t.BelowWindow, &win.Below}, {"above_window", t.AboveWindow, &win.Above}} {
		if side.v == "" {
			continue
		}
		s, err := drivers.ParseStatus(side.v)
		if err != nil || s == drivers.StatusOK || s == drivers.StatusOff {
			errs = append(errs, fmt.Sprintf("%s: want under-range, over-range or sensor-fault, got %q", side.key, side.v))
			continue
		}
		*side.q = map[drivers.Status]calib.Quality{drivers.StatusOverRange: calib.QualityOverRange,
			drivers.StatusUnderRange: calib.QualityUnderRange, drivers.StatusSensorFault: calib.QualitySensorFault}[s]
	}
	n := 0
	var tr calib.Transfer
	unit := func(key, name string) calib.Unit {
		if name == "" {
			name = "Pa"
		}
		u, err := calib.ParseUnit(name, calib.Pressure)
		if err != nil {
			errs = append(errs, key+".unit: "+err.Error())
		}
		return u
	}
	if l := t.LogLinear; l != nil {
		n++
		ll := calib.LogLinear{VoltsPerDecade: l.VoltsPerDecade, OffsetVolts: l.OffsetVolts, Unit: unit("log_linear", l.Unit), Window: win}
		if err := ll.Validate(); err != nil {
			errs = append(errs, prefixed("log_linear.", err)...)
		}
		tr = ll
	}
	if l := t.Linear; l != nil {
		n++
		pa, _ := calib.ParseUnit("Pa", calib.Pressure)
		li := calib.Linear{ZeroVolts: l.ZeroVolts, FullScaleVolts: l.FullScaleVolts, FullScale: float64(l.FullScale), Unit: pa, Window: win}
		if err := li.Validate(); err != nil {
			errs = append(errs, prefixed("linear.", err)...)
		}
		tr = li
	}
	if tb := t.Table; tb != nil {
		n++
		tt, err := calib.NewTable(tb.Volts, tb.Pressures, unit("table", tb.Unit), win)
		if err != nil {
			errs = append(errs, prefixed("table.", err)...)
		}
		tr = tt
	}
	if n != 1 {
		errs = append(errs, fmt.Sprintf("want exactly one of log_linear, linear or table, got %d", n))
	}
	if len(errs) > 0 {
		return nil, fieldErrors(errs)
	}
	return tr, nil
}

func prefixed(prefix string, err error) []string {
	var out []string
	for _, e := range strings.Split(err.Error(), "\n") {
		if strings.HasPrefix(e, "valid_volts") {
			out = append(out, e)
			continue
		}
		out = append(out, prefix+e)
	}
	return out
}

// HardwareLinks lists the links of cfg that reach real hardware (anything
// but a simulator), sorted.
func HardwareLinks(cfg *Config) []string {
	var out []string
	for _, name := range sortedKeys(cfg.Links) {
		if l := cfg.Links[name]; l != nil && l.Simulator == nil {
			out = append(out, name)
		}
	}
	return out
}
