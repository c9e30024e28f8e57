package alerts

import (
	"errors"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

func TestAnalyzeRiseRejectsBadInput(t *testing.T) {
	tt, p := linearRecord(20, 100, 1, 2)
	for _, c := range []struct {
		name string
		t, p []float64
		v    float64
		want string
	}{
		{"lengths", tt, p[:19], 1, "one pressure per time"},
		{"NaN", tt, append(slices.Clone(p[:19]), math.NaN()), 1, "sample 19"},
		{"Inf time", append(slices.Clone(tt[:19]), math.Inf(1)), p, 1, "not a finite number"},
		{"zero volume", tt, p, 0, "positive finite volume"},
		{"NaN volume", tt, p, math.NaN(), "positive finite volume"},
	} {
		_, err := AnalyzeRise(c.t, c.p, c.v, RiseOptions{})
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: err = %v, want one containing %q", c.name, err, c.want)
		}
	}
}

func TestAnalyzeRiseLeavesInputAlone(t *testing.T) {
	spec := riseSpecs[7] // unsorted, with duplicates
	tt, p := spec.generate()
	t0, p0 := slices.Clone(tt), slices.Clone(p)
	if _, err := AnalyzeRise(tt, p, 1, RiseOptions{}); err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(tt, t0) || !slices.Equal(p, p0) {
		t.Error("AnalyzeRise changed its input slices")
	}
}

func TestAnalyzeRiseInconclusive(t *testing.T) {
	falling := riseSpec{Seed: 21, N: 300, Step: 1, P0: 1, A: -1e-3, Sigma: 1e-4}
	shortSpan := riseSpec{Seed: 22, N: 50, Step: 0.1, P0: 1, A: 1e-3, Sigma: 1e-5}
	for _, c := range []struct {
		name string
		spec riseSpec
		want string
	}{
		{"falling", falling, "falls"},
		{"short span", shortSpan, "spans 4.9 s"},
	} {
		tt, p := c.spec.generate()
		res, err := AnalyzeRise(tt, p, 1, RiseOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if res.Classification != Inconclusive || !strings.Contains(res.Reason, c.want) {
			t.Errorf("%s: %s (%s), want inconclusive with %q", c.name, res.Classification, res.Reason, c.want)
		}
	}
	res, err := AnalyzeRise(nil, nil, 1, RiseOptions{})
	if err != nil || res.Classification != Inconclusive || !strings.Contains(res.Reason, "too short") {
		t.Errorf("empty record: %v, %s (%s); want inconclusive, too short", err, res.Classification, res.Reason)
	}
	res, _ = AnalyzeRise([]float64{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 20}, make([]float64, 12), 1, RiseOptions{})
	if res.Classification != Inconclusive || !strings.Contains(res.Reason, "within noise") {
		t.Errorf("constant record: %s (%s), want inconclusive within noise", res.Classification, res.Reason)
	}
}

// A day at 1 Hz is fitted through groups of samples and still recovers the
// generating leak and outgassing (tolerances as in the fixture table).
func TestAnalyzeRiseLongRecord(t *testing.T) {
	spec := riseSpec{Seed: 23, N: 86400, Step: 1, P0: 1e-3, A: 1e-7, B: 2e-3, Tau: 3600, Sigma: 1e-5}
	tt, p := spec.generate()
	res, err := AnalyzeRise(tt, p, fixtureVolume, RiseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if res.GroupSize != 5 || res.Points != 17280 {
		t.Errorf("grouping %d samples into %d points, want 5 and 17280", res.GroupSize, res.Points)
	}
	if res.Classification != Mixed {
		t.Errorf("classification %s (%s), want mixed", res.Classification, res.Reason)
	}
	checkRate(t, "leak rate", res.LeakRate, res.LeakRateUncertainty, fixtureVolume*spec.A, 0.05)
	checkRate(t, "outgassing", res.OutgassingRate, res.OutgassingRateUncertainty, fixtureVolume*spec.B/spec.Tau, 0.05)
}

// The stated uncertainties must be honest: over many noise draws the
// standardised errors (estimate − truth)/u have a standard deviation near 1
// (the definition of a standard uncertainty, JCGM 100:2008 §2.3.1), and BIC
// rarely takes a pure leak for outgassing. Bounds are wide enough for the
// number of draws (sd of an sd estimate from n draws ≈ 1/√(2n): 0.07 at 100).
func TestRiseUncertaintyCoverage(t *testing.T) {
	cases := []struct {
		spec  riseSpec
		draws int
	}{
		{riseSpec{N: 300, Step: 1, P0: 1e-2, A: 2e-5, Sigma: 2e-5}, 150},
		{riseSpec{N: 600, Step: 1, P0: 1e-2, A: 4e-6, B: 5e-3, Tau: 150, Sigma: 2e-5}, 60},
	}
	for _, c := range cases {
		var z []float64
		curved := 0
		for seed := range c.draws {
			c.spec.Seed = uint64(1000 + seed)
			tt, p := c.spec.generate()
			res, err := AnalyzeRise(tt, p, 1, RiseOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if res.Fit.Model == ModelCurved {
				curved++
			}
			z = append(z, (res.Fit.Slope-c.spec.A)/res.Fit.SlopeUncertainty)
		}
		sd := stdDev(z)
		if sd < 0.75 || sd > 1.3 {
			t.Errorf("B = %g: standardised slope errors have sd %.2f over %d draws, want 0.75 to 1.3", c.spec.B, sd, c.draws)
		}
		if c.spec.B == 0 && curved*100 > 3*c.draws {
			t.Errorf("pure leak: curved model chosen %d times in %d, want under 3 %%", curved, c.draws)
		}
		if c.spec.B > 0 && curved != c.draws {
			t.Errorf("mixed: curved model chosen %d times in %d, want every time", curved, c.draws)
		}
		t.Logf("B = %g: sd %.3f, curved %d/%d", c.spec.B, sd, curved, c.draws)
	}
}

func stdDev(v []float64) float64 {
	var m, s float64
	for _, x := range v {
		m += x
	}
	m /= float64(len(v))
	for _, x := range v {
		s += (x - m) * (x - m)
	}
	return math.Sqrt(s / float64(len(v)-1))
}

// TimeTo inverts the fitted curve; each case has a closed form (algebra).
func TestRiseFitTimeTo(t *testing.T) {
	line := RiseFit{Model: ModelLine, P0: 1, Slope: 0.1}
	curve := RiseFit{Model: ModelCurved, P0: 1, Curve: 2, Tau: 100}
	mixed := RiseFit{Model: ModelCurved, P0: 1, Slope: 0.01, Curve: 2, Tau: 100}
	peak := RiseFit{Model: ModelCurved, P0: 1, Slope: -0.001, Curve: 2, Tau: 100}
	for _, c := range []struct {
		name string
		f    RiseFit
		p    float64
		want float64 // NaN: unreachable
	}{
		{"line", line, 2, 10},
		{"below start", line, 0.5, 0},
		{"curve", curve, 2, -100 * math.Log(0.5)}, // 1 + 2(1 − e^(−t/100)) = 2
		{"curve plateau", curve, 3, math.NaN()},
		{"peaked", peak, 10, math.NaN()},
	} {
		got, err := c.f.TimeTo(c.p)
		switch {
		case math.IsNaN(c.want):
			if !errors.Is(err, ErrUnreachable) {
				t.Errorf("%s: TimeTo(%g) = %g, %v; want ErrUnreachable", c.name, c.p, got, err)
			}
		case err != nil || math.Abs(got-c.want) > 1e-9*(1+c.want):
			t.Errorf("%s: TimeTo(%g) = %g, %v; want %g", c.name, c.p, got, err, c.want)
		}
	}
	for _, f := range []RiseFit{mixed, peak} {
		got, err := f.TimeTo(2)
		if err != nil || math.Abs(f.Pressure(got)-2) > 1e-9 {
			t.Errorf("%+v: TimeTo(2) = %g, %v; the curve gives %g there", f, got, err, f.Pressure(got))
		}
	}
}

func TestRiseWindow(t *testing.T) {
	r := Rise{Window: 300}
	rng := rand.New(rand.NewPCG(31, 0))
	for i := range 1000 {
		r.Add(float64(i), 1e-2+2e-5*float64(i)+2e-5*rng.NormFloat64())
	}
	r.Add(100, 5) // far older than the window: ignored
	if r.Len() != 301 {
		t.Errorf("window holds %d samples, want 301 (the last 300 s inclusive)", r.Len())
	}
	res, err := r.Analyze(fixtureVolume, RiseOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if res.Start != 699 || res.Classification != LeakDominated {
		t.Errorf("window starts at %g s, %s; want 699 s, leak-dominated", res.Start, res.Classification)
	}
	checkRate(t, "window leak rate", res.LeakRate, res.LeakRateUncertainty, fixtureVolume*2e-5, 0.05)
	r.Reset()
	if r.Len() != 0 {
		t.Errorf("after Reset the window holds %d samples", r.Len())
	}
}
