package calib_test

import (
	"fmt"
	"math"

	"holdfast/calib"
)

// 760 mm of conventional mercury under standard gravity is the standard
// atmosphere (10th CGPM 1954; NIST SP 811 B.8).
func ExampleColumn() {
	p, err := calib.Column{Height: 0.760, Density: calib.ConventionalMercury}.Pressure()
	fmt.Printf("%.1f Pa, %v\n", p, err)
	// Output: 101325.0 Pa, <nil>
}

// Normal gravity at 45° latitude, 500 m up (IGF80 with the free-air
// correction; REFERENCES.md §2b).
func ExampleLocalGravity() {
	g, _ := calib.LocalGravity(45, 500)
	fmt.Printf("%.7f m/s²\n", g)
	// Output: 9.8046562 m/s²
}

// A gauge with a generic log output, 1 V per decade and 4 V at 1 Torr
// (REFERENCES.md §7a): fitted from its points, 5.5 V reads 31.6228 Torr.
func ExampleFit() {
	const torr = 101325.0 / 760
	var pts []calib.Point
	for u := 1.0; u <= 9; u++ {
		pts = append(pts, calib.Point{Raw: u, Reference: torr * math.Pow(10, u-4)})
	}
	c, err := calib.Fit("log-linear", pts, calib.FitOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	p, _ := c.Apply(5.5)
	fmt.Printf("%.4f Torr\n", p/torr)
	// Output: 31.6228 Torr
}

// The Knudsen limit for a gauge at 45 °C on a chamber at 20 °C
// (REFERENCES.md §6a): the gauge reads 4.18 % high.
func ExampleMolecularRatio() {
	r, _ := calib.MolecularRatio(45, 20)
	fmt.Printf("%.7f\n", r)
	// Output: 1.0417680
}
