package v1layer

import "math"

// Fused complex-cell + pooling path. With the reference pooling (3×3,
// stride 2) and no stage that needs whole full-resolution maps (contrast
// normalisation, length summation, end-stopping, divisive normalisation),
// each output map is pooled straight from the correlation responses,
// without writing the rectified or energy maps first. The results are the
// same values, because max commutes with the monotone maps involved:
//
//	max_window max(0, r)        = max(0, max_window r)
//	max_window max(0, −r)       = max(0, −min_window r)
//	max_window sqrt(e² + o²)    = sqrt(max_window (e² + o²))
//
// (float32 max/min are exact and float32 sqrt is correctly rounded and
// non-decreasing, so these hold bit for bit). The square root then runs on
// the pooled quarter of the pixels only.

// fusable reports whether post can take the fused path.
func (f *FrontEnd) fusable() bool {
	p := f.cfg.Pool
	if p.Size != 3 || p.Stride != 2 || len(f.norm) > 0 {
		return false
	}
	for _, sc := range f.stage {
		if sc.lcn || sc.length != nil || sc.op == opEndStop {
			return false
		}
	}
	return true
}

// postFused is post for fusable front ends.
func (f *FrontEnd) postFused(dst *Maps, h, w int, s *scratch) {
	on := dst.H * dst.W
	for o, g := range f.groups {
		out := dst.Pix[o*on : (o+1)*on]
		f.poolStage(out, &f.stage[g[0]], h, w, s)
		for _, i := range g[1:] {
			f.poolStage(s.pooled[:on], &f.stage[i], h, w, s)
			maxInto(out, s.pooled[:on])
		}
	}
}

func (f *FrontEnd) poolStage(out []float32, sc *stageChan, h, w int, s *scratch) {
	var b []float32
	if sc.op == opEnergy {
		b = s.resp[sc.k2]
	}
	pool3s2Op(out, s.resp[sc.k], b, h, w, sc.op, s.tmp)
}

// pool3s2Op writes the 3×3, stride-2 max pool (windows clipped to the
// image, as maxPool) of the stage channel op computed from the h×w
// responses a (and b, the odd response, for opEnergy) to dst. h, w ≥ 2;
// tmp holds 2w+2 values.
func pool3s2Op(dst, a, b []float32, h, w int, op chanOp, tmp []float32) {
	pool3s2Rows(dst, a, b, h, w, 0, poolOut(h, 2), 0, op, tmp)
}

// pool3s2Rows is pool3s2Op for output rows [i0,i1) only, reading row y of
// the responses at a[(y − yOrg)·w:] (and b likewise): a band buffer whose
// first row is image row yOrg.
func pool3s2Rows(dst, a, b []float32, h, w, i0, i1, yOrg int, op chanOp, tmp []float32) {
	ow := poolOut(w, 2)
	t := tmp[:w+2]
	hm := tmp[w+2 : 2*w+2]
	guard := float32(math.Inf(-1))
	if op == opOff {
		guard = float32(math.Inf(1))
	}
	t[0], t[w+1] = guard, guard
	row := func(m []float32, y int) []float32 { return m[(y-yOrg)*w:][:w] }
	for i := i0; i < i1; i++ {
		c := 2 * i
		lo, hi := max(c-1, 0), min(c+1, h-1)
		col := t[1 : w+1]
		three := hi-lo == 2
		switch op {
		case opEnergy:
			if three {
				esq3To(col, row(a, lo), row(a, lo+1), row(a, hi), row(b, lo), row(b, lo+1), row(b, hi))
			} else {
				esq2To(col, row(a, lo), row(a, hi), row(b, lo), row(b, hi))
			}
		case opOff:
			if three {
				min3To(col, row(a, lo), row(a, lo+1), row(a, hi))
			} else {
				min2To(col, row(a, lo), row(a, hi))
			}
		default:
			if three {
				max3To(col, row(a, lo), row(a, lo+1), row(a, hi))
			} else {
				max2To(col, row(a, lo), row(a, hi))
			}
		}
		out := dst[i*ow:][:ow]
		if op == opOff {
			min3To(hm, t[0:w], t[1:w+1], t[2:w+2])
			for j := range out {
				out[j] = max(-hm[2*j], 0)
			}
			continue
		}
		max3To(hm, t[0:w], t[1:w+1], t[2:w+2])
		switch op {
		case opOn:
			for j := range out {
				out[j] = max(hm[2*j], 0)
			}
		default:
			for j := range out {
				out[j] = hm[2*j]
			}
			if op == opEnergy {
				sqrtsOf(out)
			}
		}
	}
}
