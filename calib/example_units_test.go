package calib_test

import (
	"fmt"

	"holdfast/calib"
)

// One Torr is 101325/760 Pa, and one standard atmosphere is 14.6959 psi
// (10th CGPM 1954, Res. 4; NIST SP 811 App. B.8).
func ExampleConvert() {
	pa, err := calib.Convert(1, "Torr", "Pa")
	if err != nil {
		fmt.Println(err)
		return
	}
	psi, err := calib.Convert(1, "atm", "psi")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("1 Torr = %.6f Pa\n", pa)
	fmt.Printf("1 atm = %.4f psi\n", psi)
	// Output:
	// 1 Torr = 133.322368 Pa
	// 1 atm = 14.6959 psi
}

// A leak rate of 1.2e-6 mbar·L/s is 1.2e-7 Pa·m³/s (1 mbar·L/s = 0.1 Pa·m³/s,
// REFERENCES.md §3a); 150 mTorr is 19.998 Pa.
func ExampleParse() {
	q, err := calib.Parse("1.2e-6 mbar*L/s", calib.Throughput)
	if err != nil {
		fmt.Println(err)
		return
	}
	p, err := calib.Parse("150 mTorr", calib.Pressure)
	if err != nil {
		fmt.Println(err)
		return
	}
	_, err = calib.Parse("5 L", calib.Pressure)
	fmt.Printf("%.2g Pa*m3/s\n%.3f Pa\n%v\n", q, p, err)
	// Output:
	// 1.2e-07 Pa*m3/s
	// 19.998 Pa
	// "5 L" is a volume; want a pressure such as "5e-3 mbar"
}

// One micron of mercury (0.133322 Pa) shown in mbar, and the boiling point
// of water at one atmosphere, 100 °C, in °F (NIST SP 811 B.9: 212 °F).
func ExampleFormat() {
	mbar, _ := calib.LookupUnit("mbar")
	f, _ := calib.LookupUnit("F")
	fmt.Println(calib.Format(0.133322387415, mbar))
	fmt.Println(calib.Format(100, f))
	// Output:
	// 1.33e-03 mbar
	// 212 °F
}

// Durations take Go's syntax, days, or a number with a time unit.
func ExampleParseDuration() {
	for _, s := range []string{"1h30m", "30 min", "2d"} {
		d, err := calib.ParseDuration(s)
		if err != nil {
			fmt.Println(err)
			continue
		}
		fmt.Println(d)
	}
	// Output:
	// 1h30m0s
	// 30m0s
	// 48h0m0s
}
