package config

import (
	"time"
)

// Config is one holdfast configuration file, decoded. Quantities are in SI
// (Pa, m³, m³/s, Pa·m³/s, °C); durations are time.Duration.
type Config struct {
	File     string                  `yaml:"-"`
	Chamber  ChamberConfig           `yaml:"chamber"`
	HTTP     HTTPConfig              `yaml:"http"`
	Store    StoreConfig             `yaml:"store"`
	Links    map[string]*LinkConfig  `yaml:"links"`
	Gauges   map[string]*GaugeConfig `yaml:"gauges"`
	Alarms   []*AlarmConfig          `yaml:"alarms"`
	Shelving ShelvingConfig          `yaml:"shelving"`
	Notify   []*NotifyConfig         `yaml:"notify"`
	Report   *ReportConfig           `yaml:"report"`
	Bake     *BakeConfig             `yaml:"bake"`

	RemoteWrite *RemoteWriteConfig `yaml:"remote_write"` // push stored samples to a receiver (config_remote.go)

	// Notes are remarks from checking that are not problems (a secret file
	// not readable on the checking machine), each "LINE: note: ...".
	Notes []string `yaml:"-"`

	lines     map[string]int // config path -> line, for problems found after loading
	checkOnly bool           // loaded by CheckConfig
}

// ChamberConfig describes the vacuum vessel the gauges watch.
type ChamberConfig struct {
	Name   string `yaml:"name"`
	Volume Volume `yaml:"volume"` // m³; needed for leak rates (Q = V·dp/dt)
	// VolumeUncertainty is the volume's relative expanded uncertainty
	// (k = 2), written as a percentage ("5%"); 0 when not given. It enters
	// every leak rate's uncertainty.
	VolumeUncertainty Percent `yaml:"volume_uncertainty"`
}

// HTTPConfig says where the daemon serves metrics and its API.
type HTTPConfig struct {
	Listen    string `yaml:"listen"`     // host:port; default 127.0.0.1:9781
	TokenFile string `yaml:"token_file"` // bearer token for changes (ack, activate, ...); none means changes are refused
	// TokenCredential names a systemd credential holding the token instead
	// (LoadCredential=NAME:PATH; read from $CREDENTIALS_DIRECTORY/NAME).
	TokenCredential string `yaml:"token_credential"`
	// Hardening; see config_http.go.
	TLS          *HTTPTLSConfig     `yaml:"tls"`
	MetricsAuth  *MetricsAuthConfig `yaml:"metrics_auth"`
	Timeouts     HTTPTimeouts       `yaml:"timeouts"`
	MaxBodyBytes int64              `yaml:"max_body_bytes"` // largest request body; default 1 MiB

	tokenCredentialPath string // set by the checker
}

// TokenPath is the file the daemon reads its bearer token from: the
// credential's, or token_file.
func (h HTTPConfig) TokenPath() string {
	if h.tokenCredentialPath != "" {
		return h.tokenCredentialPath
	}
	return h.TokenFile
}

// StoreConfig says where samples are kept.
type StoreConfig struct {
	Dir        string    `yaml:"dir"`         // data directory; holds holdfast.db
	FlushEvery Duration  `yaml:"flush_every"` // batch interval; default 1s
	Retention  Retention `yaml:"retention"`   // how long raw samples and roll-ups are kept (config_retention.go); zero keeps everything
	Resolution Duration  `yaml:"resolution"`  // sample times are kept to this; default 1ms; must divide 1s
}

// LinkConfig is one physical connection. Exactly one kind is set.
type LinkConfig struct {
	Simulator *SimConfig        `yaml:"simulator"`
	Serial    *SerialLinkConfig `yaml:"serial"`
	TCP       *TCPLinkConfig    `yaml:"tcp"`
	ModbusRTU *SerialLinkConfig `yaml:"modbus_rtu"` // Modbus RTU over a serial line or RS-485 bus
	ModbusTCP *TCPLinkConfig    `yaml:"modbus_tcp"`
	Identify  *IdentifyConfig   `yaml:"identify"` // checked on every (re)connect; config_identify.go
}

// SimConfig describes a simulated chamber served as a link; its gauges use
// driver "sim". The chamber's volume comes from chamber.volume.
type SimConfig struct {
	StartPressure Pressure    `yaml:"start_pressure"` // default 1 atm
	Ambient       Temperature `yaml:"ambient"`        // default 22 °C
	RoughPump     SimPump     `yaml:"rough_pump"`
	HighPump      SimPump     `yaml:"high_pump"`
	Crossover     Pressure    `yaml:"crossover"`  // the high-vacuum stage joins below this
	Leak          Throughput  `yaml:"leak"`       // real leak at start
	Outgassing    Throughput  `yaml:"outgassing"` // one hour after pumping starts, at ambient
	OutgassingExp float64     `yaml:"outgassing_exponent"`
	WallLag       Duration    `yaml:"wall_lag"` // heater-to-wall time constant
	Seed          int64       `yaml:"seed"`
	Timeline      []*SimStep  `yaml:"timeline"`
}

// SimPump is one pumping stage of a simulated chamber.
type SimPump struct {
	Speed    Speed    `yaml:"speed"`
	Ultimate Pressure `yaml:"ultimate"`
}

// SimStep is one scheduled change to a simulated chamber. Exactly one action
// key besides after is set.
type SimStep struct {
	After   Duration     `yaml:"after"`
	Bake    *Temperature `yaml:"bake"`    // heater setpoint
	Leak    *Throughput  `yaml:"leak"`    // set the real leak
	Bleed   *Throughput  `yaml:"bleed"`   // set the bleed valve
	Valve   string       `yaml:"valve"`   // "closed" isolates the pump, "open" reopens
	Pump    string       `yaml:"pump"`    // "off" or "on"
	Fail    *SimFault    `yaml:"fail"`    // an instrument stops answering or reports a fault
	Recover string       `yaml:"recover"` // gauge name: the instrument works again
	Vent    *Pressure    `yaml:"vent"`    // fill the chamber to this pressure at once
}

// SimFault makes one simulated instrument misbehave.
type SimFault struct {
	Gauge string `yaml:"gauge"`
	Mode  string `yaml:"mode"` // "silent" or "fault"
}

// GaugeConfig is one measured channel. Its name is the metrics' gauge label.
type GaugeConfig struct {
	Link     string   `yaml:"link"`
	Driver   string   `yaml:"driver"`   // see drivers.Kinds
	Interval Duration `yaml:"interval"` // default 1s
	Timeout  Duration `yaml:"timeout"`  // per read; default min(interval, 2s)
	Kind     string   `yaml:"kind"`     // pressure | temperature
	Unit     string   `yaml:"unit"`     // display unit; metrics stay SI

	// Combine makes a virtual gauge that blends these gauges over their
	// ranges; it has no link or driver of its own.
	Combine []string `yaml:"combine"`
	// Ranges gives each member of a combined gauge the pressures it is trusted over.
	Ranges MemberRanges `yaml:"ranges"`
	// Calibration says whether stored calibrations apply: active (default) or none.
	Calibration *GaugeCalibration `yaml:"calibration"`
	// Ambient corrects the raw signal for the sensor's ambient temperature.
	Ambient *AmbientConfig `yaml:"ambient"`
	// Sensor is what the gauge measures by (pirani, ion, cdg), so that gas:
	// finds the right table; a simulated gauge's instrument says it.
	Sensor string `yaml:"sensor"`
	// Gas is the gas in the chamber, for a gauge whose reading depends on
	// it; the factor applies to the calibrated value, before storage.
	Gas *GasConfig `yaml:"gas"`
	// Transpiration corrects a gauge whose sensor sits at another
	// temperature than the chamber, after the gas correction.
	Transpiration *TranspirationConfig `yaml:"transpiration"`

	// Instruments on a serial or TCP link (driver: ascii, scpi or modbus).
	Exchange   []*StepConfig      `yaml:"exchange"` // ascii: the steps of one read
	Status     map[string]string  `yaml:"status"`   // ascii: instrument code -> ok, over-range, under-range, sensor-fault, off
	Address    string             `yaml:"address"`  // ascii: replaces {addr}
	Checksum   *ChecksumConfig    `yaml:"checksum"` // ascii
	Query      string             `yaml:"query"`    // scpi
	Terminator string             `yaml:"terminator"`
	Channels   []string           `yaml:"channels"` // scpi: names of the values one query returns
	Channel    string             `yaml:"channel"`  // which value of a several-value reply is this gauge's
	From       string             `yaml:"from"`     // take the reading from this gauge's exchange (one query, several gauges)
	Modbus     *ModbusGaugeConfig `yaml:"modbus"`
	Transfer   *TransferConfig    `yaml:"transfer"` // analogue output in volts -> pressure
	Probe      *ProbeConfig       `yaml:"probe"`    // temperature gauges: thermocouple EMF or RTD resistance -> °C
	RawUnit    string             `yaml:"raw_unit"` // the unit the instrument prints its value in; default SI

	// Simulated instruments (driver: sim).
	Instrument string   `yaml:"instrument"` // pirani | cdg | ion | thermocouple | rtd
	FullScale  Pressure `yaml:"full_scale"` // cdg
	Digits     int      `yaml:"digits"`     // significant digits the instrument prints
	Where      string   `yaml:"where"`      // thermocouple: wall | ambient
	Protect    Pressure `yaml:"protect"`    // ion: switches itself off above this; default 1e-1 Pa
	// Noise is one standard deviation of the instrument's noise, in the
	// simulator's terms: pirani, a fraction of its signal's gas term
	// (default 2e-3); cdg, of full scale (1e-4); ion, of the reading
	// (1e-2); thermocouple and rtd, kelvin (0.2). 0: the default.
	Noise float64 `yaml:"noise"`
}

// Defaults for optional settings.
const (
	DefaultListen     = "127.0.0.1:9781"
	DefaultInterval   = time.Second
	minInterval       = 10 * time.Millisecond
	defaultFlushEvery = time.Second
)
