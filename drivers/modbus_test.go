package drivers

import (
	"context"
	"errors"
	"math"
	"net"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/simonvetter/modbus"
)

// registerBank is a fake instrument's data: the test sets what it holds.
type registerBank struct {
	mu       sync.Mutex
	holding  map[uint16]uint16
	input    map[uint16]uint16
	discrete map[uint16]bool
}

func newBank() *registerBank {
	return &registerBank{holding: map[uint16]uint16{}, input: map[uint16]uint16{}, discrete: map[uint16]bool{}}
}

func (b *registerBank) regs(m map[uint16]uint16, addr, qty uint16) ([]uint16, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	out := make([]uint16, qty)
	for i := range out {
		v, ok := m[addr+uint16(i)]
		if !ok {
			return nil, modbus.ErrIllegalDataAddress
		}
		out[i] = v
	}
	return out, nil
}

func (b *registerBank) HandleCoils(r *modbus.CoilsRequest) ([]bool, error) {
	return nil, modbus.ErrIllegalFunction
}

func (b *registerBank) HandleDiscreteInputs(r *modbus.DiscreteInputsRequest) ([]bool, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	out := make([]bool, r.Quantity)
	for i := range out {
		out[i] = b.discrete[r.Addr+uint16(i)]
	}
	return out, nil
}

func (b *registerBank) HandleHoldingRegisters(r *modbus.HoldingRegistersRequest) ([]uint16, error) {
	return b.regs(b.holding, r.Addr, r.Quantity)
}

func (b *registerBank) HandleInputRegisters(r *modbus.InputRegistersRequest) ([]uint16, error) {
	return b.regs(b.input, r.Addr, r.Quantity)
}

// setFloat stores f at addr, high word first.
func (b *registerBank) setFloat(addr uint16, f float32) {
	u := math.Float32bits(f)
	b.mu.Lock()
	b.holding[addr], b.holding[addr+1] = uint16(u>>16), uint16(u)
	b.mu.Unlock()
}

func freeAddr(t *testing.T) string {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	defer ln.Close()
	return ln.Addr().String()
}

func startTCPServer(t *testing.T, addr string, bank *registerBank) *modbus.ModbusServer {
	t.Helper()
	srv, err := modbus.NewServer(&modbus.ServerConfiguration{URL: "tcp://" + addr, Timeout: 5 * time.Second, MaxClients: 4,
		Logger: discardLog()}, bank)
	if err != nil {
		t.Fatal(err)
	}
	if err := srv.Start(); err != nil {
		t.Fatal(err)
	}
	return srv
}

func readGauge(t *testing.T, l *ModbusLink, mo ModbusOptions) (Reading, error) {
	t.Helper()
	d, err := NewModbus(l, Options{Gauge: "transmitter", Modbus: mo})
	if err != nil {
		t.Fatalf("NewModbus: %v", err)
	}
	return d.Read(context.Background())
}

func TestModbusTCP(t *testing.T) {
	bank := newBank()
	bank.setFloat(10, 2.5e-3)
	bank.input[0] = 0xFF38                              // -200 as int16
	bank.holding[20], bank.holding[21] = 0x0001, 0x0002 // low word first: 0x0002_0001
	bank.discrete[3] = true
	addr := freeAddr(t)
	srv := startTCPServer(t, addr, bank)
	defer srv.Stop()
	l, err := OpenModbus(ModbusConfig{Name: "plc", TCP: &TCPConfig{Address: addr, Timeout: 300 * time.Millisecond}}, testLogger(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	for _, c := range []struct {
		name string
		mo   ModbusOptions
		want float64
	}{
		{"float32", ModbusOptions{Table: "holding", Address: 10, Type: "float32"}, 2.5e-3}, // shortest decimal of the float32, not its binary expansion
		{"int16 scaled", ModbusOptions{Table: "input", Address: 0, Type: "int16", Scale: 0.1, Offset: 1}, -19},
		{"uint32 low first", ModbusOptions{Table: "holding", Address: 20, Type: "uint32", WordOrder: "low-first"}, 0x00020001},
		{"discrete", ModbusOptions{Table: "discrete", Address: 3}, 1},
		{"discrete inverted", ModbusOptions{Table: "discrete", Address: 3, Invert: true}, 0},
	} {
		r, err := readGauge(t, l, c.mo)
		if err != nil || math.Abs(r.Raw-c.want) > 1e-12*math.Abs(c.want) {
			t.Errorf("%s: Read = %v, %v; want %v", c.name, r.Raw, err, c.want)
		}
	}
	_, err = readGauge(t, l, ModbusOptions{Table: "holding", Address: 99, Type: "uint16"})
	if !errors.Is(err, modbus.ErrIllegalDataAddress) || IsLinkDown(err) {
		t.Errorf("missing register: err = %v, want the exception with the link still up", err)
	}
	if !l.Stats().Up {
		t.Errorf("stats = %+v, want up", l.Stats())
	}
}

func TestModbusTCPServerRestarts(t *testing.T) {
	bank := newBank()
	bank.holding[0] = 42
	addr := freeAddr(t)
	srv := startTCPServer(t, addr, bank)
	l, err := OpenModbus(ModbusConfig{Name: "plc", TCP: &TCPConfig{Address: addr, Timeout: 200 * time.Millisecond}}, testLogger(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	mo := ModbusOptions{Table: "holding", Type: "uint16"}
	if r, err := readGauge(t, l, mo); err != nil || r.Raw != 42 {
		t.Fatalf("before restart: %v, %v", r.Raw, err)
	}
	srv.Stop()
	if _, err := readGauge(t, l, mo); err == nil {
		t.Fatal("read succeeded with the server stopped")
	}
	srv = startTCPServer(t, addr, bank)
	defer srv.Stop()
	tick := time.NewTicker(50 * time.Millisecond)
	defer tick.Stop()
	for deadline := time.Now().Add(2 * time.Second); time.Now().Before(deadline); <-tick.C {
		if r, err := readGauge(t, l, mo); err == nil && r.Raw == 42 {
			if s := l.Stats(); s.Reconnects != 1 {
				t.Errorf("stats = %+v, want 1 reconnect", s)
			}
			return
		}
	}
	t.Fatalf("no read within 2 s of the server returning; stats %+v", l.Stats())
}

func TestModbusRTUThroughPty(t *testing.T) {
	m, s, err := openPollablePty()
	if err != nil {
		t.Fatal(err)
	}
	bank := newBank()
	bank.setFloat(4, 101325)
	bank.discrete[0] = true
	done := make(chan error, 1)
	go func() { done <- ServeRTU(m, 7, bank) }()
	t.Cleanup(func() { m.Close(); s.Close(); <-done })
	l, err := OpenModbus(ModbusConfig{Name: "bus", RTU: &SerialConfig{Device: s.Name(), Baud: 19200, Parity: "even", Timeout: 500 * time.Millisecond}}, testLogger(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	var trace [][]byte
	d, err := NewModbus(l, Options{Gauge: "chamber", Modbus: ModbusOptions{Unit: 7, Table: "holding", Address: 4, Type: "float32"},
		Trace: func(dir string, b []byte) { trace = append(trace, b) }})
	if err != nil {
		t.Fatal(err)
	}
	r, err := d.Read(context.Background())
	if err != nil || r.Raw != 101325 {
		t.Fatalf("Read = %v, %v; want 101325", r.Raw, err)
	}
	if len(trace) != 2 || trace[0][0] != 7 || trace[0][1] != 3 || trace[1][2] != 4 {
		t.Errorf("trace = % X, want a request to unit 7 function 3 and a 4-byte reply", trace)
	}
	if r, err := readGauge(t, l, ModbusOptions{Unit: 7, Table: "discrete"}); err != nil || r.Raw != 1 {
		t.Errorf("discrete input = %v, %v; want 1", r.Raw, err)
	}
	// A unit nobody answers for times out without taking the bus down.
	if _, err := readGauge(t, l, ModbusOptions{Unit: 9, Table: "discrete"}); !errors.Is(err, ErrNoReply) || IsLinkDown(err) {
		t.Errorf("silent unit: err = %v, want no reply with the link up", err)
	}
}

// A status register read in the same poll sets the reading's status; a
// NaN value without one reads as a sensor fault, never as an ok NaN.
func TestModbusStatusRegisterAndNaN(t *testing.T) {
	bank := newBank()
	bank.setFloat(0, 7.5e-4)
	bank.holding[100] = 4                             // bit 2 of invented status flags: over-range
	bank.holding[4], bank.holding[5] = 0x7FC0, 0x0000 // float32 quiet NaN (IEEE 754)
	addr := freeAddr(t)
	srv := startTCPServer(t, addr, bank)
	defer srv.Stop()
	l, err := OpenModbus(ModbusConfig{Name: "plc", TCP: &TCPConfig{Address: addr, Timeout: 300 * time.Millisecond}}, testLogger(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	reg := uint16(100)
	codes := map[string]Status{"1": StatusOK, "4": StatusOverRange}
	r, err := readGauge(t, l, ModbusOptions{Table: "holding", Address: 0, Type: "float32", StatusRegister: &reg, Status: codes})
	if err != nil || r.Status != StatusOverRange {
		t.Errorf("status code 4: got %v, %v; want over-range", r.Status, err)
	}
	bank.mu.Lock()
	bank.holding[100] = 9
	bank.mu.Unlock()
	if _, err := readGauge(t, l, ModbusOptions{Table: "holding", Address: 0, Type: "float32", StatusRegister: &reg, Status: codes}); err == nil || !strings.Contains(err.Error(), "code 9") {
		t.Errorf("unmapped code: err = %v, want one naming code 9", err)
	}
	r, err = readGauge(t, l, ModbusOptions{Table: "holding", Address: 4, Type: "float32"})
	if err != nil || r.Status != StatusSensorFault {
		t.Errorf("NaN value: got %v, %v; want sensor-fault", r.Status, err)
	}
	if err := (ModbusOptions{Table: "input", Type: "float32", StatusRegister: &reg}).Validate(); err == nil {
		t.Error("a status register without a status map validated")
	}
}
