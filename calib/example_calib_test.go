package calib_test

import (
	"fmt"
	"math"

	"holdfast/calib"
)

// 760 mm of conventional mercury (13595.1 kg/m³) under standard gravity
// (9.80665 m/s², 3rd CGPM 1901) is the standard atmosphere, 101325 Pa (10th
// CGPM 1954, Res. 4; NIST SP 811 App. B prints 1 mmHg = 1.333 224 E+02 Pa).
func ExampleColumn() {
	p, err := calib.Column{Height: 0.760, Density: calib.ConventionalMercury}.Pressure()
	fmt.Printf("%.1f Pa, %v\n", p, err)
	// Output: 101325.0 Pa, <nil>
}

// Normal gravity at 45° latitude, 500 m up: GRS80 normal gravity at 45°,
// 9.8061992 m/s² (Somigliana's closed form with the constants of H. Moritz,
// "Geodetic Reference System 1980", J. Geodesy 74 (2000) 128), less the
// free-air 3.086e-6 m/s² per metre (Heiskanen & Moritz, Physical Geodesy,
// from memory): 9.8061992 − 0.001543 = 9.8046562 m/s².
func ExampleLocalGravity() {
	g, _ := calib.LocalGravity(45, 500)
	fmt.Printf("%.7f m/s²\n", g)
	// Output: 9.8046562 m/s²
}

// A gauge with a log output, fitted from its points. The characteristic is
// an invented example (0.8 V per decade, 4.0 V at 1 mbar; REFERENCES.md
// §7a), so the result is hand arithmetic, not a published value:
// 5.6 V → 10^((5.6 − 4)/0.8) = 100 mbar.
func ExampleFit() {
	var pts []calib.Point
	for u := 1.0; u <= 9; u++ {
		pts = append(pts, calib.Point{Raw: u, Reference: 100 * math.Pow(10, (u-4)/0.8)}) // Pa
	}
	c, err := calib.Fit("log-linear", pts, calib.FitOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	p, _ := c.Apply(5.6)
	fmt.Printf("%.4f mbar\n", p/100)
	// Output: 100.0000 mbar
}

// The Knudsen limit for a gauge at 45 °C on a chamber at 20 °C: p_g/p_c =
// √(T_g/T_c) (M. Knudsen, Ann. Phys. 1909; REFERENCES.md §6) =
// √(318.15/293.15) = 1.0417680 by hand, the gauge reading 4.18 % high.
func ExampleMolecularRatio() {
	r, _ := calib.MolecularRatio(45, 20)
	fmt.Printf("%.7f\n", r)
	// Output: 1.0417680
}
