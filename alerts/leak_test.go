package alerts

import (
	"math"
	"testing"

	"holdfast/calib"
)

func relClose(got, want, tol float64) bool { return math.Abs(got-want) <= tol*math.Abs(want) }

// linearRecord returns n readings from p1 to p2 (Pa) over span seconds.
func linearRecord(n int, span, p1, p2 float64) (t, p []float64) {
	for i := range n {
		ti := span * float64(i) / float64(n-1)
		t, p = append(t, ti), append(p, p1+(p2-p1)*ti/span)
	}
	return t, p
}

// REFERENCES.md §3b "rate of rise": V = 100 L, 1.0e-2 → 5.0e-2 mbar in 600 s
// gives Q = 6.6667e-3 mbar·L/s = 6.6667e-4 Pa·m³/s = 5.0004e-3 Torr·L/s =
// 6.5795e-3 atm cc/s = 0.39477 sccm (the Q = V·dp/dt relation, EN 13184 as
// REFERENCES.md §3 confirms it). The table prints 5 significant digits, so the
// comparison is to half a unit in the 5th digit.
func TestRateOfRiseWorkedCheck(t *testing.T) {
	const v = 0.1 // 100 L in m³
	tt, p := linearRecord(61, 600, 1.0, 5.0)
	res, err := AnalyzeRise(tt, p, v, RiseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if res.Classification != LeakDominated || res.Fit.Model != ModelLine {
		t.Errorf("classification %s, model %s; want leak-dominated line", res.Classification, res.Fit.Model)
	}
	two, err := TwoReadingLeak(v, 0, 1.0, 600, 5.0)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		unit string
		want float64
	}{
		{"Pa*m3/s", 6.6667e-4}, {"mbar*L/s", 6.6667e-3}, {"Torr*L/s", 5.0004e-3},
		{"atm*cc/s", 6.5795e-3}, {"sccm", 0.39477},
	} {
		for name, q := range map[string]float64{"AnalyzeRise": res.LeakRate, "TwoReadingLeak": two} {
			got, err := calib.Convert(q, "Pa*m3/s", c.unit)
			if err != nil {
				t.Fatal(err)
			}
			if !relClose(got, c.want, 1e-4) {
				t.Errorf("%s: Q = %.6g %s, want %.5g", name, got, c.unit, c.want)
			}
		}
	}
	if !relClose(res.LeakRate, 4*v/600, 1e-9) {
		t.Errorf("Q = %.10g Pa·m³/s, want V·Δp/Δt = %.10g", res.LeakRate, 4*v/600)
	}
}

// REFERENCES.md §3b "furnace µm/h to Q": 10 µmHg/h in 1.000 m³ gives
// dp/dt = 3.7034e-4 Pa/s and Q = 3.7034e-4 Pa·m³/s = 3.7034e-3 mbar·L/s
// (rel 1e-6 of the unrounded value; the table's 5 digits to 1e-5).
func TestFurnaceRateWorkedCheck(t *testing.T) {
	rate, err := calib.Convert(10, "micron", "Pa") // per hour
	if err != nil {
		t.Fatal(err)
	}
	rate /= 3600
	tt, p := linearRecord(61, 3600, 1.33e-2, 1.33e-2+3600*rate)
	res, err := AnalyzeRise(tt, p, 1.0, RiseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if !relClose(res.Fit.Slope, 3.7034e-4, 1e-5) || !relClose(res.Fit.Slope, rate, 1e-6) {
		t.Errorf("dp/dt = %.6g Pa/s, want 3.7034e-4", res.Fit.Slope)
	}
	mbarLs, _ := calib.Convert(res.LeakRate, "Pa*m3/s", "mbar*L/s")
	if !relClose(mbarLs, 3.7034e-3, 1e-5) {
		t.Errorf("Q = %.6g mbar·L/s, want 3.7034e-3", mbarLs)
	}
}

// REFERENCES.md §3b classifier vectors, both built by hand from published
// laws rather than read from any record.
//
// Outgassing: the unbaked-wall law q(t) = q₁·(t₁/t)ⁿ with n = 1 for metals
// (J. F. O'Hanlon, A User's Guide to Vacuum Technology, outgassing chapter;
// B. B. Dayton's 1/t law; both from memory), t counted from the start of
// pumping. Sealed at t₀, a volume V rises by V·dp/dt = A·q(t), so
//
//	p(t) = p₀ + (A·q₁·t₁/V)·ln(t/t₀).
//
// Our amplitude: V = 100 L sealed at t₀ = t₁ = 1 min, A·q₁·t₁/V = 0.10 mbar
// (A·q₁ = 0.10 mbar × 100 L / 60 s = 0.1667 mbar·L/s), p₀ = 0.20 mbar. At
// τ = t − t₀ = 0, 1, 3, 5, 10 min, p = 0.20 + 0.10·ln(1 + τ/min):
//
//	ln 1 = 0, ln 2 = 0.693147, ln 4 = 1.386294, ln 6 = 1.791759, ln 11 = 2.397895
//	p = 0.200000, 0.269315, 0.338629, 0.379176, 0.439790 mbar
//
// and the interval rates Δp/Δτ are
//
//	0.10·ln 2/1 = 0.069315, 0.10·ln 2/2 = 0.034657,
//	0.10·ln 1.5/2 = 0.020273, 0.10·ln(11/6)/5 = 0.012123 mbar/min:
//
// falling 5.7-fold, the curve concave: gas from the walls, not a leak. The
// classifier must not call it leak-dominated.
//
// Leak: a constant throughput Q into the sealed volume gives p = p₀ + (Q/V)·τ
// (the pressure-change relation of EN 13184, REFERENCES.md §3). With
// p = 0.20 + 0.02·τ mbar (τ in min) at the same times every interval rate is
// 0.020 mbar/min, and Q = V·dp/dt = 100 L × 0.02 mbar / 60 s =
// 0.033333 mbar·L/s exactly; it must be leak-dominated with Q to rel 1e-9.
func TestClassifierVectors(t *testing.T) {
	minutes := []float64{0, 1, 3, 5, 10}
	tt := make([]float64, len(minutes))
	for i, m := range minutes {
		tt[i] = 60 * m
	}
	opt := RiseOptions{MinPoints: 5, MinSpan: 60}
	const v = 0.1 // m³ (100 L)

	gasMbar := []float64{0.200000, 0.269315, 0.338629, 0.379176, 0.439790} // typed from the hand calculation
	for i, m := range minutes {
		if law := 0.20 + 0.10*math.Log(1+m); math.Abs(gasMbar[i]-law) > 5e-7 {
			t.Fatalf("hand value %d = %.6f mbar, but the law gives %.6f", i, gasMbar[i], law)
		}
	}
	gas := make([]float64, len(gasMbar))
	for i, pm := range gasMbar {
		gas[i] = 100 * pm // Pa
	}
	rates, err := IntervalRates(minutes, gasMbar)
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range []float64{0.069315, 0.034657, 0.020273, 0.012123} {
		if math.Abs(rates[i]-want) > 1e-5 {
			t.Errorf("outgassing interval rate %d = %.6f mbar/min, want %.6f ± 1e-5", i, rates[i], want)
		}
	}
	res, err := AnalyzeRise(tt, gas, v, opt)
	if err != nil {
		t.Fatal(err)
	}
	if res.Classification == LeakDominated || res.Classification == Inconclusive {
		t.Errorf("outgassing vector: %s (%s, share %.2f), want outgassing-dominated or mixed, never leak-dominated",
			res.Classification, res.Reason, res.LeakShare)
	}
	if !(res.LeakShare < 0.5) {
		t.Errorf("outgassing vector: leak share %.2f, want under half (the law has no leak term)", res.LeakShare)
	}
	if res.Fit.Model != ModelCurved {
		t.Errorf("outgassing vector fitted with %s, want the curved model: the rate falls 5.7-fold", res.Fit.Model)
	}

	leak := make([]float64, len(minutes))
	leakMbar := make([]float64, len(minutes))
	for i, m := range minutes {
		leakMbar[i] = 0.20 + 0.02*m
		leak[i] = 100 * leakMbar[i]
	}
	rates, _ = IntervalRates(minutes, leakMbar)
	for i, r := range rates {
		if math.Abs(r-0.020) > 1e-12 {
			t.Errorf("leak interval rate %d = %g mbar/min, want 0.020", i, r)
		}
	}
	res, err = AnalyzeRise(tt, leak, v, opt)
	if err != nil {
		t.Fatal(err)
	}
	const want = 0.033333333333 // mbar·L/s: 100 L × 0.02 mbar / 60 s
	if got := 10 * res.LeakRate; res.Classification != LeakDominated || !relClose(got, want, 1e-9) {
		t.Errorf("leak vector: %s, Q = %.10g mbar·L/s; want leak-dominated, %.10g", res.Classification, got, want)
	}
}
