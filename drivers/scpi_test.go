package drivers_test

import (
	"context"
	"math"
	"testing"

	"holdfast/drivers"
	"holdfast/drivers/driverstest"
)

func TestSCPIConformance(t *testing.T) {
	driverstest.Conformance(t, func(l drivers.Link) (drivers.Driver, error) {
		return drivers.NewSCPI(l, drivers.Options{Gauge: "chamber-tc", SCPI: drivers.SCPIOptions{Query: "MEAS:VOLT:DC? (@101)"}})
	}, []byte("+5.50000000E+00\n"), []byte("VOLTS\n"))
}

func TestSCPISpecialValues(t *testing.T) {
	// SCPI-99 vol. 1 §7.2.1.5 (from memory): 9.9E37 is infinity (an overload),
	// -9.9E37 negative infinity, 9.91E37 not-a-number.
	for _, c := range []struct {
		in     string
		raw    float64
		status drivers.Status
	}{
		{"+5.50123400E+00", 5.501234, drivers.StatusOK},
		{"-1.2E-3", -1.2e-3, drivers.StatusOK},
		{"+9.90000000E+37", math.NaN(), drivers.StatusOverRange},
		{"-9.90000000E+37", math.NaN(), drivers.StatusUnderRange},
		{"9.91E37", math.NaN(), drivers.StatusSensorFault},
		{"12", 12, drivers.StatusOK},
	} {
		r, err := drivers.ParseSCPINumber(c.in)
		if err != nil || r.Status != c.status || !sameFloat(r.Raw, c.raw) {
			t.Errorf("ParseSCPINumber(%q) = %+v, %v; want %v %v", c.in, r, err, c.raw, c.status)
		}
	}
}

func TestSCPIScanOfSeveralChannels(t *testing.T) {
	link := driverstest.Lines("+5.5E+00,+9.9E+37,+2.25E+00\n")
	d, err := drivers.NewSCPI(link, drivers.Options{Gauge: "daq", SCPI: drivers.SCPIOptions{
		Query: "MEAS:VOLT:DC? (@101:103)", Channels: []string{"tc", "ion", "cdg"}, Channel: "cdg"}})
	if err != nil {
		t.Fatal(err)
	}
	all, err := d.ReadAll(context.Background())
	if err != nil || all["tc"].Raw != 5.5 || all["ion"].Status != drivers.StatusOverRange || all["cdg"].Raw != 2.25 {
		t.Fatalf("ReadAll = %+v, %v", all, err)
	}
	r, err := d.Read(context.Background())
	if err != nil || r.Raw != 2.25 {
		t.Errorf("Read = %+v, %v; want channel cdg 2.25", r, err)
	}
	if got := string(link.Sent()[0]); got != "MEAS:VOLT:DC? (@101:103)\n" {
		t.Errorf("sent %q", got)
	}
}
