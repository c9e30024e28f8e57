package sim

import (
	"io"
	"math"

	"github.com/simonvetter/modbus"

	"holdfast/drivers"
)

// The Modbus register map of a Server, all in the input table (function 4),
// addresses 0-based as on the wire:
//
//	2(n-1), 2(n-1)+1   channel n's value, IEEE 754 float32, high word first,
//	                   each word big-endian (the Modbus default); NaN when
//	                   the instrument gives no number (sensor-fault, off)
//	StatusBase+(n-1)   channel n's status flags, one bit set at a time:
//	                   bit 0 (1) reading good, bit 1 (2) below range,
//	                   bit 2 (4) above range, bit 3 (8) sensor fault,
//	                   bit 4 (16) channel off; the other bits are 0
//
// Values are in the units of ServeOptions (pressures) and °C. A read that
// touches a channel whose instrument is silent gets exception 4 (server
// device failure); a read of an address outside the map gets exception 2
// (illegal data address). There are no holding registers, coils or
// discrete inputs.
const StatusBase = 100

// The status register's flags; see StatusBase.
var statusFlags = map[drivers.Status]uint16{
	drivers.StatusOK: 1 << 0, drivers.StatusUnderRange: 1 << 1, drivers.StatusOverRange: 1 << 2,
	drivers.StatusSensorFault: 1 << 3, drivers.StatusOff: 1 << 4,
}

// ServeRTU answers Modbus RTU requests for unit arriving on rw until rw
// fails (its owner closed it), with the register map above.
func (s *Server) ServeRTU(rw io.ReadWriter, unit uint8) error {
	return drivers.ServeRTU(rw, unit, rtuHandler{s})
}

// rtuHandler adapts a Server to the library's request handler.
type rtuHandler struct{ s *Server }

var _ modbus.RequestHandler = rtuHandler{}

func (h rtuHandler) HandleCoils(*modbus.CoilsRequest) ([]bool, error) {
	return nil, modbus.ErrIllegalFunction
}

func (h rtuHandler) HandleDiscreteInputs(*modbus.DiscreteInputsRequest) ([]bool, error) {
	return nil, modbus.ErrIllegalFunction
}

func (h rtuHandler) HandleHoldingRegisters(*modbus.HoldingRegistersRequest) ([]uint16, error) {
	return nil, modbus.ErrIllegalDataAddress
}

func (h rtuHandler) HandleInputRegisters(req *modbus.InputRegistersRequest) ([]uint16, error) {
	return h.s.inputRegisters(req.Addr, req.Quantity)
}

// inputRegisters returns qty registers from addr, reading each touched
// channel once.
func (s *Server) inputRegisters(addr, qty uint16) ([]uint16, error) {
	n := len(s.ins)
	first, last := int(addr), int(addr)+int(qty)-1
	var values bool
	switch {
	case qty == 0:
		return nil, modbus.ErrIllegalDataValue
	case last < 2*n:
		values = true
	case first >= StatusBase && last < StatusBase+n:
	default:
		return nil, modbus.ErrIllegalDataAddress
	}
	regs := make([]uint16, 0, qty)
	seen := map[int]shown{}
	for a := first; a <= last; a++ {
		ch := a - StatusBase
		if values {
			ch = a / 2
		}
		sh, ok := seen[ch]
		if !ok {
			sh = s.show(ch + 1)
			seen[ch] = sh
		}
		if sh.silent {
			return nil, modbus.ErrServerDeviceFailure
		}
		regs = append(regs, register(sh, a, values))
	}
	return regs, nil
}

// register is the one register at address a of a channel's reading.
func register(sh shown, a int, values bool) uint16 {
	if !values {
		return statusFlags[sh.status]
	}
	bits := math.Float32bits(float32(sh.value))
	if math.IsNaN(sh.value) {
		bits = 0x7FC00000 // the quiet NaN
	}
	if a%2 == 0 {
		return uint16(bits >> 16)
	}
	return uint16(bits)
}
