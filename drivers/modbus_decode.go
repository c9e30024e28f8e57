package drivers

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
)

// RegisterTypes lists the register value types the modbus driver decodes.
var RegisterTypes = []string{"int16", "uint16", "int32", "uint32", "float32"}

// registerCount returns how many 16-bit registers a value of type typ spans.
func registerCount(typ string) (uint16, error) {
	switch typ {
	case "int16", "uint16":
		return 1, nil
	case "int32", "uint32", "float32":
		return 2, nil
	}
	return 0, fmt.Errorf("unknown register type %q (known: %s)", typ, strings.Join(RegisterTypes, ", "))
}

// DecodeRegisters turns registers as read (each big-endian on the wire, as
// Modbus sends them) into a number. 32-bit types span two registers;
// lowWordFirst says the device puts the less significant 16 bits in the
// first register (the order varies between devices; high word first is the
// common default). float32 is IEEE 754 binary32; a NaN or infinite float is
// an error, since no gauge measures one.
func DecodeRegisters(regs []uint16, typ string, lowWordFirst bool) (float64, error) {
	n, err := registerCount(typ)
	if err != nil {
		return 0, err
	}
	if len(regs) != int(n) {
		return 0, fmt.Errorf("%s needs %d registers, got %d", typ, n, len(regs))
	}
	switch typ {
	case "int16":
		return float64(int16(regs[0])), nil
	case "uint16":
		return float64(regs[0]), nil
	}
	hi, lo := regs[0], regs[1]
	if lowWordFirst {
		hi, lo = lo, hi
	}
	u := uint32(hi)<<16 | uint32(lo)
	switch typ {
	case "int32":
		return float64(int32(u)), nil
	case "uint32":
		return float64(u), nil
	}
	f32 := math.Float32frombits(u)
	if math.IsNaN(float64(f32)) || math.IsInf(float64(f32), 0) {
		return 0, fmt.Errorf("registers %04X %04X hold a float32 %v: %w", regs[0], regs[1], f32, errNotMeasurement)
	}
	return shortestFloat32(f32), nil
}

// shortestFloat32 widens f to the float64 nearest the shortest decimal that
// reads back as f: a register holding 21.1 gives 21.1, not the binary32's
// exact value 21.100000381469727, so stored raws, metrics and probe output
// carry the digits the instrument meant. float32(result) == f always.
func shortestFloat32(f float32) float64 {
	v, err := strconv.ParseFloat(strconv.FormatFloat(float64(f), 'g', -1, 32), 64)
	if err != nil { // cannot happen for a finite f; keep the exact value
		return float64(f)
	}
	return v
}

// errNotMeasurement marks a float32 NaN or infinity: the instrument has no
// value to give (a sensor fault), which is not a transport failure.
var errNotMeasurement = errors.New("not a measurement")

// Modbus tables a gauge can read.
var modbusTables = []string{"holding", "input", "coil", "discrete"}

func isBitTable(t string) bool { return t == "coil" || t == "discrete" }

func validTable(t string) bool { return slices.Contains(modbusTables, t) }
