package drivers

import (
	"fmt"

	"github.com/simonvetter/modbus"
)

func (l *ModbusLink) fail(cause error) error {
	if l.client != nil {
		_ = l.client.Close() // the transport already failed
		l.client = nil
	}
	return l.down(cause)
}

func (l *ModbusLink) reopen() error {
	if err := l.due(); err != nil {
		return err
	}
	c, err := l.openClient()
	if err != nil {
		return l.openFailed(err)
	}
	l.client = c
	l.up()
	return nil
}

func (l *ModbusLink) openClient() (*modbus.ModbusClient, error) {
	if l.rs485 {
		if err := enableRS485(l.target); err != nil {
			return nil, fmt.Errorf("rs485: %w", err)
		}
	}
	c, err := modbus.NewClient(&l.conf)
	if err != nil {
		return nil, err
	}
	if err := c.Open(); err != nil {
		return nil, fmt.Errorf("open %s: %w", l.target, err)
	}
	return c, nil
}
