package sim

import (
	"bytes"
	"testing"
)

// Whatever arrives on the line, the server answers with one well-formed
// line, carrying its address, or stays silent.
func FuzzAnswer(f *testing.F) {
	for _, seed := range []string{"READ 1", "READ ALL", "INFO 4", "CHANNELS", "TO 07 READ 2 ~42", "READ 999999999999", "READ +1", "\x15", " ~", "TO 07 ~", "READ ALL ~ZZ", "TO 07", ""} {
		f.Add([]byte(seed), false, "")
		f.Add([]byte(seed), true, "07")
	}
	f.Fuzz(func(t *testing.T, req []byte, checksum bool, addr string) {
		if checkAddress(addr) != nil || bytes.ContainsAny(req, "\r\n") {
			t.Skip()
		}
		s, _ := newTestServer(t, ServeOptions{Checksum: checksum, Address: addr})
		got := s.Answer(req)
		if got == nil {
			return
		}
		if !bytes.HasSuffix(got, []byte("\r\n")) || bytes.Count(got, []byte("\n")) != 1 || len(got) > 256 {
			t.Fatalf("Answer(%q) = %q: want one line ending in CR LF", req, got)
		}
		if addr != "" && !bytes.HasPrefix(got, []byte("FROM "+addr+" ")) {
			t.Fatalf("Answer(%q) = %q: reply lacks the address", req, got)
		}
	})
}

// BenchmarkAnswerAll measures one READ ALL exchange over four instruments,
// the heaviest request, and reports the reply size.
func BenchmarkAnswerAll(b *testing.B) {
	ch, _ := newTestChamber(b, Config{Volume: 0.03, StartPressure: 1000, AmbientC: 22, PumpsOff: true})
	var ins []*Instrument
	for _, ic := range []InstrumentConfig{
		{Name: "cdg", Kind: KindCDG, FullScale: tenTorr}, {Name: "tc", Kind: KindThermocouple},
		{Name: "ion", Kind: KindIon}, {Name: "pirani", Kind: KindPirani},
	} {
		in, err := ch.Instrument(ic)
		if err != nil {
			b.Fatal(err)
		}
		ins = append(ins, in)
	}
	s, err := NewServer(ins, ServeOptions{Checksum: true, Address: "01"})
	if err != nil {
		b.Fatal(err)
	}
	req := bytes.TrimSuffix(s.Request("READ ALL"), []byte("\r"))
	var n int
	for b.Loop() {
		n = len(s.Answer(req))
	}
	b.ReportMetric(float64(n), "bytes/reply")
}
