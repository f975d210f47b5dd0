package v1layer

import (
	"fmt"
	"math"
)

// PoolConfig sets up local max pooling of every output map. The zero value
// is the reference pooling: a 3×3 window, stride 2, window centred on
// (s·i, s·j) and clipped to the image (same as padding with 0, since every
// pooled map is ≥ 0 — or padding with −∞ for signed maps), output
// ceil(H/s)×ceil(W/s). Size 1 with Stride 1 turns pooling off.
type PoolConfig struct {
	Size   int `json:"size,omitempty"`   // window side, odd, in [1,15]; default 3
	Stride int `json:"stride,omitempty"` // in [1,Size+1]; default 2 (1 when Size is 1)
	// Scales also takes the max over scales of channels that differ only in
	// scale (same kind, orientation, phase and polarity); those channels
	// then report Scale −1.
	Scales bool `json:"scales,omitempty"`
}

func (c PoolConfig) withDefaults() PoolConfig {
	if c.Size == 0 {
		c.Size = 3
	}
	if c.Stride == 0 {
		c.Stride = 2
		if c.Size == 1 {
			c.Stride = 1
		}
	}
	return c
}

func (c PoolConfig) validate() error {
	if c.Size < 1 || c.Size > 15 || c.Size%2 == 0 {
		return fmt.Errorf("v1layer: Pool.Size %d; want an odd window in [1,15] (3 is the default, 1 with Stride 1 is no pooling)", c.Size)
	}
	if c.Stride < 1 || c.Stride > c.Size+1 {
		return fmt.Errorf("v1layer: Pool.Stride %d out of range [1,%d] for window %d (a stride above window+1 would skip pixels); 2 is the default", c.Stride, c.Size+1, c.Size)
	}
	return nil
}

// poolOut is the pooled size of n pixels at stride s.
func poolOut(n, s int) int { return (n + s - 1) / s }

// maxPool writes the max over the size×size window centred at (s·i, s·j),
// clipped to the h×w map src, to dst (poolOut(h)×poolOut(w)). tmp holds
// at least w values (2w+2 enable the vectorised 3×3 stride-2 path). Max is separable: first over the window's rows (a full-width
// element-wise max), then along the row.
func maxPool(dst, src []float32, h, w, size, s int, tmp []float32) {
	r := size / 2
	ow, oh := poolOut(w, s), poolOut(h, s)
	if size == 1 && s == 1 {
		copy(dst[:h*w], src[:h*w])
		return
	}
	if size == 3 && s == 2 && h >= 2 && w >= 2 && w <= pool3s2MaxW {
		pool3s2(dst, src, h, w)
		return
	}
	t := tmp[:w]
	if size == 3 && s == 2 && w >= 2 && len(tmp) >= 2*w+2 {
		pool3s2Wide(dst, src, h, w, tmp)
		return
	}
	for i := 0; i < oh; i++ {
		c := i * s
		lo, hi := max(c-r, 0), min(c+r, h-1)
		switch hi - lo {
		case 0:
			copy(t, src[lo*w:lo*w+w])
		case 1:
			max2To(t, src[lo*w:lo*w+w], src[(lo+1)*w:(lo+1)*w+w])
		default:
			max3To(t, src[lo*w:lo*w+w], src[(lo+1)*w:(lo+1)*w+w], src[(lo+2)*w:(lo+2)*w+w])
			for y := lo + 3; y <= hi; y++ {
				maxInto(t, src[y*w:y*w+w])
			}
		}
		out := dst[i*ow : i*ow+ow]
		if size == 3 && s == 2 {
			pool3s2Row(out, t)
			continue
		}
		for j := range out {
			c := j * s
			lo, hi := max(c-r, 0), min(c+r, w-1)
			m := t[lo]
			for x := lo + 1; x <= hi; x++ {
				m = max(m, t[x])
			}
			out[j] = m
		}
	}
}

// pool3s2Row is the 3-wide, stride-2 row max: out[j] = max(t[2j−1..2j+1]) clipped.
func pool3s2Row(out, t []float32) {
	w := len(t)
	out[0] = t[0]
	if w > 1 {
		out[0] = max(t[0], t[1])
	}
	j := 1
	for ; 2*j+1 < w; j++ {
		// explicit comparisons: the max builtin's NaN and signed-zero
		// handling costs several times more here.
		m := t[2*j]
		if a := t[2*j-1]; a > m {
			m = a
		}
		if b := t[2*j+1]; b > m {
			m = b
		}
		out[j] = m
	}
	if j < len(out) {
		m := t[2*j]
		if a := t[2*j-1]; a > m {
			m = a
		}
		out[j] = m
	}
}

// pool3s2MaxW is the widest map for which the fused scalar pool3s2 is
// used: BenchmarkPool (SIMD build, loaded machine, two runs) measured it
// fastest at 28×28 (2.0-2.5 µs against 2.8-4.0 for pool3s2Wide) and
// slower from 64×64 on (10.9-18.7 µs against 9.7-15.3; at 256×256
// 520-610 µs against 53-109).
var pool3s2MaxW = 48

// pool3s2 is maxPool for the 3×3, stride-2 window in one scalar pass over
// three source rows per output row (no intermediate buffer), h, w ≥ 2.
func pool3s2(dst, src []float32, h, w int) {
	ow, oh := poolOut(w, 2), poolOut(h, 2)
	for i := 0; i < oh; i++ {
		c := 2 * i
		r0 := src[max(c-1, 0)*w:][:w]
		r1 := src[c*w:][:w]
		r2 := src[min(c+1, h-1)*w:][:w]
		out := dst[i*ow:][:ow]
		col := func(x int) float32 {
			m := r1[x]
			if v := r0[x]; v > m {
				m = v
			}
			if v := r2[x]; v > m {
				m = v
			}
			return m
		}
		m := col(0)
		if v := col(1); v > m {
			m = v
		}
		out[0] = m
		j := 1
		for ; 2*j+1 < w; j++ {
			a := col(2*j - 1)
			b := col(2 * j)
			cc := col(2*j + 1)
			if b > a {
				a = b
			}
			if cc > a {
				a = cc
			}
			out[j] = a
		}
		if j < ow {
			a := col(2*j - 1)
			if b := col(2 * j); b > a {
				a = b
			}
			out[j] = a
		}
	}
}

// pool3s2Wide is maxPool for the 3×3, stride-2 window on wide maps: per
// output row, a vectorised max of the three source rows into t (with −Inf
// guards at both ends), a vectorised 3-wide max along t, then every other
// element. tmp holds 2w+2 values.
func pool3s2Wide(dst, src []float32, h, w int, tmp []float32) {
	ow, oh := poolOut(w, 2), poolOut(h, 2)
	ninf := float32(math.Inf(-1))
	t := tmp[:w+2]
	hm := tmp[w+2 : 2*w+2]
	t[0], t[w+1] = ninf, ninf
	for i := 0; i < oh; i++ {
		c := 2 * i
		lo, hi := max(c-1, 0), min(c+1, h-1)
		if hi-lo == 2 {
			max3To(t[1:w+1], src[lo*w:][:w], src[(lo+1)*w:][:w], src[hi*w:][:w])
		} else {
			max2To(t[1:w+1], src[lo*w:][:w], src[hi*w:][:w])
		}
		max3To(hm, t[0:w], t[1:w+1], t[2:w+2])
		out := dst[i*ow:][:ow]
		for j := range out {
			out[j] = hm[2*j]
		}
	}
}
