package learn

import (
	"fmt"
	"math"
	"sync"
)

// QuantHead is a head (Head) in integer arithmetic: int8 weights, one
// symmetric scale per output unit, uint8 inputs and hidden activations,
// int32 accumulators (Jacob et al. 2018; see int8.go). The head's
// standardisation and the scale and zero point of every input are folded
// into the first layer:
//
//	x_i = S_i·(q_i − Z_i)                             (eq. 1, per input i)
//	a_j = Σ_i fw_ji·x_i + fb_j = s1_j·(Σ_i w1_ji·q_i + b1_j)
//	      with w1_ji = round(fw_ji·S_i / s1_j), b1_j = round(fb_j/s1_j) − Σ_i w1_ji·Z_i (eq. 7)
//
// For an MLP the hidden unit j is requantised to uint8 at its calibrated
// scale hs_j, q_hj = clamp(round(M_j·max(0, Σ w1·q + b1)), 0, 255) with the
// fixed-point M_j = s1_j/hs_j (eqs. 5 and 6), and the second layer is
// logits_k = s2_k·(Σ_j w2_kj·q_hj + b2_k) with w2_kj = round(w2f_kj·hs_j/s2_k).
// The class probabilities are the softmax of the logits, in float64.
//
// QuantHead is immutable and safe for concurrent use.
type QuantHead struct {
	kind    string
	d, h, k int
	w1      []int8 // m×d, m = h (mlp) or k (softmax)
	s1      []float32
	b1      []int32
	hs      []float32 // mlp: hidden scales
	hm      []fixedMul
	w2      []int8
	s2      []float32
	b2      []int32
	m1, m2  *int8Matrix // w1 and w2 in the product kernel's form
	pool    sync.Pool   // *quantHeadScratch
}

type quantHeadScratch struct {
	acc  []int32 // hidden accumulators
	hx   []uint8 // hidden codes
	lg   []int32 // logits
	wide []int16 // the product kernel's scratch
}

// maxQuantIn bounds the input length so that Σ|w·q| + |b| fits an int32:
// d·127·255 + 2^30 < 2^31.
const (
	maxQuantIn   = 33000
	maxQuantBias = 1 << 30
)

// Quantize returns the int8 form of hd. inScale and inZero give the scale
// and zero point of each of the In() inputs; calib holds n calibration
// input rows (n×In() uint8 codes, row-major) on which the hidden units'
// scales are calibrated (scale = largest activation / 255).
func (hd *Head) Quantize(inScale []float32, inZero []int32, calib []uint8, n int) (*QuantHead, error) {
	d := hd.d
	if len(inScale) != d || len(inZero) != d {
		return nil, fmt.Errorf("learn: Head.Quantize: %d input scales and %d zero points; the head has %d inputs", len(inScale), len(inZero), d)
	}
	if d > maxQuantIn {
		return nil, fmt.Errorf("learn: Head.Quantize: %d inputs; the int32 accumulators hold at most %d", d, maxQuantIn)
	}
	if err := checkScales("input scales", inScale); err != nil {
		return nil, err
	}
	if n < 1 || len(calib) != n*d {
		return nil, fmt.Errorf("learn: Head.Quantize: %d calibration values for %d rows of %d; want at least one row", len(calib), n, d)
	}
	m := hd.k
	if hd.kind == KindMLP {
		m = hd.h
	}
	q := &QuantHead{kind: hd.kind, d: d, h: hd.h, k: hd.k, w1: make([]int8, m*d), s1: make([]float32, m), b1: make([]int32, m)}
	wf := make([]float64, m*d)
	for j := 0; j < m; j++ {
		for i := 0; i < d; i++ {
			wf[j*d+i] = float64(hd.fw[j*d+i]) * float64(inScale[i])
		}
	}
	quantizeRows(q.w1, q.s1, wf, m, d)
	for j := 0; j < m; j++ {
		fitBias(q.w1, q.s1, wf, d, j, float64(hd.fb[j]))
		b := roundHalfAway(float64(hd.fb[j]) / float64(q.s1[j]))
		for i := 0; i < d; i++ {
			b -= int64(q.w1[j*d+i]) * int64(inZero[i])
		}
		if b < -maxQuantBias || b > maxQuantBias {
			return nil, fmt.Errorf("learn: Head.Quantize: bias of unit %d is %d weight steps, beyond ±2^30; the weights of that unit are too small for its bias", j, b)
		}
		q.b1[j] = int32(b)
	}
	if hd.kind == KindSoftmax {
		return q, q.derive()
	}
	// Calibrate the hidden scales on the calibration rows.
	q.m1 = newInt8Matrix(q.w1, m, d)
	var wide []int16
	mx := make([]float64, m)
	acc := make([]int32, m)
	for r := 0; r < n; r++ {
		q.layer1(acc, calib[r*d:(r+1)*d], &wide)
		for j, a := range acc {
			mx[j] = max(mx[j], float64(q.s1[j])*float64(a))
		}
	}
	q.hs = make([]float32, m)
	for j := range mx {
		q.hs[j], _ = ActivationScale(0, mx[j])
	}
	w2 := make([]float64, hd.k*m)
	for c := 0; c < hd.k; c++ {
		for j := 0; j < m; j++ {
			w2[c*m+j] = float64(hd.w2[c*m+j]) * float64(q.hs[j])
		}
	}
	q.w2, q.s2, q.b2 = make([]int8, hd.k*m), make([]float32, hd.k), make([]int32, hd.k)
	quantizeRows(q.w2, q.s2, w2, hd.k, m)
	for c := 0; c < hd.k; c++ {
		fitBias(q.w2, q.s2, w2, m, c, float64(hd.b2[c]))
		b := roundHalfAway(float64(hd.b2[c]) / float64(q.s2[c]))
		if b < -maxQuantBias || b > maxQuantBias {
			return nil, fmt.Errorf("learn: Head.Quantize: bias of class %d is %d weight steps, beyond ±2^30", c, b)
		}
		q.b2[c] = int32(b)
	}
	return q, q.derive()
}

// derive packs the weights and computes the hidden requantisation
// multipliers M_j = s1_j/hs_j.
func (q *QuantHead) derive() error {
	q.m1 = newInt8Matrix(q.w1, len(q.s1), q.d)
	if q.kind != KindMLP {
		return nil
	}
	q.m2 = newInt8Matrix(q.w2, q.k, q.h)
	q.hm = make([]fixedMul, q.h)
	for j := range q.hm {
		r := float64(q.s1[j]) / float64(q.hs[j])
		f, err := newFixedMul(r, fmt.Sprintf("int8 head hidden unit %d (s1/hscale)", j))
		if err != nil {
			return err
		}
		q.hm[j] = f
	}
	return nil
}

// layer1 writes Σ_i w1_ji·x_i + b1_j for every first-layer unit j into
// acc; buf is the kernel's scratch.
func (q *QuantHead) layer1(acc []int32, x []uint8, buf *[]int16) { q.m1.mulVec(acc, x, q.b1, buf) }

// In returns the input length.
func (q *QuantHead) In() int { return q.d }

// NumClasses returns the number of classes.
func (q *QuantHead) NumClasses() int { return q.k }

// Kind returns "softmax" or "mlp".
func (q *QuantHead) Kind() string { return q.kind }

// Hidden returns the number of hidden units (0 for softmax).
func (q *QuantHead) Hidden() int { return q.h }

// Logits writes the integer logit accumulators of x (In() uint8 codes)
// into dst (grown to NumClasses()) and returns it: class c's logit is
// LogitScale(c)·dst[c]. The result is exact integer arithmetic, the same on
// every architecture. It panics if len(x) != In().
func (q *QuantHead) Logits(dst []int32, x []uint8) []int32 {
	if len(x) != q.d {
		panic(fmt.Sprintf("learn: QuantHead.Logits: %d inputs, head expects %d", len(x), q.d))
	}
	if cap(dst) < q.k {
		dst = make([]int32, q.k)
	}
	dst = dst[:q.k]
	s := q.scratch()
	defer q.pool.Put(s)
	q.logits(dst, x, s)
	return dst
}

func (q *QuantHead) scratch() *quantHeadScratch {
	s, _ := q.pool.Get().(*quantHeadScratch)
	if s == nil {
		s = &quantHeadScratch{acc: make([]int32, q.h), hx: make([]uint8, q.h), lg: make([]int32, q.k)}
	}
	return s
}

// logits is Logits with scratch s.
func (q *QuantHead) logits(dst []int32, x []uint8, s *quantHeadScratch) {
	if q.kind == KindSoftmax {
		q.layer1(dst, x, &s.wide)
		return
	}
	acc, hx := s.acc, s.hx
	q.layer1(acc, x, &s.wide)
	for j, a := range acc {
		hx[j] = clampU8(q.hm[j].apply(int64(max(a, 0))))
	}
	q.m2.mulVec(dst, hx, q.b2, &s.wide)
}

// LogitScale returns the real scale of class c's integer logit.
func (q *QuantHead) LogitScale(c int) float32 {
	if q.kind == KindSoftmax {
		return q.s1[c]
	}
	return q.s2[c]
}

// Predict writes the class probabilities of x into dst (length
// NumClasses(); a shorter dst is replaced) and returns it: the softmax of
// the dequantised logits. It panics if len(x) != In().
func (q *QuantHead) Predict(dst []float32, x []uint8) []float32 {
	if len(x) != q.d {
		panic(fmt.Sprintf("learn: QuantHead.Predict: %d inputs, head expects %d", len(x), q.d))
	}
	s := q.scratch()
	defer q.pool.Put(s)
	l := s.lg
	q.logits(l, x, s)
	if len(dst) < q.k {
		dst = make([]float32, q.k)
	}
	dst = dst[:q.k]
	for c, v := range l {
		dst[c] = float32(float64(q.LogitScale(c)) * float64(v))
	}
	headSoftmax(dst)
	return dst
}

// Tensors returns the int8 head's arrays (copies):
//
//	softmax: w int8 [k d], scale [k], bias int32 [k]
//	mlp:     w1 int8 [h d], scale1 [h], bias1 int32 [h], hscale [h],
//	         w2 int8 [k h], scale2 [k], bias2 int32 [k]
func (q *QuantHead) Tensors() []QuantTensor {
	m := q.k
	if q.kind == KindMLP {
		m = q.h
	}
	b8 := func(s []int8) []int8 { return append([]int8(nil), s...) }
	i32 := func(s []int32) []int32 { return append([]int32(nil), s...) }
	f32 := func(s []float32) []float32 { return append([]float32(nil), s...) }
	if q.kind == KindSoftmax {
		return []QuantTensor{
			{Name: "w", Shape: []int{m, q.d}, I8: b8(q.w1)},
			{Name: "scale", Shape: []int{m}, F: f32(q.s1)},
			{Name: "bias", Shape: []int{m}, I32: i32(q.b1)},
		}
	}
	return []QuantTensor{
		{Name: "w1", Shape: []int{m, q.d}, I8: b8(q.w1)},
		{Name: "scale1", Shape: []int{m}, F: f32(q.s1)},
		{Name: "bias1", Shape: []int{m}, I32: i32(q.b1)},
		{Name: "hscale", Shape: []int{m}, F: f32(q.hs)},
		{Name: "w2", Shape: []int{q.k, m}, I8: b8(q.w2)},
		{Name: "scale2", Shape: []int{q.k}, F: f32(q.s2)},
		{Name: "bias2", Shape: []int{q.k}, I32: i32(q.b2)},
	}
}

// NewQuantHeadFromTensors rebuilds an int8 head of the given kind, input
// length d, hidden units h (ignored for softmax) and k classes, as the float
// configuration describes it, from the tensors Tensors returned. A tensor
// whose shape disagrees with that description, a scale that is zero,
// negative or not finite, or a bias beyond ±2^30 is an error naming the
// tensor.
func NewQuantHeadFromTensors(kind string, d, h, k int, ts []QuantTensor) (*QuantHead, error) {
	if d < 1 || d > maxQuantIn || k < 2 {
		return nil, fmt.Errorf("learn: int8 head: %d inputs and %d classes; want inputs in [1, %d] and at least 2 classes", d, k, maxQuantIn)
	}
	q := &QuantHead{kind: kind, d: d, k: k}
	var specs []quantSpec
	switch kind {
	case KindSoftmax:
		specs = []quantSpec{{"w", 'b', []int{k, d}}, {"scale", 'f', []int{k}}, {"bias", 'i', []int{k}}}
	case KindMLP:
		if h < 1 || h > maxQuantIn {
			return nil, fmt.Errorf("learn: int8 head: %d hidden units; want [1, %d]", h, maxQuantIn)
		}
		q.h = h
		specs = []quantSpec{{"w1", 'b', []int{h, d}}, {"scale1", 'f', []int{h}}, {"bias1", 'i', []int{h}},
			{"hscale", 'f', []int{h}}, {"w2", 'b', []int{k, h}}, {"scale2", 'f', []int{k}}, {"bias2", 'i', []int{k}}}
	default:
		return nil, fmt.Errorf("learn: int8 head: kind %q; want %q or %q", kind, KindSoftmax, KindMLP)
	}
	by, err := pickQuant("int8 head", ts, specs)
	if err != nil {
		return nil, err
	}
	for _, sp := range specs {
		t := by[sp.name]
		switch sp.kind {
		case 'f':
			if err := checkScales(sp.name, t.F); err != nil {
				return nil, err
			}
		case 'i':
			for i, b := range t.I32 {
				if b < -maxQuantBias || b > maxQuantBias {
					return nil, fmt.Errorf("learn: int8 head tensor %q: value %d is %d; want within ±2^30", sp.name, i, b)
				}
			}
		case 'b':
			for i, w := range t.I8 {
				if w == math.MinInt8 {
					return nil, fmt.Errorf("learn: int8 head tensor %q: weight %d is −128; symmetric weights lie in [−127, 127]", sp.name, i)
				}
			}
		}
	}
	if kind == KindSoftmax {
		q.w1, q.s1, q.b1 = by["w"].I8, by["scale"].F, by["bias"].I32
	} else {
		q.w1, q.s1, q.b1, q.hs = by["w1"].I8, by["scale1"].F, by["bias1"].I32, by["hscale"].F
		q.w2, q.s2, q.b2 = by["w2"].I8, by["scale2"].F, by["bias2"].I32
	}
	return q, q.derive()
}
