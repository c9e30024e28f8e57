package store

import (
	"math/bits"
	"slices"
)

// Residual columns: a run of small unsigned residuals (zigzagged errors of
// a prediction) written either as exponential-Golomb codes of one order or,
// when the run is long enough to pay for a table, with a per-column
// canonical Huffman code (D. A. Huffman, "A Method for the Construction of
// Minimum-Redundancy Codes", Proc. IRE 40(9), 1952) over the values 0..30,
// 31 standing for "31 or more" followed by the excess in
// exponential-Golomb. A jittered schedule's residuals (mostly 0..6) cost
// about their entropy this way, some 0.4 bit less than the best Golomb code.
//
//	1 bit       0: Golomb: 6 bits order k, then the codes
//	            1: Huffman: 5 bits (symbols − 1), 4 bits code length per
//	            symbol (0: unused), then the codes

const (
	huffSymbols = 32 // the last is the escape
	huffMaxLen  = 12 // longer codes fall back to Golomb
	huffMinRun  = 64 // shorter runs never pay for a table
)

// residualCoder holds a chosen code and scratch space.
type residualCoder struct {
	count  [huffSymbols]int
	lens   [huffSymbols]uint8
	codes  [huffSymbols]uint16
	nsym   int
	table  []uint16 // decoding: symbol<<4 | length, indexed by the next maxLen bits
	maxLen uint     // the longest code length, when decoding
}

// encodeResiduals writes xs; sum is their sum (saturated), for the Golomb order.
func encodeResiduals(w *bitWriter, xs []uint64, sum uint64, c *residualCoder) {
	k, kCost := pickOrderCost(xs, sum)
	if len(xs) >= huffMinRun && c.build(xs) && c.cost(xs) < kCost {
		w.bit(true)
		w.write(uint64(c.nsym-1), 5)
		for _, l := range c.lens[:c.nsym] {
			w.write(uint64(l), 4)
		}
		for _, x := range xs {
			s := min(x, huffSymbols-1)
			w.write(uint64(c.codes[s]), uint(c.lens[s]))
			if s == huffSymbols-1 {
				w.expGolomb(x-s, 0)
			}
		}
		return
	}
	w.bit(false)
	w.write(uint64(k), 6)
	for _, x := range xs {
		w.expGolomb(x, k)
	}
}

// cost returns the bits of xs in the built Huffman code, table included.
func (c *residualCoder) cost(xs []uint64) int {
	n := 5 + 4*c.nsym
	for s, cnt := range c.count[:c.nsym] {
		n += cnt * int(c.lens[s])
	}
	if esc := huffSymbols - 1; c.nsym > esc {
		for _, x := range xs {
			if x >= uint64(esc) {
				n += egCost(x-uint64(esc), 0)
			}
		}
	}
	return n
}

// build counts xs and makes a Huffman code for them; false when a code
// would be longer than huffMaxLen bits.
func (c *residualCoder) build(xs []uint64) bool {
	c.count = [huffSymbols]int{}
	for _, x := range xs {
		c.count[min(x, huffSymbols-1)]++
	}
	c.nsym = 0
	for s, n := range c.count {
		if n > 0 {
			c.nsym = s + 1
		}
	}
	// Huffman's construction on the used symbols: repeatedly join the two
	// lightest subtrees (leaves sorted once; joined subtrees come out in
	// order of weight, so a second queue keeps them sorted); a symbol's
	// code length is its depth.
	type node struct {
		weight int
		syms   uint32 // the symbols under this subtree
	}
	var leafBuf, joinBuf [huffSymbols]node
	leaves, joined := leafBuf[:0], joinBuf[:0]
	for s, n := range c.count[:c.nsym] {
		if n > 0 {
			leaves = append(leaves, node{n, 1 << s})
		}
	}
	slices.SortFunc(leaves, func(a, b node) int { return a.weight - b.weight })
	c.lens = [huffSymbols]uint8{}
	if len(leaves) == 1 {
		c.lens[bits.TrailingZeros32(leaves[0].syms)] = 1
	}
	take := func() node {
		if len(joined) == 0 || (len(leaves) > 0 && leaves[0].weight <= joined[0].weight) {
			n := leaves[0]
			leaves = leaves[1:]
			return n
		}
		n := joined[0]
		joined = joined[1:]
		return n
	}
	for len(leaves)+len(joined) > 1 {
		a, b := take(), take()
		for m := a.syms | b.syms; m != 0; m &= m - 1 {
			c.lens[bits.TrailingZeros32(m)]++
		}
		joined = append(joined, node{a.weight + b.weight, a.syms | b.syms})
	}
	for _, l := range c.lens[:c.nsym] {
		if l > huffMaxLen {
			return false
		}
	}
	c.assign()
	return true
}

// assign gives canonical codes for the lengths: shorter codes first, equal
// lengths in symbol order (as DEFLATE does, RFC 1951 §3.2.2).
func (c *residualCoder) assign() {
	var perLen [huffMaxLen + 1]int
	for _, l := range c.lens[:c.nsym] {
		perLen[l]++
	}
	perLen[0] = 0
	var next [huffMaxLen + 2]int
	code := 0
	for l := 1; l <= huffMaxLen; l++ {
		code = (code + perLen[l-1]) << 1
		next[l] = code
	}
	for s, l := range c.lens[:c.nsym] {
		if l > 0 {
			c.codes[s] = uint16(next[l])
			next[l]++
		}
	}
}

// decodeResiduals reads len(out) residuals written by encodeResiduals.
func decodeResiduals(r *bitReader, out []uint64, c *residualCoder) error {
	huff, err := r.bit()
	if err != nil {
		return err
	}
	if !huff {
		k, err := r.read(6)
		if err != nil {
			return err
		}
		if k > 62 {
			return errCorruptField("code order")
		}
		for i := range out {
			if out[i], err = r.expGolomb(uint(k)); err != nil {
				return err
			}
		}
		return nil
	}
	if err := c.readTable(r); err != nil {
		return err
	}
	for i := range out {
		e := c.table[r.peek(c.maxLen)]
		l := int(e & 15)
		if l == 0 || r.remaining() < l {
			return errCorruptField("residual code")
		}
		r.pos += l
		s := uint64(e >> 4)
		if s == huffSymbols-1 {
			x, err := r.expGolomb(0)
			if err != nil {
				return err
			}
			s += x
		}
		out[i] = s
	}
	return nil
}

// readTable reads a Huffman code's lengths and builds its decoding table.
func (c *residualCoder) readTable(r *bitReader) error {
	nm1, err := r.read(5)
	if err != nil {
		return err
	}
	c.nsym = int(nm1) + 1
	c.lens = [huffSymbols]uint8{}
	kraft := 0 // the code's share of the code space, in units of 2^-huffMaxLen
	for s := range c.nsym {
		l, err := r.read(4)
		if err != nil {
			return err
		}
		if l > huffMaxLen {
			return errCorruptField("code length")
		}
		c.lens[s] = uint8(l)
		if l > 0 {
			kraft += 1 << (huffMaxLen - l)
		}
	}
	if kraft == 0 || kraft > 1<<huffMaxLen {
		return errCorruptField("code lengths")
	}
	c.assign()
	c.maxLen = 1
	for _, l := range c.lens[:c.nsym] {
		c.maxLen = max(c.maxLen, uint(l))
	}
	c.table = grow(c.table, 1<<c.maxLen)
	clear(c.table)
	for s, l := range c.lens[:c.nsym] {
		if l == 0 {
			continue
		}
		shift := c.maxLen - uint(l)
		lo := int(c.codes[s]) << shift
		for i := lo; i < lo+1<<shift; i++ {
			c.table[i] = uint16(s)<<4 | uint16(l)
		}
	}
	return nil
}
