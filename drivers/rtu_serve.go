package drivers

import (
	"bufio"
	"errors"
	"io"

	"github.com/simonvetter/modbus"
)

// ServeRTU answers Modbus RTU requests arriving on rw (for instance the
// master side of a pseudo-terminal) for unit, with handler giving the data,
// so a simulated instrument can be read through the same serial path as a
// real one. The handler is the one github.com/simonvetter/modbus's TCP
// server takes, so one handler serves both transports. Function codes 1-4
// (reads) and 6 (write single register) are served and other eight-byte
// requests get the "illegal function" exception; multi-write requests (15,
// 16) are longer and are not served. Bytes that do not form a frame with a
// good CRC are dropped one at a time until the stream is in step again. ServeRTU returns when rw fails,
// typically because its owner closed it.
func ServeRTU(rw io.ReadWriter, unit uint8, handler modbus.RequestHandler) error {
	r := bufio.NewReader(rw)
	frame := make([]byte, 0, 8)
	for {
		for len(frame) < 8 {
			b, err := r.ReadByte()
			if err != nil {
				return err
			}
			frame = append(frame, b)
		}
		if CRC16Modbus(frame[:6]) != uint16(frame[6])|uint16(frame[7])<<8 {
			frame = append(frame[:0], frame[1:]...) // out of step: slide by one byte
			continue
		}
		if frame[0] == unit {
			if _, err := rw.Write(rtuAnswer(frame, handler)); err != nil {
				return err
			}
		}
		frame = frame[:0]
	}
}

// rtuAnswer builds the reply frame, CRC included, to one request frame.
func rtuAnswer(req []byte, h modbus.RequestHandler) []byte {
	unit, fc := req[0], req[1]
	addr, qty := uint16(req[2])<<8|uint16(req[3]), uint16(req[4])<<8|uint16(req[5])
	pdu, err := rtuData(unit, fc, addr, qty, h)
	if err != nil {
		pdu = []byte{fc | 0x80, rtuException(err)}
	}
	out := append([]byte{unit}, pdu...)
	crc := CRC16Modbus(out)
	return append(out, byte(crc), byte(crc>>8))
}

func rtuData(unit, fc uint8, addr, qty uint16, h modbus.RequestHandler) ([]byte, error) {
	switch fc {
	case 1, 2:
		var bits []bool
		var err error
		if fc == 1 {
			bits, err = h.HandleCoils(&modbus.CoilsRequest{UnitId: unit, Addr: addr, Quantity: qty})
		} else {
			bits, err = h.HandleDiscreteInputs(&modbus.DiscreteInputsRequest{UnitId: unit, Addr: addr, Quantity: qty})
		}
		if err != nil {
			return nil, err
		}
		packed := make([]byte, (len(bits)+7)/8)
		for i, b := range bits {
			if b {
				packed[i/8] |= 1 << (i % 8)
			}
		}
		return append([]byte{fc, byte(len(packed))}, packed...), nil
	case 3, 4:
		var regs []uint16
		var err error
		if fc == 3 {
			regs, err = h.HandleHoldingRegisters(&modbus.HoldingRegistersRequest{UnitId: unit, Addr: addr, Quantity: qty})
		} else {
			regs, err = h.HandleInputRegisters(&modbus.InputRegistersRequest{UnitId: unit, Addr: addr, Quantity: qty})
		}
		if err != nil {
			return nil, err
		}
		out := []byte{fc, byte(2 * len(regs))}
		for _, v := range regs {
			out = append(out, byte(v>>8), byte(v))
		}
		return out, nil
	case 6:
		_, err := h.HandleHoldingRegisters(&modbus.HoldingRegistersRequest{UnitId: unit, Addr: addr, Quantity: 1, IsWrite: true, Args: []uint16{qty}})
		if err != nil {
			return nil, err
		}
		return []byte{fc, byte(addr >> 8), byte(addr), byte(qty >> 8), byte(qty)}, nil
	}
	return nil, modbus.ErrIllegalFunction
}

// rtuException maps a handler's error to a Modbus exception code, as the
// library's own server does.
func rtuException(err error) byte {
	codes := map[error]byte{
		modbus.ErrIllegalFunction: 1, modbus.ErrIllegalDataAddress: 2, modbus.ErrIllegalDataValue: 3,
		modbus.ErrServerDeviceFailure: 4, modbus.ErrAcknowledge: 5, modbus.ErrServerDeviceBusy: 6,
	}
	for e, c := range codes {
		if errors.Is(err, e) {
			return c
		}
	}
	return 4
}
