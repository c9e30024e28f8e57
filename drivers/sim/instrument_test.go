package sim

import (
	"context"
	"math"
	"strconv"
	"strings"
	"testing"
	"time"

	"holdfast/drivers"
)

// heldAt is a sealed chamber with no gas load: its pressure stays at p.
func heldAt(t *testing.T, p float64) (*Chamber, *manualClock) {
	t.Helper()
	return newTestChamber(t, Config{Volume: 0.03, StartPressure: p, AmbientC: 22, Isolated: true, Seed: 7})
}

func mustInstrument(t *testing.T, ch *Chamber, ic InstrumentConfig) *Instrument {
	t.Helper()
	in, err := ch.Instrument(ic)
	if err != nil {
		t.Fatalf("Instrument(%+v): %v", ic, err)
	}
	return in
}

func mustRead(t *testing.T, in *Instrument) drivers.Reading {
	t.Helper()
	r, err := in.Read(context.Background())
	if err != nil {
		t.Fatalf("%s: Read: %v", in.Name(), err)
	}
	return r
}

// The default sensor is the REFERENCES.md §5b worked example: a = 0.5 mW/Pa,
// p_t = 100 Pa gives a gas term of 4.5455 mW at 10 Pa and 25 mW at p_t, half
// the 50 mW saturation (form from Jousten, Handbook of Vacuum Technology,
// from memory).
func TestDefaultHeatLossIsTheWorkedExample(t *testing.T) {
	h := DefaultHeatLoss()
	for _, c := range []struct{ p, gas, tol float64 }{{10, 4.5455, 1e-4}, {100, 25, 1e-12}} {
		if got := h.Signal(c.p) - h.S0; relErr(got, c.gas) > c.tol {
			t.Errorf("gas term at %g Pa = %.6g mW, want %g", c.p, got, c.gas)
		}
	}
}

// A Pirani's raw signal follows the heat-loss curve, and inverting it with
// the same curve (calib.HeatLoss.Apply) recovers the pressure within the
// noise and the print resolution.
func TestPiraniFollowsHeatLossCurve(t *testing.T) {
	h := DefaultHeatLoss()
	for _, p := range []float64{0.5, 1, 5, 10, 50, 100, 500, 1000} {
		ch, clk := heldAt(t, p)
		in := mustInstrument(t, ch, InstrumentConfig{Name: "pirani", Kind: KindPirani})
		want := h.Signal(p)
		gas := want - h.S0
		sigma := math.Hypot(piraniDefaultRel*gas, h.A*piraniFloorPa)
		bound := 5*sigma + 0.5*math.Pow(10, math.Floor(math.Log10(want))-2) // 5σ plus half the 3rd digit
		slope := h.A / math.Pow(1+p/h.Pt, 2)                                // d signal / dp
		for i := range 200 {
			clk.at(time.Duration(i) * time.Second)
			r := mustRead(t, in)
			if math.Abs(r.Raw-want) > bound || r.Status != drivers.StatusOK {
				t.Fatalf("p = %g Pa: raw %g (%s), want %g ± %g (ok)", p, r.Raw, r.Status, want, bound)
			}
			got, err := in.Transfer().Apply(r.Raw)
			if err != nil || math.Abs(got-p) > 1.01*bound/slope {
				t.Fatalf("p = %g Pa: inverted %g (err %v), want within %g Pa", p, got, err, bound/slope)
			}
		}
	}
}

// Near its limits a Pirani says so: under-range in high vacuum, over-range
// where the gas conduction has saturated near atmosphere.
func TestPiraniLimits(t *testing.T) {
	for _, c := range []struct {
		p    float64
		want drivers.Status
		frac float64 // at least this share of reads
	}{
		{1e-3, drivers.StatusUnderRange, 0.95},
		{1, drivers.StatusOK, 1},
		{1000, drivers.StatusOK, 1},
		{Atmosphere, drivers.StatusOverRange, 0.95},
	} {
		ch, clk := heldAt(t, c.p)
		in := mustInstrument(t, ch, InstrumentConfig{Name: "pirani", Kind: KindPirani})
		n := 0
		for i := range 400 {
			clk.at(time.Duration(i) * time.Second)
			if mustRead(t, in).Status == c.want {
				n++
			}
		}
		if float64(n) < c.frac*400 {
			t.Errorf("p = %g Pa: %d of 400 reads %s, want at least %.0f%%", c.p, n, c.want, 100*c.frac)
		}
	}
}

// A CDG is linear, 0–10 V over full scale. Source: REFERENCES.md §6 and §7a
// (maker's manual, brand withheld): 6.0 V on a 10 Torr gauge is 6.0 Torr =
// 799.934 Pa.
func TestCDGLinear(t *testing.T) {
	fs := 10 * torr
	ch, clk := heldAt(t, 6*torr)
	in := mustInstrument(t, ch, InstrumentConfig{Name: "cdg", Kind: KindCDG, FullScale: fs})
	for i := range 100 {
		clk.at(time.Duration(i) * time.Second)
		if r := mustRead(t, in); r.Raw != 6.00 || r.Status != drivers.StatusOK {
			t.Fatalf("at 6 Torr: raw %g V (%s), want 6.00 V (noise 1e-4 FS is below the 3rd digit)", r.Raw, r.Status)
		}
	}
	if p, err := in.Transfer().Apply(6.0); err != nil || math.Abs(p-799.934) > 0.0005 {
		t.Errorf("6.0 V → %g Pa (err %v), want 799.934", p, err)
	}
	for _, c := range []struct {
		p    float64
		raw  float64
		want drivers.Status
	}{
		{1.2 * fs, 11, drivers.StatusOverRange}, // clipped above 1.1 FS
		{0.25 * fs, 2.50, drivers.StatusOK},
	} {
		ch, _ := heldAt(t, c.p)
		r := mustRead(t, mustInstrument(t, ch, InstrumentConfig{Name: "cdg", Kind: KindCDG, FullScale: fs}))
		if r.Raw != c.raw || r.Status != c.want {
			t.Errorf("p = %g Pa: raw %g V (%s), want %g V (%s)", c.p, r.Raw, r.Status, c.raw, c.want)
		}
	}
	ch, _ = heldAt(t, 1e-9)
	if r := mustRead(t, mustInstrument(t, ch, InstrumentConfig{Name: "cdg", Kind: KindCDG, FullScale: fs, Noise: 1e-9})); r.Status != drivers.StatusUnderRange {
		t.Errorf("near zero: %s, want under-range", r.Status)
	}
}

// An ionisation gauge reads only in high vacuum: off above its protect
// pressure (by default the top of a hot-cathode gauge's range, about
// 1e-3 Torr ≈ 0.13 Pa, from memory, rounded to 1e-1 Pa; REFERENCES.md §8),
// back on below it, under-range below its floor.
func TestIonGaugeProtects(t *testing.T) {
	for _, c := range []struct {
		p    float64
		want drivers.Status
	}{{1, drivers.StatusOff}, {0.2, drivers.StatusOff}, {2e-2, drivers.StatusOK}, {1e-4, drivers.StatusOK}, {1e-10, drivers.StatusUnderRange}} {
		ch, _ := heldAt(t, c.p)
		r := mustRead(t, mustInstrument(t, ch, InstrumentConfig{Name: "ion", Kind: KindIon}))
		if r.Status != c.want {
			t.Errorf("p = %g Pa: %s, want %s", c.p, r.Status, c.want)
		}
		if c.want == drivers.StatusOK && relErr(r.Raw, c.p) > 0.05 {
			t.Errorf("p = %g Pa: raw %g, want within 5 %%", c.p, r.Raw)
		}
	}
	cfg := pumpedConfig()
	cfg.Outgassing = 0
	cfg.Events = []Event{{After: time.Hour, Action: ActIsolate}}
	cfg.Leak = 1e-6
	ch, clk := newTestChamber(t, cfg)
	in := mustInstrument(t, ch, InstrumentConfig{Name: "ion", Kind: KindIon, Protect: 1e-3})
	for _, c := range []struct {
		at   time.Duration
		want drivers.Status
	}{{0, drivers.StatusOff}, {30 * time.Minute, drivers.StatusOK}, {time.Hour + 2*time.Minute, drivers.StatusOff}} {
		clk.at(c.at)
		if r := mustRead(t, in); r.Status != c.want {
			t.Errorf("at %s (p = %g Pa, protect 1e-3): %s, want %s", c.at, ch.State().Pressure, r.Status, c.want)
		}
	}
}

// A thermocouple reads the wall or the room with 0.2 K of noise (sample
// standard deviation of Gaussian noise; common practice).
func TestThermocouple(t *testing.T) {
	ch, clk := newTestChamber(t, Config{Volume: 0.03, AmbientC: 21, Isolated: true,
		Events: []Event{{Action: ActBake, Value: 120}}})
	wall := mustInstrument(t, ch, InstrumentConfig{Name: "wall", Kind: KindThermocouple, Digits: 5})
	room := mustInstrument(t, ch, InstrumentConfig{Name: "room", Kind: KindThermocouple, Where: "ambient", Digits: 5})
	var sum, sq float64
	const n = 2000
	for i := range n {
		clk.at(10*time.Hour + time.Duration(i)*time.Second)
		st := ch.State()
		w, r := mustRead(t, wall), mustRead(t, room)
		d := w.Raw - st.WallC
		sum += d
		sq += d * d
		if math.Abs(r.Raw-21) > 1 {
			t.Fatalf("room reads %g °C, want 21 ± 1", r.Raw)
		}
	}
	mean, sd := sum/n, math.Sqrt(sq/n-(sum/n)*(sum/n))
	if math.Abs(mean) > 0.03 || math.Abs(sd-0.2) > 0.02 {
		t.Errorf("wall error mean %.3f K, sd %.3f K; want 0 ± 0.03 and 0.2 ± 0.02", mean, sd)
	}
}

// Values round to significant digits as a printed decimal would.
func TestRoundDigits(t *testing.T) {
	for _, c := range []struct {
		v    float64
		d    int
		want float64
	}{
		{101325, 3, 101000},
		{0.00123456, 3, 0.00123},
		{9.996, 3, 10.0},
		{-1.2345e-6, 2, -1.2e-6},
		{6.0004, 3, 6.00},
		{49.951, 4, 49.95},
		{0, 3, 0},
	} {
		if got := roundDigits(c.v, c.d); got != c.want {
			t.Errorf("roundDigits(%g, %d) = %g, want %g", c.v, c.d, got, c.want)
		}
	}
	ch, clk := heldAt(t, 3.3)
	for _, d := range []int{1, 2, 3, 5} {
		in := mustInstrument(t, ch, InstrumentConfig{Name: "p" + strconv.Itoa(d), Kind: KindPirani, Digits: d})
		for i := range 50 {
			clk.at(time.Duration(i) * time.Second)
			raw := mustRead(t, in).Raw
			if n := sigDigits(raw); n > d {
				t.Fatalf("digits %d: raw %v has %d significant digits", d, raw, n)
			}
		}
	}
}

// sigDigits counts the significant digits of v's shortest decimal form.
func sigDigits(v float64) int {
	s := strconv.FormatFloat(math.Abs(v), 'e', -1, 64)
	mant, _, _ := strings.Cut(s, "e")
	return len(strings.Replace(mant, ".", "", 1))
}

// A thermocouple with a probe reports E(t_wall) − E(t_room) in mV; an rtd
// R(t) in Ω. At start the wall is at the room's 22 °C, so the type K EMF
// is about 0 mV (noise 0.2 K ≈ 8 µV) and the instrument's own transfer,
// with the room as cold junction, gives back about 22 °C. A Pt100 at 22 °C
// is 100·(1 + 3.9083e-3·22 − 5.775e-7·484) = 108.5703 Ω (IEC 60751, D).
func TestProbeOutputs(t *testing.T) {
	ch, _ := newTestChamber(t, Config{Volume: 0.03, AmbientC: 22, Rough: Pump{Speed: 0.01, Ultimate: 1}})
	tc, err := ch.Instrument(InstrumentConfig{Name: "tc-k", Kind: KindThermocouple, Probe: "K", Digits: 6, Noise: 1e-9})
	if err != nil {
		t.Fatal(err)
	}
	rtd, err := ch.Instrument(InstrumentConfig{Name: "pt", Kind: KindRTD, Digits: 7, Noise: 1e-9})
	if err != nil {
		t.Fatal(err)
	}
	r, err := tc.Read(context.Background())
	if err != nil || math.Abs(r.Raw) > 1e-6 {
		t.Errorf("type K EMF at the room's temperature = %g mV, %v; want 0", r.Raw, err)
	}
	if c, err := tc.Transfer().Apply(r.Raw); err != nil || math.Abs(c-22) > 1e-3 {
		t.Errorf("its transfer gives %g °C, %v; want 22", c, err)
	}
	r, err = rtd.Read(context.Background())
	if err != nil || math.Abs(r.Raw-108.5703) > 1e-3 {
		t.Errorf("Pt100 at 22 °C = %g Ω, %v; want 108.5703", r.Raw, err)
	}
	if _, err := ch.Instrument(InstrumentConfig{Name: "bad", Kind: KindIon, Probe: "K"}); err == nil {
		t.Error("an ion gauge took a probe")
	}
}
