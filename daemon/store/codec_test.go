package store

import (
	"hash/crc32"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"
)

// bitString renders a writer's bits as '0'/'1'.
func bitString(w *bitWriter) string {
	var sb strings.Builder
	r := &bitReader{buf: w.bytes()}
	for range w.bits() {
		if b, _ := r.bit(); b {
			sb.WriteByte('1')
		} else {
			sb.WriteByte('0')
		}
	}
	return sb.String()
}

func TestExpGolombOrderZeroTable(t *testing.T) {
	// Order-0 exponential-Golomb code words as tabulated in the Wikipedia
	// article "Exponential-Golomb coding" (the ue(v) codes of ITU-T H.264 §9.1).
	want := []string{"1", "010", "011", "00100", "00101", "00110", "00111", "0001000", "0001001"}
	for x, code := range want {
		var w bitWriter
		w.expGolomb(uint64(x), 0)
		if got := bitString(&w); got != code {
			t.Errorf("code for %d: got %s, want %s", x, got, code)
		}
	}
}

func TestExpGolombDecodesPublishedExercise(t *testing.T) {
	// Worked exercise in the python-bitstring documentation, "Exponential-Golomb
	// Codes": 001001101101101011000100100101 decodes to 3,0,0,2,2,1,0,0,8,4.
	bits := "001001101101101011000100100101"
	var w bitWriter
	for _, c := range bits {
		w.bit(c == '1')
	}
	r := &bitReader{buf: w.bytes()}
	var got []uint64
	for r.pos < len(bits) {
		x, err := r.expGolomb(0)
		if err != nil {
			t.Fatal(err)
		}
		got = append(got, x)
	}
	want := []uint64{3, 0, 0, 2, 2, 1, 0, 0, 8, 4}
	if len(got) != len(want) {
		t.Fatalf("got %v, want %v", got, want)
	}
	for i := range want {
		if got[i] != want[i] {
			t.Fatalf("got %v, want %v", got, want)
		}
	}
}

func TestExpGolombOrderK(t *testing.T) {
	// Wikipedia "Exponential-Golomb coding", generalisation to order k: the
	// order-k code of x is the order-0 code of x + 2^k − 1 with its k leading
	// zeros deleted. Checked for small x and k, then round trips to 2^64−1.
	for k := uint(0); k < 6; k++ {
		for x := uint64(0); x < 300; x++ {
			var w, ref bitWriter
			w.expGolomb(x, k)
			ref.expGolomb(x+1<<k-1, 0)
			if got, want := bitString(&w), bitString(&ref)[k:]; got != want {
				t.Fatalf("order %d code of %d: got %s, want %s", k, x, got, want)
			}
			if w.bits() != egCost(x, k) {
				t.Fatalf("egCost(%d, %d) = %d, code has %d bits", x, k, egCost(x, k), w.bits())
			}
		}
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for range 5000 {
		x, k := rng.Uint64()>>rng.UintN(64), rng.UintN(63)
		if rng.IntN(50) == 0 {
			x = ^uint64(0) - rng.Uint64N(3)
		}
		var w bitWriter
		w.expGolomb(x, k)
		w.write(0b101, 3) // a marker after the code: the reader must stop exactly
		r := &bitReader{buf: w.bytes()}
		got, err := r.expGolomb(k)
		marker, _ := r.read(3)
		if err != nil || got != x || marker != 0b101 {
			t.Fatalf("order %d round trip of %d: got %d, %v, marker %03b", k, x, got, err, marker)
		}
	}
}

func TestZigzagMatchesProtocolBuffers(t *testing.T) {
	// The ZigZag table of the Protocol Buffers encoding guide (protobuf.dev
	// "Encoding", signed integers), 64-bit rows as in its reference tests.
	cases := []struct {
		in   int64
		want uint64
	}{{0, 0}, {-1, 1}, {1, 2}, {-2, 3}, {2147483647, 4294967294}, {-2147483648, 4294967295},
		{math.MaxInt64, math.MaxUint64 - 1}, {math.MinInt64, math.MaxUint64}}
	for _, c := range cases {
		if got := zigzag(c.in); got != c.want {
			t.Errorf("zigzag(%d) = %d, want %d", c.in, got, c.want)
		}
		if got := unzigzag(c.want); got != c.in {
			t.Errorf("unzigzag(%d) = %d, want %d", c.want, got, c.in)
		}
	}
}

func TestChecksumIsCRC32C(t *testing.T) {
	// CRC-32C (Castagnoli, as in iSCSI, RFC 3720) check value: the CRC of
	// "123456789" is 0xE3069283 (the standard test vector of CRC catalogues).
	if got := crc32.Checksum([]byte("123456789"), castagnoli); got != 0xE3069283 {
		t.Fatalf("checksum of 123456789 = %08x, want e3069283", got)
	}
}

func TestFromDecimalAgreesWithParseFloat(t *testing.T) {
	// Reference: strconv.ParseFloat, which rounds decimal input correctly
	// (IEEE 754 round-to-nearest-even); fromDecimal must give the same bits.
	rng := rand.New(rand.NewPCG(5, 6))
	for range 200000 {
		m := rng.Int64N(1e17) - 5e16
		if rng.IntN(3) == 0 {
			m = rng.Int64N(2000) - 1000
		}
		e := rng.IntN(700) - 350
		if rng.IntN(2) == 0 {
			e = rng.IntN(50) - 25
		}
		want, _ := strconv.ParseFloat(strconv.FormatInt(m, 10)+"e"+strconv.Itoa(e), 64)
		if got := fromDecimal(m, e); math.Float64bits(got) != math.Float64bits(want) {
			t.Fatalf("fromDecimal(%d, %d) = %v, ParseFloat says %v", m, e, got, want)
		}
	}
}

func TestDigitsOfReadings(t *testing.T) {
	cases := []struct {
		v    float64
		want int
	}{{1.23e-5, 3}, {9.99e-6, 3}, {1e-5, 1}, {4.567, 4}, {0, 1}, {150.3, 4}, {1.0 / 3, maxDigits + 1},
		{math.NaN(), maxDigits + 1}, {math.Copysign(0, -1), maxDigits + 1}, {-2.5e-9, 2}}
	for _, c := range cases {
		if got := digitsOf(c.v); got != c.want {
			t.Errorf("digitsOf(%v) = %d, want %d", c.v, got, c.want)
		}
	}
}
