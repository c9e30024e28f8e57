package drivers_test

import (
	"strings"
	"testing"

	"holdfast/drivers"
	"holdfast/drivers/driverstest"
)

func TestRegistry(t *testing.T) {
	for _, k := range []string{"ascii", "scpi", "modbus", "sim"} {
		if !drivers.Known(k) {
			t.Errorf("Known(%q) = false; kinds %v", k, drivers.Kinds())
		}
	}
	_, err := drivers.New("nope", driverstest.Lines("x"), drivers.Options{})
	if err == nil || !strings.Contains(err.Error(), "known: ascii, modbus, scpi, sim") {
		t.Errorf("unknown kind: %v, want the known kinds listed", err)
	}
	if _, err := drivers.New("modbus", driverstest.Lines("x"), drivers.Options{}); err == nil || !strings.Contains(err.Error(), "NewModbus") {
		t.Errorf("modbus through New: %v, want a pointer to NewModbus", err)
	}
	d, err := drivers.New("scpi", driverstest.Lines("1\n"), drivers.Options{SCPI: drivers.SCPIOptions{Query: "READ?"}})
	if _, ok := d.(drivers.MultiDriver); err != nil || !ok {
		t.Errorf("New(scpi) = %T, %v; want a MultiDriver", d, err)
	}
}
