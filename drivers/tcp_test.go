package drivers

import (
	"bufio"
	"context"
	"net"
	"testing"
	"time"
)

// A meter on 127.0.0.1 answers SCPI queries; the link survives the meter
// dropping the connection.
func TestSCPIOverTCP(t *testing.T) {
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	go func() {
		for n := 0; ; n++ {
			c, err := ln.Accept()
			if err != nil {
				return
			}
			line, err := bufio.NewReader(c).ReadString('\n')
			if err == nil && line == "MEAS:VOLT:DC?\n" {
				c.Write([]byte("+6.00000000E+00\n"))
			}
			if n == 0 {
				c.Close() // the first connection is dropped after one answer
			} else {
				defer c.Close()
			}
		}
	}()
	l, err := DialTCP(TCPConfig{Name: "meter", Address: ln.Addr().String(), Timeout: 300 * time.Millisecond}, testLogger(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	d, err := NewSCPI(l, Options{Gauge: "cdg", SCPI: SCPIOptions{Query: "MEAS:VOLT:DC?"}})
	if err != nil {
		t.Fatal(err)
	}
	if r, err := d.Read(context.Background()); err != nil || r.Raw != 6 {
		t.Fatalf("first read = %v, %v", r.Raw, err)
	}
	tick := time.NewTicker(20 * time.Millisecond)
	defer tick.Stop()
	for deadline := time.Now().Add(2 * time.Second); time.Now().Before(deadline); <-tick.C {
		if r, err := d.Read(context.Background()); err == nil && r.Raw == 6 {
			if s := l.Stats(); s.Reconnects != 1 || !s.Up {
				t.Errorf("stats = %+v, want up after 1 reconnect", s)
			}
			return
		}
	}
	t.Fatalf("no read after the meter dropped the connection; stats %+v", l.Stats())
}
