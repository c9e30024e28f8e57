package drivers

// The modbus library frames requests itself (CRC for RTU, the MBAP header
// for TCP), so the trace shows each request and reply as a protocol data
// unit with the unit id in front, rebuilt from the call and its answer:
// unit, function code, then the function's fields.

var tableFunction = map[string]byte{"coil": 1, "discrete": 2, "holding": 3, "input": 4}

func (d *Modbus) requestPDU() []byte {
	q := d.count
	return []byte{d.mo.Unit, tableFunction[d.mo.Table],
		byte(d.mo.Address >> 8), byte(d.mo.Address), byte(q >> 8), byte(q)}
}

func (d *Modbus) tracePDU(dir string, b []byte) {
	if d.opts.Trace != nil {
		d.opts.Trace(dir, b)
	}
}

func (d *Modbus) traceRegs(regs []uint16) {
	if d.opts.Trace == nil {
		return
	}
	b := []byte{d.mo.Unit, tableFunction[d.mo.Table], byte(2 * len(regs))}
	for _, r := range regs {
		b = append(b, byte(r>>8), byte(r))
	}
	d.opts.Trace("recv", b)
}

func (d *Modbus) traceBits(bits []bool) {
	if d.opts.Trace == nil {
		return
	}
	var v byte
	if len(bits) > 0 && bits[0] {
		v = 1
	}
	d.opts.Trace("recv", []byte{d.mo.Unit, tableFunction[d.mo.Table], 1, v})
}
