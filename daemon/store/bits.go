package store

import (
	"encoding/binary"
	"errors"
	"math/bits"
)

// errShort reports a bit stream that ends before its contents do.
var errShort = errors.New("data ends early")

// A bitWriter packs bit fields, most significant bit first.
type bitWriter struct {
	buf  []byte
	acc  uint64 // pending bits, right-aligned
	nacc uint   // number of pending bits, < 64 after each call
}

// write appends the n low bits of v (n ≤ 64).
func (w *bitWriter) write(v uint64, n uint) {
	if n == 0 {
		return
	}
	if n < 64 {
		v &= 1<<n - 1
	}
	free := 64 - w.nacc
	if n < free {
		w.acc = w.acc<<n | v
		w.nacc += n
		return
	}
	rest := n - free // < 64, as free ≥ 1
	if free == 64 {
		w.acc = v
	} else {
		w.acc = w.acc<<free | v>>rest
	}
	w.buf = binary.BigEndian.AppendUint64(w.buf, w.acc)
	w.acc = v & (1<<rest - 1)
	w.nacc = rest
}

// bit appends one bit.
func (w *bitWriter) bit(b bool) {
	if b {
		w.write(1, 1)
	} else {
		w.write(0, 1)
	}
}

// bits returns the number of bits written so far.
func (w *bitWriter) bits() int { return len(w.buf)*8 + int(w.nacc) }

// bytes returns the stream with its last byte padded with zeros; the
// writer itself is left as it was.
func (w *bitWriter) bytes() []byte {
	if w.nacc == 0 {
		return w.buf
	}
	return w.appendTail(w.buf[:len(w.buf):len(w.buf)])
}

// appendTo appends the stream, its last byte padded with zeros, to dst.
func (w *bitWriter) appendTo(dst []byte) []byte {
	return w.appendTail(append(dst, w.buf...))
}

// appendTail appends the pending bits, padded to whole bytes, to dst.
func (w *bitWriter) appendTail(dst []byte) []byte {
	tail := w.acc << (64 - w.nacc)
	for i := uint(0); i < w.nacc; i += 8 {
		dst = append(dst, byte(tail>>(56-i)))
	}
	return dst
}

// reset empties the writer, keeping its buffer.
func (w *bitWriter) reset() { w.buf, w.acc, w.nacc = w.buf[:0], 0, 0 }

// expGolomb appends x as an order-k exponential-Golomb code: k+1 bits for
// x < 2^k, growing by two bits per doubling beyond that, for any uint64.
func (w *bitWriter) expGolomb(x uint64, k uint) {
	if q := x >> k; q < 1<<20 && k <= 23 { // the whole code fits in one write
		z := uint(bits.Len64(q+1)) - 1
		w.write((q+1)<<k|x&(1<<k-1), 2*z+1+k)
		return
	}
	q := x >> k
	z := uint(bits.Len64(q+1)) - 1 // leading zeros; q+1 wraps to 0 only for q = 2^64-1
	if q == ^uint64(0) {
		z = 64
	}
	w.write(0, z)
	w.write(1, 1)
	w.write(q+1, z) // low z bits of q+1 (the leading 1 was written above)
	w.write(x, k)
}

// A bitReader reads what a bitWriter wrote.
type bitReader struct {
	buf []byte
	pos int // bit position
}

// word returns the 64 bits from byte i on, zero-padded past the end.
func (r *bitReader) word(i int) uint64 {
	if i+8 <= len(r.buf) {
		return binary.BigEndian.Uint64(r.buf[i:])
	}
	var w uint64
	for j := range 8 {
		w <<= 8
		if i+j < len(r.buf) {
			w |= uint64(r.buf[i+j])
		}
	}
	return w
}

// read returns the next n bits (n ≤ 64).
func (r *bitReader) read(n uint) (uint64, error) {
	if n == 0 {
		return 0, nil
	}
	if r.pos+int(n) > len(r.buf)*8 {
		return 0, errShort
	}
	at, off := r.pos>>3, uint(r.pos&7)
	w := r.word(at)
	r.pos += int(n)
	if off+n <= 64 {
		return w << off >> (64 - n), nil
	}
	rest := n - (64 - off) // 1..7 bits from the ninth byte
	return (w<<off>>off)<<rest | uint64(r.buf[at+8])>>(8-rest), nil
}

// peek returns the next n bits (n ≤ 56) without consuming them, padded
// with zeros past the end.
func (r *bitReader) peek(n uint) uint64 {
	return r.word(r.pos>>3) << uint(r.pos&7) >> (64 - n)
}

// bit reads one bit.
func (r *bitReader) bit() (bool, error) {
	v, err := r.read(1)
	return v == 1, err
}

// expGolomb reads an order-k exponential-Golomb code.
func (r *bitReader) expGolomb(k uint) (uint64, error) {
	if k <= 16 && r.pos+64 <= len(r.buf)*8 { // fast path: a short code within the next 57 bits
		w := r.word(r.pos>>3) << uint(r.pos&7)
		if z := uint(bits.LeadingZeros64(w)); z <= 20 {
			total := 2*z + 1 + k
			r.pos += int(total)
			return w>>(64-total) - 1<<k, nil
		}
	}
	var z uint
	for {
		b, err := r.bit()
		if err != nil {
			return 0, err
		}
		if b {
			break
		}
		z++
		if z > 64 {
			return 0, errors.New("malformed variable-length integer")
		}
	}
	low, err := r.read(z)
	if err != nil {
		return 0, err
	}
	q := uint64(1)<<z - 1 + low // shifts by 64 give 0, so z = 64 yields 2^64-1+low
	if z == 64 && low != 0 {
		return 0, errors.New("variable-length integer overflows 64 bits")
	}
	rest, err := r.read(k)
	if err != nil {
		return 0, err
	}
	if k > 0 && q > ^uint64(0)>>k {
		return 0, errors.New("variable-length integer overflows 64 bits")
	}
	return q<<k | rest, nil
}

// remaining returns the number of unread bits.
func (r *bitReader) remaining() int { return len(r.buf)*8 - r.pos }

// zigzag maps signed to unsigned so small magnitudes get short codes.
func zigzag(v int64) uint64 { return uint64(v<<1) ^ uint64(v>>63) }

// unzigzag inverts zigzag.
func unzigzag(u uint64) int64 { return int64(u>>1) ^ -int64(u&1) }

// egCost returns the length in bits of x's order-k exponential-Golomb code.
func egCost(x uint64, k uint) int {
	q := x >> k
	z := bits.Len64(q+1) - 1
	if q == ^uint64(0) {
		z = 64
	}
	return 2*z + 1 + int(k)
}

// bestOrder picks the exponential-Golomb order that codes xs in the fewest
// bits, and returns that size.
func bestOrder(xs []uint64) (uint, int) {
	var hist [65]int // hist[b]: how many values have bit length b
	for _, x := range xs {
		hist[bits.Len64(x)]++
	}
	bestK, bestCost := uint(0), -1
	for k := uint(0); k <= 62; k++ {
		cost := 0
		for b, c := range hist {
			if c == 0 {
				continue
			}
			var x uint64 // a representative value with bit length b
			if b > 0 {
				x = 1 << (b - 1)
			}
			cost += c * egCost(x, k)
		}
		if bestCost < 0 || cost < bestCost {
			bestK, bestCost = k, cost
		}
	}
	return bestK, bestCost
}
