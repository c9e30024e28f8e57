package store

import "math/bits"

// Integer column (the decimal mantissas of a float column), in one of
// three layouts, whichever is smallest:
//
//   - blocks: cut into blocks of 128, each bit-packed at one width after
//     subtracting a base (frame of reference), either the values themselves
//     (base = their minimum) or their steps from the previous value (base =
//     the smallest step), whichever needs the narrower width;
//   - level: each value's residual from a level that follows the values
//     slowly (an eighth of each residual, in 1/256 units), which suits
//     noise around a level or a slow drift: the residuals cost about the
//     noise's entropy;
//   - steps: each value's residual from the previous one, which suits a
//     random walk or a fast trend.
//
// Residuals are zigzagged into a residual column (entropy.go). A column of
// one repeated value writes only that value.
//
//	1 bit        1: every value is the same: expGolomb0 zigzag(value), done
//	expGolomb0   zigzag(first value)
//	2 bits       layout: 0 blocks, 1 level, 2 steps
//	blocks:      per block 1 bit mode (0 values, 1 steps), 7 bits width,
//	             expGolomb0 zigzag(base − previous value) or zigzag(base),
//	             then each value's offset from the base in width bits
//	level/steps: the residuals of the values after the first

// packBlock is the number of values per bit-packed block.
const packBlock = 128

// Integer column layouts.
const (
	intsBlocks = 0
	intsLevel  = 1
	intsSteps  = 2
)

// intScratch holds the buffers an integer column needs while encoding.
type intScratch struct {
	zz []uint64
	rc residualCoder
}

// encodeInts writes xs (at least one).
func encodeInts(w *bitWriter, xs []int64, s *intScratch) {
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
	layout, sum := intsBlocks, uint64(0)
	if len(xs) > 8 {
		layout, sum = s.residuals(xs)
		if blocksCost(xs) <= s.residualCost(sum) {
			layout = intsBlocks
		}
	}
	w.write(uint64(layout), 2)
	if layout != intsBlocks {
		encodeResiduals(w, s.zz, sum, &s.rc)
		return
	}
	prev := xs[0]
	for len(xs) > 0 {
		blk := xs[:min(packBlock, len(xs))]
		xs = xs[len(blk):]
		prev = packOne(w, blk, prev)
	}
}

// A level follows a column's values slowly, in 1/256 units.
type level struct{ at int64 }

// predict returns the value the level expects next.
func (l *level) predict() int64 { return (l.at + 128) >> 8 }

// follow moves the level by an eighth of the residual e.
func (l *level) follow(e int64) { l.at += e << 5 }

// residuals fills s.zz with the residuals of the better of the level and
// steps layouts (judged by the sum of the residuals' sizes), and returns
// that layout and the residuals' sum.
func (s *intScratch) residuals(xs []int64) (int, uint64) {
	var lv level
	lv.at = xs[0] << 8
	var sumLevel, sumSteps uint64
	for i := 1; i < len(xs); i++ {
		e := xs[i] - lv.predict()
		lv.follow(e)
		sumLevel += min(zigzag(e), 1<<40)
		sumSteps += min(zigzag(xs[i]-xs[i-1]), 1<<40)
	}
	layout, sum := intsLevel, sumLevel
	if sumSteps < sumLevel {
		layout, sum = intsSteps, sumSteps
	}
	s.zz = intResiduals(s.zz[:0], xs, layout)
	return layout, sum
}

// intResiduals appends the zigzagged residuals of xs[1:] in a layout.
func intResiduals(zz []uint64, xs []int64, layout int) []uint64 {
	var lv level
	lv.at = xs[0] << 8
	for i := 1; i < len(xs); i++ {
		var e int64
		if layout == intsSteps {
			e = xs[i] - xs[i-1]
		} else {
			e = xs[i] - lv.predict()
			lv.follow(e)
		}
		zz = append(zz, zigzag(e))
	}
	return zz
}

// residualCost estimates the bits of s.zz as a residual column.
func (s *intScratch) residualCost(sum uint64) int {
	_, cost := pickOrderCost(s.zz, sum)
	if len(s.zz) >= huffMinRun && s.rc.build(s.zz) {
		cost = min(cost, s.rc.cost(s.zz))
	}
	return cost + 1
}

// blocksCost returns the bits of xs in the blocks layout.
func blocksCost(xs []int64) int {
	cost, prev := 0, xs[0]
	for len(xs) > 0 {
		blk := xs[:min(packBlock, len(xs))]
		xs = xs[len(blk):]
		lo, hi, dlo, dhi, last := blockRange(blk, prev)
		wv, wd := bits.Len64(uint64(hi-lo)), bits.Len64(uint64(dhi-dlo))
		cost += 8 + 2*bits.Len64(uint64(len(blk))) + min(wv, wd)*len(blk) + 12 // base code, roughly
		prev = last
	}
	return cost
}

// blockRange returns a block's value range, step range and last value.
func blockRange(blk []int64, prev int64) (lo, hi, dlo, dhi, last int64) {
	lo, hi = blk[0], blk[0]
	dlo, dhi = blk[0]-prev, blk[0]-prev
	p := prev
	for _, x := range blk {
		lo, hi = min(lo, x), max(hi, x)
		d := x - p
		dlo, dhi = min(dlo, d), max(dhi, d)
		p = x
	}
	return lo, hi, dlo, dhi, p
}

// packOne writes one block given the value before it, and returns its last value.
func packOne(w *bitWriter, blk []int64, prev int64) int64 {
	lo, hi, dlo, dhi, p := blockRange(blk, prev)
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
func decodeInts(r *bitReader, out []int64, s *intScratch) error {
	same, err := r.bit()
	if err != nil {
		return err
	}
	z, err := r.expGolomb(0)
	if err != nil {
		return err
	}
	prev := unzigzag(z)
	out[0] = prev
	if same {
		for i := range out {
			out[i] = prev
		}
		return nil
	}
	layout, err := r.read(2)
	if err != nil {
		return err
	}
	switch layout {
	case intsBlocks:
	case intsLevel, intsSteps:
		return decodeIntResiduals(r, out, int(layout), s)
	default:
		return errCorruptField("integer column layout")
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

// decodeIntResiduals reads the level or steps layout; out[0] is set by the caller's first value.
func decodeIntResiduals(r *bitReader, out []int64, layout int, s *intScratch) error {
	s.zz = grow(s.zz, len(out)-1)
	if err := decodeResiduals(r, s.zz, &s.rc); err != nil {
		return err
	}
	var lv level
	lv.at = out[0] << 8
	for i, z := range s.zz {
		e := unzigzag(z)
		if layout == intsSteps {
			out[i+1] = out[i] + e
		} else {
			out[i+1] = lv.predict() + e
			lv.follow(e)
		}
	}
	return nil
}
