package v1layer

import "fmt"

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
// h·poolOut(w) values.
func maxPool(dst, src []float32, h, w, size, s int, tmp []float32) {
	r := size / 2
	ow, oh := poolOut(w, s), poolOut(h, s)
	if size == 1 && s == 1 {
		copy(dst[:h*w], src[:h*w])
		return
	}
	// Horizontal max, then vertical max (max is separable).
	for y := 0; y < h; y++ {
		row := src[y*w : y*w+w]
		out := tmp[y*ow : y*ow+ow]
		for j := range out {
			c := j * s
			lo, hi := max(c-r, 0), min(c+r, w-1)
			m := row[lo]
			for x := lo + 1; x <= hi; x++ {
				if row[x] > m {
					m = row[x]
				}
			}
			out[j] = m
		}
	}
	for i := 0; i < oh; i++ {
		c := i * s
		lo, hi := max(c-r, 0), min(c+r, h-1)
		out := dst[i*ow : i*ow+ow]
		copy(out, tmp[lo*ow:lo*ow+ow])
		for y := lo + 1; y <= hi; y++ {
			in := tmp[y*ow : y*ow+ow]
			for j, v := range in {
				if v > out[j] {
					out[j] = v
				}
			}
		}
	}
}

// maxInto sets dst[i] = max(dst[i], src[i]).
func maxInto(dst, src []float32) {
	src = src[:len(dst)]
	for i, v := range src {
		if v > dst[i] {
			dst[i] = v
		}
	}
}
