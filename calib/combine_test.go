package calib

import (
	"errors"
	"math"
	"testing"
)

// A thermal-conductivity gauge trusted over 0.1 Pa … 100 kPa and an
// ionisation gauge over 1e-8 … 1 Pa (demo ranges): they overlap from 0.1 to 1 Pa.
var demoSpans = []Span{{0.1, 1e5}, {1e-8, 1}}

func ok(p float64) Sample { return Sample{Value: p, Quality: QualityOK} }

func TestBlendWeights(t *testing.T) {
	for _, tc := range []struct {
		name   string
		tc, ig Sample
		wantTC float64
	}{
		{"above the overlap", ok(50), ok(50), 1},
		{"below the overlap", ok(0.01), ok(0.01), 0},
		{"overlap middle", ok(math.Sqrt(0.1)), ok(math.Sqrt(0.1)), 0.5},
		{"ion gauge off", ok(0.3), Sample{Quality: QualityOff}, 1},
		// In the overlap at fraction t = 1/4 the weights are t²/(t² + (1−t)²).
		{"quarter way", ok(math.Pow(10, -0.75)), ok(math.Pow(10, -0.75)), 1.0 / 10},
	} {
		t.Run(tc.name, func(t *testing.T) {
			w := BlendWeights(demoSpans, []Sample{tc.tc, tc.ig})
			if math.Abs(w[0]-tc.wantTC) > 1e-12 || math.Abs(w[0]+w[1]-1) > 1e-12 {
				t.Errorf("weights %v, want %g for the first and a sum of one", w, tc.wantTC)
			}
		})
	}
}

// The blend moves continuously and monotonically across the overlap when the
// two gauges disagree by a constant 10 %.
func TestBlendSmooth(t *testing.T) {
	prev := 0.0
	for lp := -1.5; lp <= 0.5; lp += 0.001 {
		p := math.Pow(10, lp)
		b, err := Blend(demoSpans, []Sample{ok(p * 1.1), ok(p)})
		if err != nil {
			t.Fatal(err)
		}
		ratio := b.Value / p
		if ratio < 1-1e-12 || ratio > 1.1+1e-12 || (prev != 0 && math.Abs(ratio-prev) > 1e-3) {
			t.Fatalf("at %g Pa the blend is %g× the ion reading after %g×: not smooth", p, ratio, prev)
		}
		prev = ratio
	}
}

func TestBlendNoneInRange(t *testing.T) {
	b, err := Blend(demoSpans, []Sample{ok(2e5), {Quality: QualityOff}})
	if !errors.Is(err, ErrAboveRange) || b.Value != 2e5 || b.Quality != QualityOverRange {
		t.Errorf("Blend = %+v, %v; want 2e5 Pa over-range", b, err)
	}
	if _, err := Blend(demoSpans, []Sample{{Quality: QualitySensorFault}, {Quality: QualityOff}}); !errors.Is(err, ErrNoMember) {
		t.Errorf("err %v, want ErrNoMember", err)
	}
}
