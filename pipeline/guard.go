package pipeline

import (
	"fmt"
	"math"
	"sort"
)

// GuardConfig sets up the feature guard between the feature stages and the
// head. It is fitted, without labels, on the training features:
//
//   - features whose training standard deviation is below MinStd times the
//     median deviation over all features are dropped. The head standardises
//     its inputs, z = (x − mean)/std, so a feature that is almost constant on
//     clean images (a background cell) would turn any later disturbance of
//     it (pixel noise) into a huge z; such features carry almost no
//     information on clean data either.
//   - each kept feature is clipped to the range [min, max] it had on the
//     training images, so that no input drives the head further than the
//     training data did.
type GuardConfig struct {
	// MinStd is the relative deviation floor; 0 means 0.05, negative keeps
	// every feature. Range [0, 1).
	MinStd float64 `json:"min_std,omitempty"`
	// Clip is "range" (default) or "none".
	Clip string `json:"clip,omitempty"`
}

const (
	ClipRange = "range"
	ClipNone  = "none"
)

func (c GuardConfig) withDefaults() GuardConfig {
	orDefault(&c.MinStd, 0.05)
	orDefault(&c.Clip, ClipRange)
	return c
}

func (c GuardConfig) validate() error {
	if !(c.MinStd < 1) || math.IsNaN(c.MinStd) {
		return fmt.Errorf("pipeline: guard.min_std %g; want < 1 (0 means 0.05, negative keeps every feature)", c.MinStd)
	}
	switch c.Clip {
	case ClipRange, ClipNone:
	default:
		return fmt.Errorf("pipeline: guard.clip %q; want %q (default) or %q", c.Clip, ClipRange, ClipNone)
	}
	return nil
}

// guard is a fitted feature guard: keep lists the indices of the kept
// features (ascending); lo and hi their clip bounds (nil without clipping).
type guard struct {
	in     int
	keep   []int32
	lo, hi []float32
}

// fitGuard fits the guard on the n×d training features X.
func fitGuard(c GuardConfig, X []float32, n, d int) *guard {
	mean := make([]float64, d)
	sq := make([]float64, d)
	lo := make([]float32, d)
	hi := make([]float32, d)
	copy(lo, X[:d])
	copy(hi, X[:d])
	for i := 0; i < n; i++ {
		row := X[i*d : (i+1)*d]
		for j, v := range row {
			mean[j] += float64(v)
			lo[j] = min(lo[j], v)
			hi[j] = max(hi[j], v)
		}
	}
	for j := range mean {
		mean[j] /= float64(n)
	}
	for i := 0; i < n; i++ {
		for j, v := range X[i*d : (i+1)*d] {
			e := float64(v) - mean[j]
			sq[j] += e * e
		}
	}
	std := make([]float64, d)
	for j := range std {
		std[j] = math.Sqrt(sq[j] / float64(n))
	}
	sorted := append([]float64(nil), std...)
	sort.Float64s(sorted)
	floor := c.MinStd * sorted[d/2]
	g := &guard{in: d}
	for j, s := range std {
		if c.MinStd < 0 || (s > 0 && s >= floor) {
			g.keep = append(g.keep, int32(j))
		}
	}
	if len(g.keep) == 0 { // every feature constant: keep them all, the head copes
		for j := 0; j < d; j++ {
			g.keep = append(g.keep, int32(j))
		}
	}
	if c.Clip == ClipRange {
		g.lo = make([]float32, len(g.keep))
		g.hi = make([]float32, len(g.keep))
		for i, j := range g.keep {
			g.lo[i], g.hi[i] = lo[j], hi[j]
		}
	}
	return g
}

// out returns the number of features the guard passes on.
func (g *guard) out() int { return len(g.keep) }

// apply writes the guarded features of x (length g.in) into dst (length
// g.out()); dst may alias x (kept indices are ascending, so the copy moves
// every value down or leaves it in place).
func (g *guard) apply(dst, x []float32) {
	for i, j := range g.keep {
		v := x[j]
		if g.lo != nil {
			v = min(max(v, g.lo[i]), g.hi[i])
		}
		dst[i] = v
	}
}

// guardTensors names: guard.keep int32 [k], guard.lo / guard.hi float32 [k].
func (g *guard) tensors() []tensor {
	ts := []tensor{{Name: "guard.keep", DType: Int32, Shape: []int{len(g.keep)}, I: g.keep}}
	if g.lo != nil {
		ts = append(ts,
			tensor{Name: "guard.lo", DType: Float32, Shape: []int{len(g.lo)}, F: g.lo},
			tensor{Name: "guard.hi", DType: Float32, Shape: []int{len(g.hi)}, F: g.hi})
	}
	return ts
}

// loadGuard rebuilds a guard over in features from a model file's tensors.
func loadGuard(c GuardConfig, in int, keep *tensor, lo, hi *tensor) (*guard, error) {
	if keep == nil || keep.DType != Int32 || len(keep.Shape) != 1 {
		return nil, fmt.Errorf("tensor guard.keep missing or not an int32 vector")
	}
	g := &guard{in: in, keep: keep.I}
	prev := int32(-1)
	for _, j := range g.keep {
		if j <= prev || int(j) >= in {
			return nil, fmt.Errorf("tensor guard.keep: index %d after %d; want ascending indices in [0, %d)", j, prev, in)
		}
		prev = j
	}
	if c.Clip == ClipRange {
		if lo == nil || hi == nil || lo.DType != Float32 || hi.DType != Float32 || len(lo.F) != len(g.keep) || len(hi.F) != len(g.keep) {
			return nil, fmt.Errorf("tensors guard.lo and guard.hi must be float32 vectors of length %d", len(g.keep))
		}
		for i := range lo.F {
			if lo.F[i] > hi.F[i] {
				return nil, fmt.Errorf("tensor guard.lo[%d] = %g is above guard.hi[%d] = %g", i, lo.F[i], i, hi.F[i])
			}
		}
		g.lo, g.hi = lo.F, hi.F
	} else if lo != nil || hi != nil {
		return nil, fmt.Errorf("the config clips nothing but the file holds clip bounds")
	}
	return g, nil
}
