package store

import "math/bits"

// Integer column (the decimal mantissas of a float column). Values are cut
// into blocks of 128; each block is bit-packed at one width after
// subtracting a base (frame of reference), either the values themselves
// (base = their minimum, which suits noise around a level) or their steps
// from the previous value (base = the smallest step, which suits a trend),
// whichever needs the narrower width. A column of one repeated value
// writes only that value.
//
//	1 bit        1: every value is the same: expGolomb0 zigzag(value), done
//	expGolomb0   zigzag(first value)
//	per block    1 bit mode (0 values, 1 steps), 7 bits width,
//	             expGolomb0 zigzag(base − previous value) or zigzag(base),
//	             then each value's offset from the base in width bits

// packBlock is the number of values per bit-packed block.
const packBlock = 128

// encodeInts writes xs (at least one).
func encodeInts(w *bitWriter, xs []int64) {
	same := true
	for _, x := range xs[1:] {
		if x != xs[0] {
			same = false
			break
		}
	}
	w.bit(same)
	w.expGolomb(zigzag(xs[0]), 0)
	if same {
		return
	}
	prev := xs[0]
	for len(xs) > 0 {
		blk := xs[:min(packBlock, len(xs))]
		xs = xs[len(blk):]
		prev = packOne(w, blk, prev)
	}
}

// packOne writes one block given the value before it, and returns its last value.
func packOne(w *bitWriter, blk []int64, prev int64) int64 {
	lo, hi := blk[0], blk[0]
	dlo, dhi := blk[0]-prev, blk[0]-prev
	p := prev
	for _, x := range blk {
		lo, hi = min(lo, x), max(hi, x)
		d := x - p
		dlo, dhi = min(dlo, d), max(dhi, d)
		p = x
	}
	wv, wd := uint(bits.Len64(uint64(hi-lo))), uint(bits.Len64(uint64(dhi-dlo)))
	if wv <= wd {
		w.bit(false)
		w.write(uint64(wv), 7)
		w.expGolomb(zigzag(lo-prev), 0)
		for _, x := range blk {
			w.write(uint64(x-lo), wv)
		}
		return p
	}
	w.bit(true)
	w.write(uint64(wd), 7)
	w.expGolomb(zigzag(dlo), 0)
	p = prev
	for _, x := range blk {
		w.write(uint64(x-p-dlo), wd)
		p = x
	}
	return p
}

// decodeInts reads len(out) values written by encodeInts.
func decodeInts(r *bitReader, out []int64) error {
	same, err := r.bit()
	if err != nil {
		return err
	}
	z, err := r.expGolomb(0)
	if err != nil {
		return err
	}
	prev := unzigzag(z)
	if same {
		for i := range out {
			out[i] = prev
		}
		return nil
	}
	for len(out) > 0 {
		blk := out[:min(packBlock, len(out))]
		out = out[len(blk):]
		if prev, err = unpackOne(r, blk, prev); err != nil {
			return err
		}
	}
	return nil
}

// unpackOne reads one block given the value before it.
func unpackOne(r *bitReader, blk []int64, prev int64) (int64, error) {
	steps, err := r.bit()
	if err != nil {
		return 0, err
	}
	width, err := r.read(7)
	if err != nil {
		return 0, err
	}
	z, err := r.expGolomb(0)
	if err != nil {
		return 0, err
	}
	if width > 64 {
		return 0, errCorruptField("integer block width")
	}
	if r.remaining() < int(width)*len(blk) {
		return 0, errShort
	}
	base := unzigzag(z)
	if !steps {
		base += prev
	}
	for i := range blk {
		v, _ := r.read(uint(width)) // length checked above
		if steps {
			prev += base + int64(v)
		} else {
			prev = base + int64(v)
		}
		blk[i] = prev
	}
	return prev, nil
}
