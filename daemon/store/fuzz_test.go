package store

import (
	"encoding/binary"
	"hash/crc32"
	"math"
	"testing"
	"time"
)

// withCRC stamps a valid checksum on b so fuzzing reaches the column decoders.
func withCRC(b []byte) []byte {
	if len(b) >= headerFixed {
		binary.LittleEndian.PutUint32(b[1:5], crc32.Checksum(b[headerFixed:], castagnoli))
	}
	return b
}

// FuzzDecodeChunk feeds arbitrary bytes to the decoder: it must return an
// error or points, never panic, and what it returns must survive a round trip.
func FuzzDecodeChunk(f *testing.F) {
	for _, pts := range [][]Point{seconds(1), seconds(40), ion(700)[590:], thermocouple(300), night8()["valve-pos"][:500]} {
		f.Add(encodeChunk(pts))
		f.Add(encodeChunk1(pts)) // version 1 is still read
	}
	f.Add([]byte{1, 0, 0, 0, 0, 1, 0, 0})
	f.Fuzz(func(t *testing.T, b []byte) {
		pts, err := decodeChunk(withCRC(b))
		if err != nil {
			return
		}
		for i := 1; i < len(pts); i++ {
			if pts[i].At.Before(pts[i-1].At) {
				t.Fatalf("decoded times go backwards at %d", i)
			}
		}
		checkRoundTrip(t, pts)
	})
}

// FuzzChunkRoundTrip turns arbitrary bytes into points (29 bytes each) and
// checks the codec gives them back bit for bit: any float bits (NaN
// payloads, ±Inf, subnormals, −0), equal times, and steps from 0 up to
// 2^63 ns (the top bits of the step's byte pick its size).
func FuzzChunkRoundTrip(f *testing.F) {
	f.Add([]byte("a few bytes that become one or two points of data"))
	seed := make([]byte, 0, 29*8)
	for i, v := range specials[:8] {
		seed = binary.LittleEndian.AppendUint64(seed, uint64(i)*1e9)
		seed = binary.LittleEndian.AppendUint64(seed, math.Float64bits(v))
		seed = binary.LittleEndian.AppendUint64(seed, math.Float64bits(-v))
		seed = append(seed, byte(i), 0, 0, 0, byte(i))
	}
	f.Add(seed)
	f.Fuzz(func(t *testing.T, b []byte) {
		var pts []Point
		ns := int64(-1) << 62
		for ; len(b) >= 29; b = b[29:] {
			step := binary.LittleEndian.Uint64(b) >> 1
			if b[7]&0x80 == 0 {
				step >>= 23 // mostly steps of up to 2^40 ns (18 min)
			}
			if ns+int64(step) < ns {
				break // past 2262
			}
			ns += int64(step)
			pts = append(pts, Point{At: time.Unix(0, ns), Raw: math.Float64frombits(binary.LittleEndian.Uint64(b[8:])),
				Value: math.Float64frombits(binary.LittleEndian.Uint64(b[16:])), Quality: b[24],
				Calibration: binary.LittleEndian.Uint32(b[25:])})
		}
		if len(pts) > 0 {
			checkRoundTrip(t, pts)
		}
	})
}
