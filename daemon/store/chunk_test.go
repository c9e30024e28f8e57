package store

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"
)

// checkRoundTrip encodes pts as one chunk and fails unless decoding gives them back bit for bit.
func checkRoundTrip(t *testing.T, pts []Point) []byte {
	t.Helper()
	b := encodeChunk(pts)
	got, err := decodeChunk(b)
	if err != nil {
		t.Fatalf("decodeChunk: %v", err)
	}
	if len(got) != len(pts) {
		t.Fatalf("decoded %d points, want %d", len(got), len(pts))
	}
	for i := range pts {
		if !sameBits(got[i], pts[i]) {
			t.Fatalf("point %d: got %+v, want %+v", i, got[i], pts[i])
		}
	}
	return b
}

// specials are float64 values a lossless coder must keep bit for bit.
var specials = []float64{0, math.Copysign(0, -1), math.NaN(), math.Float64frombits(0x7ff8dead0000beef),
	math.Float64frombits(0xfff0000000000001), math.Inf(1), math.Inf(-1), math.MaxFloat64, -math.MaxFloat64,
	math.SmallestNonzeroFloat64, -math.SmallestNonzeroFloat64, 2.2250738585072014e-308, 1e-320,
	1e308, 1e-300, 0.1, 1.23e-5, 9.99e-6, 1e22, 1e23, -4.567, 123456789012345678, 1 << 53, 1<<53 + 2}

func TestChunkRoundTripSpecialFloats(t *testing.T) {
	t0 := time.Date(2031, 5, 6, 22, 0, 0, 0, time.UTC)
	var pts []Point
	for i, v := range specials {
		for j, w := range specials {
			pts = append(pts, Point{At: t0.Add(time.Duration(i*len(specials)+j) * time.Second),
				Raw: v, Value: w, Quality: uint8(j % 5), Calibration: uint32(i % 3)})
		}
	}
	checkRoundTrip(t, pts)
	for i := range pts { // also each value alone and in pairs
		checkRoundTrip(t, pts[i:i+1])
		if i+2 <= len(pts) {
			checkRoundTrip(t, pts[i:i+2])
		}
	}
}

func TestChunkRoundTripRandom(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for trial := range 200 {
		n := 1 + rng.IntN(1500)
		ns := rng.Int64N(1<<62) - 1<<61
		pts := make([]Point, n)
		for i := range pts {
			switch trial % 4 {
			case 0: // arbitrary bits everywhere
				pts[i].Raw = math.Float64frombits(rng.Uint64())
				pts[i].Value = math.Float64frombits(rng.Uint64())
				ns += rng.Int64N(1 << 40)
			case 1: // few digits, jittered schedule
				pts[i].Raw = float64(rng.IntN(1000)) * math.Pow(10, float64(rng.IntN(6)-8))
				pts[i].Value = pts[i].Raw * 100
				ns += int64(time.Second) + rng.Int64N(2e6) - 1e6
			case 2: // duplicates and steps in time
				pts[i].Raw = float64(rng.IntN(4))
				pts[i].Value = math.Log(pts[i].Raw)
				ns += rng.Int64N(3) * int64(time.Second)
			default: // extreme values
				pts[i].Raw = specials[rng.IntN(len(specials))]
				pts[i].Value = specials[rng.IntN(len(specials))]
				ns += rng.Int64N(1 << 20)
			}
			pts[i].At = time.Unix(0, ns)
			pts[i].Quality = uint8(rng.IntN(2) * rng.IntN(256))
			pts[i].Calibration = uint32(rng.IntN(2) * rng.IntN(1<<31))
		}
		checkRoundTrip(t, pts)
	}
}
