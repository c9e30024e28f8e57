package sim

import (
	"errors"
	"math"
	"testing"

	"github.com/simonvetter/modbus"

	"holdfast/drivers"
)

// Float32 words against the IEEE 754 single-precision table printed by
// Kuzdrall, C/C++ Users Journal, January 1995, table 2: +1.0 = 3f800000,
// -1.0 = bf800000, 32768 = 47000000, 32767.5 = 46ffff00; high word first.
func TestRegisterFloat32Words(t *testing.T) {
	for _, c := range []struct {
		v      float64
		hi, lo uint16
	}{
		{1, 0x3F80, 0x0000},
		{-1, 0xBF80, 0x0000},
		{32768, 0x4700, 0x0000},
		{32767.5, 0x46FF, 0xFF00},
		{math.NaN(), 0x7FC0, 0x0000}, // the quiet NaN (IEEE 754-2008 §6.2.1: leading fraction bit set; from memory)
	} {
		sh := shown{value: c.v}
		if hi, lo := register(sh, 0, true), register(sh, 1, true); hi != c.hi || lo != c.lo {
			t.Errorf("%g: registers %04X %04X, want %04X %04X", c.v, hi, lo, c.hi, c.lo)
		}
	}
}

func TestInputRegisters(t *testing.T) {
	s, ins := newTestServer(t, ServeOptions{Unit: unit(t, "mbar")})
	regs, err := s.inputRegisters(0, 8)
	if err != nil {
		t.Fatal(err)
	}
	word := func(i int) float64 { return float64(math.Float32frombits(uint32(regs[2*i])<<16 | uint32(regs[2*i+1]))) }
	// Channel 1 as in TestAnswerCommands: 7.501 Torr = 10.0005 mbar, the
	// float32 nearest to the unrounded value (Modbus carries no digits).
	if v := word(0); relErr(v, 7.501*101325/760/100) > 1e-6 {
		t.Errorf("channel 1 = %v mbar, want 10.0005", v)
	}
	if v := word(1); relErr(v, 22) > 1e-6 {
		t.Errorf("channel 2 = %v °C, want 22", v)
	}
	if v := word(2); !math.IsNaN(v) {
		t.Errorf("channel 3 (ion gauge off) = %v, want NaN", v)
	}
	status, err := s.inputRegisters(StatusBase, 4)
	// Bit 0 (good) for channels 1, 2 and 4, bit 4 (off) for the ion gauge.
	if err != nil || status[0] != 1 || status[1] != 1 || status[2] != 16 || status[3] != 1 {
		t.Errorf("status registers = %v, %v; want [1 1 16 1]", status, err)
	}
	if err := ins[1].Fail(ModeSilent); err != nil {
		t.Fatal(err)
	}
	if _, err := s.inputRegisters(2, 2); !errors.Is(err, modbus.ErrServerDeviceFailure) {
		t.Errorf("reading a silent channel: err = %v, want server device failure", err)
	}
	if r, err := s.inputRegisters(0, 2); err != nil || len(r) != 2 {
		t.Errorf("reading channel 1 beside a silent one: %v, %v", r, err)
	}
	for _, c := range []struct{ addr, qty uint16 }{{0, 9}, {8, 1}, {StatusBase - 1, 2}, {StatusBase + 3, 2}, {50, 1}} {
		if _, err := s.inputRegisters(c.addr, c.qty); !errors.Is(err, modbus.ErrIllegalDataAddress) {
			t.Errorf("read %d registers at %d: err = %v, want illegal data address", c.qty, c.addr, err)
		}
	}
	if _, err := s.inputRegisters(0, 0); !errors.Is(err, modbus.ErrIllegalDataValue) {
		t.Errorf("zero registers: err = %v, want illegal data value", err)
	}
}

// Every drivers.Status has its own flag, one bit, as the register map
// documents: 1 ok, 2 under-range, 4 over-range, 8 sensor-fault, 16 off.
func TestStatusFlagsCoverEveryStatus(t *testing.T) {
	want := map[drivers.Status]uint16{drivers.StatusOK: 1, drivers.StatusUnderRange: 2, drivers.StatusOverRange: 4,
		drivers.StatusSensorFault: 8, drivers.StatusOff: 16}
	for st := drivers.StatusOK; st <= drivers.StatusOff; st++ {
		if got := register(shown{status: st}, StatusBase, false); got != want[st] || want[st] == 0 {
			t.Errorf("status %v: register %d, want %d", st, got, want[st])
		}
	}
}
