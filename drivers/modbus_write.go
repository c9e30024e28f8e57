package drivers

import (
	"context"
	"fmt"

	"github.com/simonvetter/modbus"
)

// WriteCoil sets coil addr (a 0-based PDU address) of unit to on with one
// write-single-coil request (function 0x05), reopening the link first when
// due. Errors name the link's target, the unit and the coil, and wrap
// ErrNoReply or ErrLinkDown as a read's would. Whatever the coil drives is
// the plant's business: the caller must only write coils whose every
// state is safe.
func (l *ModbusLink) WriteCoil(ctx context.Context, unit uint8, addr uint16, on bool) error {
	if unit == 0 {
		unit = 1
	}
	err := l.do(ctx, unit, func(c *modbus.ModbusClient) error { return c.WriteCoil(addr, on) })
	if err != nil {
		return fmt.Errorf("write coil %d: %w", addr, err)
	}
	return nil
}

// ReadCoil returns the state of coil addr of unit (function 0x01), so a
// caller can put a coil back the way it found it.
func (l *ModbusLink) ReadCoil(ctx context.Context, unit uint8, addr uint16) (bool, error) {
	if unit == 0 {
		unit = 1
	}
	var on bool
	err := l.do(ctx, unit, func(c *modbus.ModbusClient) error {
		var err error
		on, err = c.ReadCoil(addr)
		return err
	})
	if err != nil {
		return false, fmt.Errorf("read coil %d: %w", addr, err)
	}
	return on, nil
}
