package drivers

import (
	"context"
	"errors"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/simonvetter/modbus"
)

// coilBank is a fake controller with writable coils: only the addresses in
// coils exist, and every write is logged in order.
type coilBank struct {
	*registerBank
	cmu    sync.Mutex
	coils  map[uint16]bool
	writes []string
}

func (b *coilBank) HandleCoils(r *modbus.CoilsRequest) ([]bool, error) {
	b.cmu.Lock()
	defer b.cmu.Unlock()
	out := make([]bool, r.Quantity)
	for i := range out {
		a := r.Addr + uint16(i)
		v, ok := b.coils[a]
		if !ok {
			return nil, modbus.ErrIllegalDataAddress
		}
		if r.IsWrite {
			b.coils[a] = r.Args[i]
			b.writes = append(b.writes, map[bool]string{true: "on", false: "off"}[r.Args[i]])
		}
		out[i] = v
	}
	return out, nil
}

// A coil written over Modbus TCP on 127.0.0.1 reads back as written, the
// controller sees one write-single-coil per call (Modbus Application
// Protocol Specification V1.1b3, function 0x05 Write Single Coil: FF00h ON,
// 0000h OFF, the reply echoes the request; section number from memory), and a coil
// the unit does not have gives the unit's exception without taking the
// link down.
func TestWriteCoilOverTCP(t *testing.T) {
	bank := &coilBank{registerBank: newBank(), coils: map[uint16]bool{12: false}}
	addr := freeAddr(t)
	srv, err := modbus.NewServer(&modbus.ServerConfiguration{URL: "tcp://" + addr, Timeout: 5 * time.Second, MaxClients: 2,
		Logger: discardLog()}, bank)
	if err != nil {
		t.Fatal(err)
	}
	if err := srv.Start(); err != nil {
		t.Fatal(err)
	}
	defer srv.Stop()
	l, err := OpenModbus(ModbusConfig{Name: "plc", TCP: &TCPConfig{Address: addr, Timeout: 300 * time.Millisecond}}, testLogger(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	ctx := context.Background()
	for _, on := range []bool{true, false, true} {
		if err := l.WriteCoil(ctx, 1, 12, on); err != nil {
			t.Fatalf("WriteCoil(12, %v): %v", on, err)
		}
		got, err := l.ReadCoil(ctx, 1, 12)
		if err != nil || got != on {
			t.Fatalf("ReadCoil(12) after writing %v: %v, %v", on, got, err)
		}
	}
	bank.cmu.Lock()
	writes := strings.Join(bank.writes, ",")
	bank.cmu.Unlock()
	if writes != "on,off,on" {
		t.Errorf("controller saw writes %s, want on,off,on", writes)
	}
	err = l.WriteCoil(ctx, 1, 99, true)
	if err == nil || !errors.Is(err, modbus.ErrIllegalDataAddress) || !strings.Contains(err.Error(), "coil 99") {
		t.Errorf("writing a coil the unit lacks: %v; want the illegal-address exception naming coil 99", err)
	}
	if !l.Stats().Up {
		t.Error("an exception took the link down; the unit answered, so it is up")
	}
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if err := l.WriteCoil(cctx, 1, 12, false); !errors.Is(err, context.Canceled) {
		t.Errorf("write with a cancelled context: %v, want context.Canceled", err)
	}
	if on, _ := l.ReadCoil(ctx, 1, 12); !on {
		t.Error("a cancelled write reached the controller")
	}
}

// With nothing listening the write fails as a read would: the link is down.
func TestWriteCoilLinkDown(t *testing.T) {
	l, err := OpenModbus(ModbusConfig{Name: "plc", TCP: &TCPConfig{Address: freeAddr(t), Timeout: 200 * time.Millisecond}}, testLogger(t))
	if err != nil {
		t.Fatal(err)
	}
	defer l.Close()
	if err := l.WriteCoil(context.Background(), 1, 12, true); !errors.Is(err, ErrLinkDown) || !strings.Contains(err.Error(), "coil 12") {
		t.Errorf("WriteCoil with nothing listening: %v; want ErrLinkDown naming coil 12", err)
	}
}
