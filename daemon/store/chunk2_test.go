package store

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
	"time"
)

// randomTimes returns n sorted times of one of several shapes.
func randomTimes(rng *rand.Rand, n, shape int) []time.Time {
	ns := make([]int64, n)
	t := rng.Int64N(1<<62) - 1<<61
	for i := range ns {
		switch shape {
		case 0: // 10 Hz on whole ms with jitter, the odd missed poll
			t += 100e6 + (rng.Int64N(7)-3)*1e6
			if rng.IntN(50) == 0 {
				t += 100e6 * rng.Int64N(5)
			}
		case 1: // exactly regular
			t += int64(time.Second)
		case 2: // duplicates and steps
			t += rng.Int64N(3) * int64(time.Millisecond)
		case 3: // huge jumps, the whole range of int64 ns included
			t += rng.Int64N(1 << 58)
		default: // arbitrary ns steps
			t += rng.Int64N(1 << 30)
		}
		ns[i] = t
	}
	if shape == 3 { // from the earliest to the latest time the store keeps
		ns[0], ns[n-1] = math.MinInt64, math.MaxInt64
		slices.Sort(ns)
	}
	out := make([]time.Time, n)
	for i, v := range ns {
		out[i] = time.Unix(0, v).UTC()
	}
	return out
}

// randomValue returns a raw reading and its value of one of several kinds.
func randomValue(rng *rand.Rand, kind int, prev float64) (float64, float64) {
	switch kind {
	case 0: // three digits, value in another unit
		raw := roundSig(math.Abs(prev)*(1+0.01*rng.NormFloat64())+1e-9, 3)
		return raw, raw * 100
	case 1: // 0.1 steps with an offset, the odd special
		raw := math.Round(prev*10+rng.NormFloat64()) / 10
		if rng.IntN(40) == 0 {
			raw = specials[rng.IntN(len(specials))]
		}
		return raw, raw + 273.15
	case 2: // a status code
		if rng.IntN(100) == 0 {
			prev = float64(rng.IntN(4))
		}
		return prev, prev
	case 3: // specials everywhere
		return specials[rng.IntN(len(specials))], specials[rng.IntN(len(specials))]
	case 4: // a curve of a repeated reading
		raw := float64(rng.IntN(20)) * 1e-3
		return raw, math.Exp(raw) * 1.0000001
	default: // arbitrary bits
		return math.Float64frombits(rng.Uint64()), math.Float64frombits(rng.Uint64())
	}
}

func TestChunk2RoundTripProperties(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	for trial := range 600 {
		n := 1 + rng.IntN(1100)
		if trial%10 == 0 {
			n = 1 + rng.IntN(12) // the blocks a flush writes
		}
		shape, kind := trial%5, (trial/5)%6
		times := randomTimes(rng, n, shape)
		pts := make([]Point, n)
		prev := 1.23e-4
		for i := range pts {
			raw, val := randomValue(rng, kind, prev)
			if !math.IsNaN(raw) && !math.IsInf(raw, 0) && raw != 0 {
				prev = raw
			}
			pts[i] = Point{At: times[i], Raw: raw, Value: val, Quality: uint8(rng.IntN(2) * rng.IntN(5)),
				Calibration: uint32(rng.IntN(2) * 3)}
		}
		b := checkRoundTrip(t, pts)
		if b[0] != 2 {
			t.Fatalf("chunk version %d, want 2", b[0])
		}
	}
}

func TestChunkSizesOnTypicalColumns(t *testing.T) {
	// What the format promises for a constant status on an exactly regular
	// schedule (hand reckoning from the layouts in chunk2.go, times2.go,
	// pack.go and alp.go): the headers only, whatever the point count. The
	// chunk header is 5 + 2 (n) + 9 (first time) + 6 (span) = 22 bytes; the
	// time column's unit (100 ms: 53 bits), period (17 bits) and flag, two
	// one-run columns (about 25 bits each) and two constant decimal columns
	// (about 15 bits each) add about 19 bytes: 48 allows for rounding.
	at := func(i int) time.Time { return nightStart.Add(time.Duration(i) * 100 * time.Millisecond) }
	constant := make([]Point, 1024)
	for i := range constant {
		constant[i] = Point{At: at(i), Raw: 1, Value: 1}
	}
	if n := len(encodeChunk(constant)); n > 48 {
		t.Errorf("regular constant chunk of 1024 points: %d bytes, want at most 48 (headers only)", n)
	}
	for i := range constant {
		constant[i].Value = 2 // another value, same everywhere: still a constant column
	}
	if n := len(encodeChunk(constant)); n > 48 {
		t.Errorf("regular chunk with constant raw and value: %d bytes, want at most 48", n)
	}
}

func TestStoreKeepsLateDuplicateAndSpecialPoints(t *testing.T) {
	// Through Append and Flush: out-of-order and duplicate times, special
	// floats, at the default resolution; read back sorted by time, equal
	// times in append order, times cut to 1 ms and values bit for bit.
	rng := rand.New(rand.NewPCG(9, 10))
	db := openTemp(t, Options{})
	var want []Point
	for flush := range 40 {
		for range 1 + rng.IntN(60) {
			at := nightStart.Add(time.Duration(rng.Int64N(int64(20 * time.Minute))))
			if rng.IntN(5) == 0 && len(want) > 0 {
				at = want[rng.IntN(len(want))].At // a duplicate time
			}
			raw, val := randomValue(rng, flush%6, 1.5e-6)
			p := Point{At: at, Raw: raw, Value: val, Quality: uint8(rng.IntN(3))}
			db.Append("g", p)
			p.At = p.At.Truncate(time.Millisecond)
			want = append(want, p)
		}
		if err := db.Flush(); err != nil {
			t.Fatal(err)
		}
	}
	sortPoints(want)
	samePoints(t, all(t, db, "g"), want)
}
