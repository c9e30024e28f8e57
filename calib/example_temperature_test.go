package calib_test

import (
	"fmt"

	"holdfast/calib"
)

// Type K at 100 °C, reference junction at 0 °C: 4.096 mV (NIST Monograph
// 175 table; REFERENCES.md §9).
func ExampleThermocouple_EMF() {
	k, _ := calib.ThermocoupleType("K")
	e, _ := k.EMF(100)
	fmt.Printf("%.3f mV\n", e)
	// Output: 4.096 mV
}

// Type T at −100 °C: −3.379 mV (NIST SRD 60 type T table), and back.
func ExampleThermocouple_Temperature() {
	tt, _ := calib.ThermocoupleType("T")
	t, _ := tt.Temperature(-3.379)
	fmt.Printf("%.1f °C\n", t)
	// Output: -100.0 °C
}

// Cold-junction compensation: a type K reading 3.096 mV with its terminals
// at 25 °C (E(25 °C) = 1.000 mV) is at 100 °C (REFERENCES.md §9).
func ExampleThermocouple_Compensated() {
	k, _ := calib.ThermocoupleType("K")
	t, _ := k.Compensated(3.096, 25)
	fmt.Printf("%.1f °C\n", t)
	// Output: 100.0 °C
}

// A Pt100 at 100 °C reads 138.51 Ω (IEC 60751 table).
func ExampleRTD_Resistance() {
	pt, _ := calib.PlatinumRTD("pt100")
	r, _ := pt.Resistance(100)
	fmt.Printf("%.2f Ω\n", r)
	// Output: 138.51 Ω
}

// And 60.26 Ω is −100 °C (IEC 60751 table), below 0 °C where the equation
// is a quartic.
func ExampleRTD_Temperature() {
	pt, _ := calib.PlatinumRTD("pt100")
	t, _ := pt.Temperature(60.26)
	fmt.Printf("%.1f °C\n", t)
	// Output: -100.0 °C
}
