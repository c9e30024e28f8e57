package drivers_test

import (
	"strings"
	"testing"

	"holdfast/drivers"
)

// wantProblems checks that err names every listed problem.
func wantProblems(t *testing.T, what string, err error, want ...string) {
	t.Helper()
	if err == nil {
		t.Fatalf("%s: no error, want %q", what, want)
	}
	for _, w := range want {
		if !strings.Contains(err.Error(), w) {
			t.Errorf("%s: error\n%v\nlacks %q", what, err, w)
		}
	}
}

func TestASCIIOptionsReportEveryProblem(t *testing.T) {
	err := drivers.ASCIIOptions{
		Steps: []drivers.Step{
			{Send: `ASK{addr}\q`, Expect: `(`},
			{Send: "ASK{cs}", Expect: `^(?P<status>[a-z]+)$`, Until: "ab"},
			{},
		},
		Checksum: &drivers.Checksum{Kind: "md5"},
		Status:   nil,
	}.Validate()
	wantProblems(t, "bad options", err,
		`exchange[0].send: "ASK{addr}\\q": unknown escape \q`,
		"exchange[0].expect: error parsing regexp",
		"exchange[1].until: want exactly one byte",
		"exchange[1].expect: has a status group but no (?P<value>...) group",
		"exchange[2]: neither send nor expect is set",
		"checksum: kind: unknown checksum \"md5\"",
		"exchange[2].expect: regexp has no (?P<value>...) group",
		"status: the reply has a status group",
	)
	wantProblems(t, "no steps", drivers.ASCIIOptions{}.Validate(), "exchange: no steps")
	wantProblems(t, "addr without address", drivers.ASCIIOptions{Steps: []drivers.Step{{Send: "{addr}ASK", Expect: `(?P<value>.+)`}}}.Validate(),
		"exchange[0].send: uses {addr} but no address is set")
	wantProblems(t, "cs without checksum", drivers.ASCIIOptions{Steps: []drivers.Step{{Send: "ASK{cs}", Expect: `(?P<value>.+)(?P<cs>..)`}}}.Validate(),
		"exchange[0].send: sends {cs}, and exchange[0].expect captures (?P<cs>...), but no checksum is configured")
	wantProblems(t, "unused checksum", drivers.ASCIIOptions{Steps: []drivers.Step{{Send: "ASK", Expect: `(?P<value>.+)`}},
		Checksum: &drivers.Checksum{Kind: "xor8"}}.Validate(), "checksum: set, but no step")
}

func TestSCPIOptionsValidate(t *testing.T) {
	wantProblems(t, "empty", drivers.SCPIOptions{Terminator: "\r\n", Channels: []string{"a"}, Channel: "b"}.Validate(),
		"query: missing", "terminator: want exactly one byte", `channel: "b" is not among channels`)
	if err := (drivers.SCPIOptions{Query: "MEAS:VOLT:DC? (@101)"}).Validate(); err != nil {
		t.Errorf("good options: %v", err)
	}
}

func TestModbusOptionsValidate(t *testing.T) {
	wantProblems(t, "bad", drivers.ModbusOptions{Table: "holding", Type: "float64", WordOrder: "middle", Unit: 250, Invert: true}.Validate(),
		`type: unknown register type "float64"`, "word_order: want high-first or low-first", "unit: serial-line units are 1..247", "invert: only for coil")
	wantProblems(t, "table", drivers.ModbusOptions{Table: "registers"}.Validate(), `table: unknown table "registers"`)
	wantProblems(t, "bit with type", drivers.ModbusOptions{Table: "coil", Type: "int16"}.Validate(), "type: coil reads one bit")
	wantProblems(t, "transport", drivers.ModbusConfig{}.Validate(), "give rtu")
	wantProblems(t, "rtu parity", drivers.ModbusConfig{RTU: &drivers.SerialConfig{Device: "/dev/x", Parity: "mark"}}.Validate(), "rtu.parity")
}

func TestLinkConfigsValidate(t *testing.T) {
	wantProblems(t, "serial", drivers.SerialConfig{Baud: -1, DataBits: 9, Parity: "weird", StopBits: 3, Timeout: -1,
		Backoff: drivers.Backoff{Min: 5e9, Max: 1e9}}.Validate(),
		"device: missing", "baud:", "data_bits:", `parity: unknown parity "weird"`, "stop_bits:", "timeout:", "backoff: min 5s is above max 1s")
	wantProblems(t, "tcp", drivers.TCPConfig{Address: "no-port"}.Validate(), "address: want host:port")
	if err := (drivers.SerialConfig{Device: "/dev/serial/by-id/usb-x", Parity: "even", StopBits: 2}).Validate(); err != nil {
		t.Errorf("good serial config: %v", err)
	}
}

func TestUnescape(t *testing.T) {
	for in, want := range map[string]string{`SHOW\r\n`: "SHOW\r\n", `\x05`: "\x05", `a\\b`: `a\b`, `\t\0`: "\t\x00", "plain\r": "plain\r"} {
		got, err := drivers.Unescape(in)
		if err != nil || string(got) != want {
			t.Errorf("Unescape(%q) = %q, %v; want %q", in, got, err, want)
		}
	}
	for _, in := range []string{`\x5`, `\xZZ`, `\q`, `end\`} {
		if _, err := drivers.Unescape(in); err == nil {
			t.Errorf("Unescape(%q) succeeded, want an error", in)
		}
	}
}
