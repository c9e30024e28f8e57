package store

import "slices"

// encodeTimes writes the time column for ns (the first time is in the header).
func encodeTimes(w *bitWriter, ns []int64) {
	if len(ns) < 2 {
		return
	}
	deltas := make([]int64, len(ns)-1)
	for i := range deltas {
		deltas[i] = ns[i+1] - ns[i] // wraps for extreme inputs; decoding wraps back
	}
	dod := make([]uint64, len(deltas)-1)
	for i := range dod {
		dod[i] = zigzag(deltas[i+1] - deltas[i])
	}
	period := median(deltas)
	res := make([]uint64, len(deltas))
	for i, d := range deltas {
		res[i] = zigzag(d - period)
	}
	kd, costD := bestOrder(dod)
	costD += egCost(zigzag(deltas[0]), 0)
	kp, costP := bestOrder(res)
	costP += egCost(zigzag(period), 0)
	if costD <= costP {
		w.write(timeDoD, 1)
		w.write(uint64(kd), 6)
		w.expGolomb(zigzag(deltas[0]), 0)
		for _, x := range dod {
			w.expGolomb(x, kd)
		}
		return
	}
	w.write(timePeriod, 1)
	w.write(uint64(kp), 6)
	w.expGolomb(zigzag(period), 0)
	for _, x := range res {
		w.expGolomb(x, kp)
	}
}

// decodeTimes fills ns; ns[0] is first.
func decodeTimes(r *bitReader, ns []int64, first int64) error {
	ns[0] = first
	if len(ns) < 2 {
		return nil
	}
	mode, err := r.read(1)
	if err != nil {
		return err
	}
	k, err := r.read(6)
	if err != nil {
		return err
	}
	if k > 62 {
		return errCorruptField("time code order")
	}
	head, err := r.expGolomb(0)
	if err != nil {
		return err
	}
	var delta int64
	for i := 1; i < len(ns); i++ {
		switch {
		case mode == timePeriod:
			x, err := r.expGolomb(uint(k))
			if err != nil {
				return err
			}
			delta = unzigzag(head) + unzigzag(x)
		case i == 1:
			delta = unzigzag(head)
		default:
			x, err := r.expGolomb(uint(k))
			if err != nil {
				return err
			}
			delta += unzigzag(x)
		}
		ns[i] = ns[i-1] + delta
		if ns[i] < ns[i-1] {
			return errCorruptField("time column (times go backwards)")
		}
	}
	return nil
}

// median returns the median of xs (the lower one for an even count).
func median(xs []int64) int64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	return s[(len(s)-1)/2]
}
