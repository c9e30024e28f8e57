//go:build unix

package drivers

import (
	"strings"
	"testing"

	"github.com/creack/pty"
)

// A second holdfast process opening a port the first holds is refused with
// a message saying so, even as root (which the tty's own exclusive mode
// lets through); once the first closes it, the port opens again.
func TestSecondOpenerOfAPortIsRefused(t *testing.T) {
	m, s, err := pty.Open()
	if err != nil {
		t.Skipf("pty.Open: %v", err)
	}
	defer m.Close()
	defer s.Close()
	cfg := SerialConfig{Name: "bench", Device: s.Name(), Baud: 9600, DataBits: 8, Parity: "none", StopBits: 1}
	mode, err := serialMode(cfg)
	if err != nil {
		t.Fatal(err)
	}
	first, err := openSerialPort(cfg, mode)
	if err != nil {
		t.Fatalf("first open: %v", err)
	}
	if _, err := openSerialPort(cfg, mode); err == nil || !strings.Contains(err.Error(), "in use by another holdfast") {
		t.Errorf("second open while the first holds the port: err %v, want 'in use by another holdfast'", err)
	}
	if err := first.Close(); err != nil {
		t.Fatal(err)
	}
	again, err := openSerialPort(cfg, mode)
	if err != nil {
		t.Fatalf("open after the first closed: %v", err)
	}
	again.Close()
}
