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
		{"READ 1", "CH1 1.000E+01 mbar GOOD\r\n"},
		{"READ 2", "CH2 2.20E+01 C GOOD\r\n"}, // the room at 22 °C
		{"READ 3", "CH3 none mbar IDLE\r\n"},  // ionisation gauge off above its 1e-2 Pa protect pressure
		{"READ 01", "CH1 1.000E+01 mbar GOOD\r\n"},
		{"CHANNELS", "CHANNELS 4\r\n"},
		{"INFO 1", "CH1 chamber-cdg cdg mbar\r\n"},
		{"INFO 2", "CH2 room-tc thermocouple C\r\n"},
		{"HELLO", "REFUSED unknown-command\r\n"},
		{"read 1", "REFUSED unknown-command\r\n"},
		{"READ1", "REFUSED unknown-command\r\n"},
		{"CHANNELS 2", "REFUSED unknown-command\r\n"},
		{"READ 0", "REFUSED no-such-channel\r\n"},
		{"READ 5", "REFUSED no-such-channel\r\n"},
		{"READ", "REFUSED no-such-channel\r\n"},
		{"READ 1x", "REFUSED no-such-channel\r\n"},
		{"READ -1", "REFUSED no-such-channel\r\n"},
		{"READ  1", "REFUSED no-such-channel\r\n"},
		{"INFO 9", "REFUSED no-such-channel\r\n"},
		{"INFO ALL", "REFUSED no-such-channel\r\n"},
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
	if got := string(s.Answer([]byte("READ 1"))); got != "CH1 7.501E+00 Torr GOOD\r\n" {
		t.Errorf("READ 1 = %q, want CH1 7.501E+00 Torr GOOD", got)
	}
}

func TestAnswerAll(t *testing.T) {
	s, ins := newTestServer(t, ServeOptions{Unit: unit(t, "mbar")})
	got := string(s.Answer([]byte("READ ALL")))
	const first3 = "CH1 1.000E+01 mbar GOOD | CH2 2.20E+01 C GOOD | CH3 none mbar IDLE | CH4 "
	if !strings.HasPrefix(got, first3) || !strings.HasSuffix(got, " mbar GOOD\r\n") {
		t.Fatalf("READ ALL = %q", got)
	}
	// The Pirani at 1000 Pa: its signal printed to 3 digits loses
	// resolution near saturation, so only the order of magnitude holds.
	v, err := drivers.ParseNumber(strings.Fields(got[len(first3):])[0])
	if err != nil || v < 5 || v > 20 {
		t.Errorf("Pirani in READ ALL = %v, %v; want about 10 mbar", v, err)
	}
	if err := ins[1].Fail(ModeSilent); err != nil {
		t.Fatal(err)
	}
	if err := ins[0].Fail(ModeFault); err != nil {
		t.Fatal(err)
	}
	got = string(s.Answer([]byte("READ ALL")))
	if !strings.HasPrefix(got, "CH1 none mbar FAULT | CH3 none mbar IDLE | CH4 ") {
		t.Errorf("READ ALL with 1 faulty and 2 silent = %q, want 2 left out and 1 FAULT", got)
	}
	if r := s.Answer([]byte("READ 2")); r != nil {
		t.Errorf("READ 2 of a silent instrument = %q, want no reply", r)
	}
	ins[1].Recover()
	if got := string(s.Answer([]byte("READ 2"))); got != "CH2 2.20E+01 C GOOD\r\n" {
		t.Errorf("READ 2 after recovery = %q", got)
	}
}

// The checksum is the exclusive-or of the bytes before its two hex digits.
// Worked by hand from the ASCII code chart (RFC 20), each arrow the running
// result:
//
//	"READ 1 ~":   R 52 → E 45 → 17, A 41 → 56, D 44 → 12, ' ' 20 → 32, '1' 31 → 03, ' ' 20 → 23, '~' 7E → 5D
//	" ~":         20 ^ 7E = 5E
//	"CHANNELS":   C 43, H 48 → 0B, A 41 → 4A, N 4E → 04, N 4E → 4A, E 45 → 0F, L 4C → 43, S 53 → 10
//	"CHANNELS ~":   10 ^ 5E = 4E
//	"CHANNELS 4 ~": 10 ^ ' ' 20 ^ '4' 34 ^ 5E = 5A
//	"CH1 1.000E+01 mbar GOOD ~": "CH1 " 1A ^ "1.000E+01 " 60 ^ "mbar " 3C ^ "GOOD" 03 ^ " ~" 5E = 1B
//	  ("CH1 ": 43, 0B, 3A, 1A; "1.000E+01 ": 31, 1F, 2F, 1F, 2F, 6A, 41, 71, 40, 60;
//	   "mbar ": 6D, 0F, 6E, 1C, 3C; "GOOD": 47, 08, 47, 03)
//	"REFUSED bad-checksum ~": "REFUSED " 76 ^ "bad-checksum" 47 ^ 5E = 6F
//	  ("REFUSED ": 52, 17, 51, 04, 57, 12, 56, 76;
//	   "bad-checksum": 62, 03, 67, 4A, 29, 41, 24, 47, 2C, 5F, 2A, 47)
func TestAnswerChecksum(t *testing.T) {
	s, _ := newTestServer(t, ServeOptions{Unit: unit(t, "mbar"), Checksum: true})
	if got := string(s.Answer([]byte("READ 1 ~5D"))); got != "CH1 1.000E+01 mbar GOOD ~1B\r\n" {
		t.Errorf("READ 1 ~5D = %q, want CH1 1.000E+01 mbar GOOD ~1B", got)
	}
	// Lower-case digits are accepted in a request.
	if got := string(s.Answer([]byte("CHANNELS ~4e"))); got != "CHANNELS 4 ~5A\r\n" {
		t.Errorf("CHANNELS with checksum = %q, want CHANNELS 4 ~5A", got)
	}
	for _, req := range []string{"READ 1 ~5C", "READ 1", "READ 1 ~5", "READ 1~5D", "READ 1 5D", "READ 1 ~5D0"} {
		if got := string(s.Answer([]byte(req))); got != "REFUSED bad-checksum ~6F\r\n" {
			t.Errorf("Answer(%q) = %q, want the checksum refusal REFUSED bad-checksum ~6F", req, got)
		}
	}
}

// "TO 03 ": T 54, O 4F → 1B, ' ' 20 → 3B, '0' 30 → 0B, '3' 33 → 38, ' ' 20 → 18;
// "FROM 03 ": F 46, R 52 → 14, O 4F → 5B, M 4D → 16, then ' 03 ' as above → 15.
// With the sums of TestAnswerChecksum: "TO 03 CHANNELS ~" = 18 ^ 4E = 56 and
// "FROM 03 CHANNELS 4 ~" = 15 ^ 5A = 4F.
func TestAnswerAddress(t *testing.T) {
	s, _ := newTestServer(t, ServeOptions{Unit: unit(t, "mbar"), Address: "03", Checksum: true})
	if got := string(s.Answer([]byte("TO 03 CHANNELS ~56"))); got != "FROM 03 CHANNELS 4 ~4F\r\n" {
		t.Errorf("TO 03 CHANNELS ~56 = %q, want FROM 03 CHANNELS 4 ~4F", got)
	}
	for _, req := range []string{"CHANNELS ~4E", "TO 04 CHANNELS ~55", "TO 031 CHANNELS ~65", "TO 0 CHANNELS ~65", "TO 03CHANNELS ~76"} {
		if got := s.Answer([]byte(req)); got != nil {
			t.Errorf("Answer(%q) = %q, want silence: not this device's address", req, got)
		}
	}
	if got := string(s.Answer([]byte("TO 03 HELLO ~04"))); !strings.HasPrefix(got, "FROM 03 REFUSED unknown-command ~") {
		t.Errorf("TO 03 HELLO = %q, want a refusal carrying the address", got)
	}
}

func TestServeASCIIFraming(t *testing.T) {
	serve := func(o ServeOptions, in string) string {
		s, _ := newTestServer(t, o)
		var out bytes.Buffer
		err := s.ServeASCII(struct {
			io.Reader
			io.Writer
		}{strings.NewReader(in), &out})
		if err == nil {
			t.Fatal("ServeASCII returned nil at the end of its input; want the read error")
		}
		return out.String()
	}
	got := serve(ServeOptions{}, "CHANNELS\r\n\r\nCHANNELS\n"+strings.Repeat("A", 70)+"\rINFO 4\r")
	if want := "CHANNELS 4\r\nCHANNELS 4\r\nREFUSED too-long\r\nCH4 rough-pirani pirani Pa\r\n"; got != want {
		t.Errorf("replies = %q, want %q", got, want)
	}
	// On a bus, an overlong request is refused only by the device it names.
	got = serve(ServeOptions{Address: "03"}, "TO 04 "+strings.Repeat("A", 70)+"\rTO 03 "+strings.Repeat("A", 70)+"\r")
	if want := "FROM 03 REFUSED too-long\r\n"; got != want {
		t.Errorf("addressed replies = %q, want %q", got, want)
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
		req := s.Request("CHANNELS")
		got := s.Answer(bytes.TrimSuffix(req, []byte("\r")))
		if got == nil || bytes.Contains(got, []byte("REFUSED")) {
			t.Errorf("%+v: Request = %q, Answer = %q", o, req, got)
		}
	}
	s, _ := newTestServer(t, ServeOptions{Address: "03", Checksum: true})
	if got := string(s.Request("CHANNELS")); got != "TO 03 CHANNELS ~56\r" { // the sum worked out in TestAnswerAddress
		t.Errorf("Request(CHANNELS) = %q, want TO 03 CHANNELS ~56\\r", got)
	}
}

// Every status has a state word in the ASCII protocol, and no two share one.
func TestStateWordsCoverEveryStatus(t *testing.T) {
	seen := map[string]bool{}
	for st := drivers.StatusOK; st <= drivers.StatusOff; st++ {
		w, ok := asciiState[st]
		if !ok || w == "" || seen[w] {
			t.Errorf("status %v: word %q, %v (seen before: %v)", st, w, ok, seen[w])
		}
		seen[w] = true
	}
}
