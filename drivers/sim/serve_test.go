package sim

import (
	"bytes"
	"io"
	"strings"
	"testing"

	"holdfast/calib"
	"holdfast/drivers"
)

// tenTorr is a 10 Torr full scale in Pa; 1 Torr = 101325/760 Pa
// (REFERENCES.md §1b: 10th CGPM 1954 Res. 4 for the atmosphere).
const tenTorr = 10 * 101325.0 / 760

// servedChamber is a sealed chamber held at 1000 Pa (pumps off, no gas
// load) with four nearly noiseless instruments: channel 1 a 10 Torr CDG
// printing 4 digits, 2 an ambient thermocouple, 3 an ionisation gauge (off
// at this pressure), 4 a Pirani.
func servedChamber(t *testing.T) (*Chamber, []*Instrument) {
	t.Helper()
	ch, _ := newTestChamber(t, Config{Volume: 0.03, StartPressure: 1000, AmbientC: 22, PumpsOff: true})
	var ins []*Instrument
	for _, ic := range []InstrumentConfig{
		{Name: "chamber-cdg", Kind: KindCDG, FullScale: tenTorr, Digits: 4, Noise: 1e-12},
		{Name: "room-tc", Kind: KindThermocouple, Where: "ambient", Noise: 1e-9},
		{Name: "chamber-ion", Kind: KindIon, Noise: 1e-12},
		{Name: "rough-pirani", Kind: KindPirani, Noise: 1e-12},
	} {
		in, err := ch.Instrument(ic)
		if err != nil {
			t.Fatal(err)
		}
		ins = append(ins, in)
	}
	return ch, ins
}

func newTestServer(t *testing.T, o ServeOptions) (*Server, []*Instrument) {
	t.Helper()
	_, ins := servedChamber(t)
	s, err := NewServer(ins, o)
	if err != nil {
		t.Fatalf("NewServer: %v", err)
	}
	return s, ins
}

func unit(t *testing.T, name string) calib.Unit {
	t.Helper()
	u, err := calib.ParseUnit(name, calib.Pressure)
	if err != nil {
		t.Fatal(err)
	}
	return u
}

func TestAnswerCommands(t *testing.T) {
	s, _ := newTestServer(t, ServeOptions{Unit: unit(t, "mbar")})
	// 1000 Pa = 10 mbar exactly (REFERENCES.md §1b: 1 mbar = 100 Pa). The
	// CDG prints 10·1000/tenTorr = 7.501 V (4 digits), which is 7.501 Torr =
	// 1000.05 Pa = 10.00 mbar at 4 digits.
	for _, c := range []struct{ req, want string }{
		{"?P1", "0,1.000E+01\r\n"},
		{"?P2", "0,2.20E+01\r\n"}, // the room at 22 °C
		{"?P3", "4,------\r\n"},   // ionisation gauge off above its 1e-2 Pa protect pressure
		{"?P01", "0,1.000E+01\r\n"},
		{"?C", "4\r\n"},
		{"?N1", "chamber-cdg,cdg,mbar\r\n"},
		{"?N2", "room-tc,thermocouple,C\r\n"},
		{"?X", "\x15E1\r\n"},
		{"P1", "\x15E1\r\n"},
		{"?p1", "\x15E1\r\n"},
		{"?P0", "\x15E2\r\n"},
		{"?P5", "\x15E2\r\n"},
		{"?P", "\x15E2\r\n"},
		{"?P1x", "\x15E2\r\n"},
		{"?P-1", "\x15E2\r\n"},
		{"?N9", "\x15E2\r\n"},
	} {
		if got := string(s.Answer([]byte(c.req))); got != c.want {
			t.Errorf("Answer(%q) = %q, want %q", c.req, got, c.want)
		}
	}
}

func TestAnswerInTorr(t *testing.T) {
	s, _ := newTestServer(t, ServeOptions{Unit: unit(t, "Torr")})
	// A 10 Torr gauge at 7.501 V reads 7.501 Torr: 1000 Pa is 7.50062 Torr
	// (REFERENCES.md §1b: 1 Torr = 101325/760 Pa).
	if got := string(s.Answer([]byte("?P1"))); got != "0,7.501E+00\r\n" {
		t.Errorf("?P1 = %q, want 0,7.501E+00", got)
	}
}

func TestAnswerAll(t *testing.T) {
	s, ins := newTestServer(t, ServeOptions{Unit: unit(t, "mbar")})
	got := string(s.Answer([]byte("?ALL")))
	if !strings.HasPrefix(got, "1=0,1.000E+01;2=0,2.20E+01;3=4,------;4=0,") || !strings.HasSuffix(got, "\r\n") {
		t.Fatalf("?ALL = %q", got)
	}
	// The Pirani at 1000 Pa: its signal printed to 3 digits loses
	// resolution near saturation, so only the order of magnitude holds.
	v, err := drivers.ParseNumber(strings.TrimSuffix(got[strings.LastIndexByte(got, ',')+1:], "\r\n"))
	if err != nil || v < 5 || v > 20 {
		t.Errorf("Pirani in ?ALL = %v, %v; want about 10 mbar", v, err)
	}
	if err := ins[1].Fail(ModeSilent); err != nil {
		t.Fatal(err)
	}
	if err := ins[0].Fail(ModeFault); err != nil {
		t.Fatal(err)
	}
	got = string(s.Answer([]byte("?ALL")))
	if !strings.HasPrefix(got, "1=3,------;3=4,------;4=0,") {
		t.Errorf("?ALL with 1 faulty and 2 silent = %q, want 2 left out and 1 at status 3", got)
	}
	if r := s.Answer([]byte("?P2")); r != nil {
		t.Errorf("?P2 of a silent instrument = %q, want no reply", r)
	}
	ins[1].Recover()
	if got := string(s.Answer([]byte("?P2"))); got != "0,2.20E+01\r\n" {
		t.Errorf("?P2 after recovery = %q", got)
	}
}

// The checksum is the sum of the bytes modulo 256 in two hex digits. The
// byte values are those of the ASCII code chart (RFC 20): '?'=0x3F,
// 'P'=0x50, '1'=0x31, '*'=0x2A, so "?P1*" sums to 0xEA.
func TestAnswerChecksum(t *testing.T) {
	s, _ := newTestServer(t, ServeOptions{Unit: unit(t, "mbar"), Checksum: true})
	got := s.Answer([]byte("?P1*EA"))
	body := "0,1.000E+01*"
	if want := body + hexByte(drivers.Sum8([]byte(body))) + "\r\n"; string(got) != want {
		t.Errorf("?P1*EA = %q, want %q", got, want)
	}
	// "?C*": 0x3F + 'C'=0x43 + 0x2A = 0xAC (lower-case digits accepted);
	// the reply "4*": '4'=0x34 + 0x2A = 0x5E.
	if got := string(s.Answer([]byte("?C*ac"))); got != "4*5E\r\n" {
		t.Errorf("?C with checksum = %q, want 4*5E", got)
	}
	// NAK 0x15 + 'E'=0x45 + '3'=0x33 + '*'=0x2A = 0xB7.
	for _, req := range []string{"?P1*EB", "?P1", "?P1*E", "?P1EA"} {
		if got := string(s.Answer([]byte(req))); got != "\x15E3*B7\r\n" {
			t.Errorf("Answer(%q) = %q, want the checksum refusal \\x15E3*B7", req, got)
		}
	}
}

func TestAnswerAddress(t *testing.T) {
	s, _ := newTestServer(t, ServeOptions{Unit: unit(t, "mbar"), Address: "03", Checksum: true})
	// '@'=0x40 '0'=0x30 '3'=0x33 '?'=0x3F 'C'=0x43 '*'=0x2A: 0x14F mod 256 = 0x4F;
	// the reply "@03:4*" adds ':'=0x3A and '4'=0x34 to '@03' and '*': 0x3B.
	if got := string(s.Answer([]byte("@03?C*4F"))); got != "@03:4*3B\r\n" {
		t.Errorf("@03?C*61 = %q", got)
	}
	for _, req := range []string{"?C*BC", "@04?C*62", "@031?C*92", "@0?C*2E"} {
		if got := s.Answer([]byte(req)); got != nil {
			t.Errorf("Answer(%q) = %q, want silence: not this device's address", req, got)
		}
	}
	if got := string(s.Answer([]byte("@03?Q*5D"))); !strings.HasPrefix(got, "\x15@03:E1*") {
		t.Errorf("@03?Q = %q, want a refusal carrying the address", got)
	}
}

func TestServeASCIIFraming(t *testing.T) {
	s, _ := newTestServer(t, ServeOptions{})
	in := "?C\r\n\r\n?C\n" + strings.Repeat("A", 70) + "\r?N4\r"
	var out bytes.Buffer
	err := s.ServeASCII(struct {
		io.Reader
		io.Writer
	}{strings.NewReader(in), &out})
	if err == nil {
		t.Fatal("ServeASCII returned nil at the end of its input; want the read error")
	}
	want := "4\r\n4\r\n\x15E4\r\nrough-pirani,pirani,Pa\r\n"
	if out.String() != want {
		t.Errorf("replies = %q, want %q", out.String(), want)
	}
}

func TestNewServerReportsEveryProblem(t *testing.T) {
	_, err := NewServer(nil, ServeOptions{Address: "a b", Unit: calib.Temperature.Base(), Wait: -1})
	if err == nil {
		t.Fatal("NewServer succeeded")
	}
	for _, want := range []string{"instruments:", "address:", "unit:", "wait:"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not name %s", err, want)
		}
	}
}

func TestFormatValue(t *testing.T) {
	for _, c := range []struct {
		v      float64
		digits int
		want   string
	}{
		{1.234e-4, 3, "1.23E-04"},
		{-0.5, 2, "-5.0E-01"},
		{101325, 4, "1.013E+05"},
		{22, 3, "2.20E+01"},
		{0, 3, "0.00E+00"},
		{9.996, 3, "1.00E+01"}, // carries into the exponent
		{1e-12, 1, "1E-12"},
	} {
		if got := formatValue(c.v, c.digits); got != c.want {
			t.Errorf("formatValue(%g, %d) = %q, want %q", c.v, c.digits, got, c.want)
		}
		// The printed text reads back through the daemon's number parser.
		if v, err := drivers.ParseNumber(formatValue(c.v, c.digits)); err != nil || relErr(v, c.v) > 5e-3 && c.digits > 1 {
			t.Errorf("ParseNumber(formatValue(%g)) = %v, %v", c.v, v, err)
		}
	}
}

// What Request builds, Answer accepts: the address and checksum rules are
// the same on both sides.
func TestRequestIsAnswered(t *testing.T) {
	for _, o := range []ServeOptions{{}, {Address: "12"}, {Checksum: true}, {Address: "A1", Checksum: true}} {
		s, _ := newTestServer(t, o)
		req := s.Request("?C")
		got := s.Answer(bytes.TrimSuffix(req, []byte("\r")))
		if got == nil || got[0] == nak {
			t.Errorf("%+v: Request = %q, Answer = %q", o, req, got)
		}
	}
	s, _ := newTestServer(t, ServeOptions{Address: "03", Checksum: true})
	if got := string(s.Request("?C")); got != "@03?C*4F\r" { // the sum worked out in TestAnswerAddress
		t.Errorf("Request(?C) = %q, want @03?C*4F\\r", got)
	}
}
