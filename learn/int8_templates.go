package learn

import (
	"fmt"
	"math"
	"math/bits"
	"sync"

	"github.com/striate/striate/v1layer"
)

// QuantTemplates is a template layer with the soft encoder (Templates) in
// integer arithmetic (Jacob et al. 2018; see int8.go). The float maps are
// quantised once to uint8, x = S_x·(q − Z_x); the folded filters F = t·W
// are int8 with one scale per template, F_kj = s_k·w_kj; each output
// feature is uint8 with the template's calibrated output scale o_k.
//
// For a patch of n = C·p·p codes q_j, with Σq, Σq² and a_k = Σ_j w_kj·q_j
// accumulated in integers, the per-patch normalisation of the float layer,
// r_k = F_k·(x − mean x)/sqrt(var x + ε) − F_k·μ, becomes
//
//	N_k = n·a_k − Σq·Σ_j w_kj          the patch mean acts as a zero point (eq. 7)
//	D   = n·Σq² − (Σq)² + E,  E = round(n²·ε/S_x²)
//	r_k = s_k·N_k/sqrt(D) − F_k·μ
//
// (S_x and Z_x cancel). sqrt(D) is the exact integer square root of D·2^16
// (so 2^8 of extra precision), its reciprocal a 62-bit fixed-point integer;
// the multiplier 2^8·s_k/o_k is fixed-point as eq. 6 has it. The outputs
// are q⁺_k = clamp(round((r_k − α)/o_k), 0, 255) and q⁻_k =
// clamp(round((−r_k − α)/o_k), 0, 255), computed with 16 fraction bits
// before the last rounding (half up; a negative value clamps to 0, so this
// is the same as half away from zero). With the normalisation off (NormEps
// < 0), N_k = a_k − Z_x·Σ_j w_kj and r_k = s_k·S_x·N_k − F_k·μ. Pooling is
// on the codes: the max, or the mean rounded half up.
//
// The input maps are resampled (other scales) in float32 before they are
// quantised. QuantTemplates is immutable and safe for concurrent use.
type QuantTemplates struct {
	shape   *Templates // configuration and sizes only (no learned tensors)
	sx      float32    // S_x
	zx      int32      // Z_x
	alpha   float32
	normEps float32   // < 0: no per-patch normalisation
	w       []int8    // k×dim
	ws      []float32 // s_k
	os      []float32 // o_k
	fmu     []float32 // F_k·μ

	wsum       []int64
	eps        int64 // E
	mul        []fixedMul
	bpos, bneg []int64        // −(F·μ + α)/o and (F·μ − α)/o, 16 fraction bits
	wm         *int8Matrix    // w in the product kernel's form
	rq         []requantConst // the normalised requantisation's constants, when every shift is in [1, 63]
	pool       sync.Pool
}

type quantTmplScratch struct {
	rs    v1layer.Maps
	q     []uint8 // quantised maps
	box   []int64
	p     []uint8     // positions×dim patches
	a     []int32     // positions×k products
	f     []uint8     // positions×2k features
	pl    []uint8     // one scale's pooled vector
	sums  []int64     // positions×2: Σq, Σq²
	wide  []int16     // the product kernel's scratch
	pairs pairScratch // the batch kernel's packed inputs
	cell  []int32     // one pooling cell's F accumulators
}

// Bounds that keep every intermediate within 64 bits: D·2^16 < 2^63.
const maxQuantEps = 1 << 46

// Quantize returns the integer form of t, calibrated on the complex-cell
// maps calib (the layer's own input): the input scale and zero point span
// the range of every value in calib, and each template's output scale the
// largest feature it gives on calib (at every scale of the config), as
// Jacob et al. 2018 (§3) take activation ranges from observed minima and
// maxima. Only the soft encoder has an integer form.
func (t *Templates) Quantize(calib []v1layer.Maps) (*QuantTemplates, error) {
	if t.cfg.Encoder != EncodeSoft {
		return nil, fmt.Errorf("learn: Templates.Quantize: encoder %q has no integer form; want %q", t.cfg.Encoder, EncodeSoft)
	}
	if len(calib) == 0 {
		return nil, fmt.Errorf("learn: Templates.Quantize: no calibration maps")
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for i := range calib {
		m := &calib[i]
		if m.C != t.c {
			return nil, fmt.Errorf("learn: Templates.Quantize: calibration map %d has %d channels; the templates expect %d", i, m.C, t.c)
		}
		for _, v := range m.Pix {
			lo, hi = min(lo, float64(v)), max(hi, float64(v))
		}
	}
	if math.IsNaN(lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return nil, fmt.Errorf("learn: Templates.Quantize: the calibration maps hold a non-finite value")
	}
	sx, zx := ActivationScale(lo, hi)
	k := t.k
	mx := make([]float64, k)
	s := &tmplScratch{}
	for i := range calib {
		for _, sc := range t.cfg.Scales {
			src := &calib[i]
			if sc != 1 {
				sh, sw := scaledSize(src.H, src.W, sc)
				resample(&s.rs, src, sh, sw)
				src = &s.rs
			}
			if oh, ow := t.positions(src.H, src.W); oh < 1 || ow < 1 {
				return nil, fmt.Errorf("learn: Templates.Quantize: calibration map %d (%d×%d at scale %g) is smaller than the patch size %d", i, src.H, src.W, sc, t.p)
			}
			oh, ow := t.features(s, src)
			for pos := 0; pos < oh*ow; pos++ {
				f := s.f[pos*2*k : (pos+1)*2*k]
				for j := 0; j < k; j++ {
					mx[j] = max(mx[j], float64(f[j]), float64(f[k+j]))
				}
			}
		}
	}
	q := &QuantTemplates{shape: t.shapeOnly(), sx: sx, zx: zx, alpha: t.alpha, normEps: t.normEps,
		w: make([]int8, k*t.dim), ws: make([]float32, k), os: make([]float32, k), fmu: append([]float32(nil), t.fmu...)}
	wf := make([]float64, len(t.filt))
	for i, v := range t.filt {
		wf[i] = float64(v)
	}
	quantizeRows(q.w, q.ws, wf, k, t.dim)
	for j := range mx {
		q.os[j], _ = ActivationScale(0, mx[j])
	}
	return q, q.derive()
}

// shapeOnly returns a copy of t's configuration and sizes without its
// learned tensors: what OutLen, positions and Features need.
func (t *Templates) shapeOnly() *Templates {
	return &Templates{cfg: t.Config(), c: t.c, p: t.p, dim: t.dim, k: t.k}
}

// derive computes the integer constants from the stored scales. Each
// floating-point product is rounded on its own (explicit conversions), so
// the constants are the same on every architecture.
func (q *QuantTemplates) derive() error {
	t := q.shape
	k, n := t.k, t.dim
	q.wsum = make([]int64, k)
	for j := 0; j < k; j++ {
		var s int64
		for _, w := range q.w[j*n : (j+1)*n] {
			s += int64(w)
		}
		q.wsum[j] = s
	}
	q.eps = -1
	if q.normEps >= 0 {
		sx2 := float64(float64(q.sx) * float64(q.sx))
		e := float64(float64(n*n) * float64(float64(q.normEps)/sx2))
		if !(e < maxQuantEps) {
			return fmt.Errorf("learn: int8 templates: ε/S_x² = %g gives a regulariser beyond 2^46; the input scale %g is too small for norm_eps", float64(q.normEps)/sx2, q.sx)
		}
		q.eps = max(1, roundHalfAway(e))
	}
	q.mul = make([]fixedMul, k)
	q.bpos, q.bneg = make([]int64, k), make([]int64, k)
	for j := 0; j < k; j++ {
		var m float64
		if q.eps >= 0 {
			m = float64(256*float64(q.ws[j])) / float64(q.os[j])
		} else {
			m = float64(float64(q.ws[j])*float64(q.sx)) / float64(q.os[j])
		}
		f, err := newFixedMul(m, fmt.Sprintf("int8 template %d (scale/oscale)", j))
		if err != nil {
			return err
		}
		q.mul[j] = f
		o := float64(q.os[j])
		q.bpos[j] = roundHalfAway(float64(-(float64(q.fmu[j])+float64(q.alpha))/o) * 65536)
		q.bneg[j] = roundHalfAway(float64((float64(q.fmu[j])-float64(q.alpha))/o) * 65536)
	}
	q.rq = nil
	if q.eps >= 0 {
		q.rq = make([]requantConst, k)
		for j := range q.rq {
			q.rq[j] = requantConst{wsum: q.wsum[j], m0: q.mul[j].m0, s: uint(q.mul[j].shift + 16), bpos: q.bpos[j], bneg: q.bneg[j]}
			if q.rq[j].s < 1 || q.rq[j].s > 63 {
				q.rq = nil
				break
			}
		}
	}
	q.wm = newInt8Matrix(q.w, k, n)
	q.wm.usePairs(q.w, channelPairs(t.c, t.p))
	return nil
}

// Channels returns the number of input channels.
func (q *QuantTemplates) Channels() int { return q.shape.c }

// K returns the number of templates.
func (q *QuantTemplates) K() int { return q.shape.k }

// Features returns the number of features per position (2K).
func (q *QuantTemplates) Features() int { return q.shape.Features() }

// OutLen is Templates.OutLen for the same configuration.
func (q *QuantTemplates) OutLen(c, h, w int) (int, error) { return q.shape.OutLen(c, h, w) }

// InputScale returns the scale and zero point of the quantised input maps.
func (q *QuantTemplates) InputScale() (float32, int32) { return q.sx, q.zx }

// FeatureScales writes the scale of each element Encode gives for c×h×w
// maps (its zero point is 0) into dst (grown as needed) and returns it.
func (q *QuantTemplates) FeatureScales(dst []float32, c, h, w int) ([]float32, error) {
	n, err := q.OutLen(c, h, w)
	if err != nil {
		return nil, err
	}
	dst = grow(dst, n)
	k, F, off := q.shape.k, q.Features(), 0
	for _, g := range q.shape.cfg.Grids {
		for ff := 0; ff < F; ff++ {
			for c := 0; c < g*g; c++ {
				dst[off+ff*g*g+c] = q.os[ff%k]
			}
		}
		off += F * g * g
	}
	return dst, nil
}

// Encode writes the uint8 codes of the pooled features of the float maps m
// into dst (grown to OutLen) and returns it; the layout is that of
// Templates.Encode and element i is FeatureScales[i]·dst[i]. It panics if
// OutLen(m.C, m.H, m.W) returns an error.
func (q *QuantTemplates) Encode(dst []uint8, m *v1layer.Maps) []uint8 {
	n, err := q.OutLen(m.C, m.H, m.W)
	if err != nil {
		panic(err.Error())
	}
	if cap(dst) < n {
		dst = make([]uint8, n)
	}
	dst = dst[:n]
	s, _ := q.pool.Get().(*quantTmplScratch)
	if s == nil {
		s = &quantTmplScratch{}
	}
	defer q.pool.Put(s)
	for si, sc := range q.shape.cfg.Scales {
		src := m
		if sc != 1 {
			sh, sw := scaledSize(m.H, m.W, sc)
			resample(&s.rs, m, sh, sw)
			src = &s.rs
		}
		oh, ow := q.features(s, src)
		if si == 0 {
			q.poolGrids(dst, s.f, oh, ow, s)
			continue
		}
		if cap(s.pl) < n {
			s.pl = make([]uint8, n)
		}
		s.pl = s.pl[:n]
		q.poolGrids(s.pl, s.f, oh, ow, s)
		for i, v := range s.pl {
			dst[i] = max(dst[i], v)
		}
	}
	return dst
}

// isqrt returns ⌊√v⌋ exactly.
func isqrt(v uint64) uint64 {
	r := uint64(math.Sqrt(float64(v)))
	for r*r > v {
		r--
	}
	for (r+1)*(r+1) <= v {
		r++
	}
	return r
}

// features fills s.f with the positions×2K codes of the float maps m and
// returns the position grid size.
func (q *QuantTemplates) features(s *quantTmplScratch, m *v1layer.Maps) (oh, ow int) {
	t := q.shape
	oh, ow = t.positions(m.H, m.W)
	np, dim, k, p, st := oh*ow, t.dim, t.k, t.p, t.cfg.Stride
	H, W, C := m.H, m.W, m.C
	if cap(s.q) < len(m.Pix) {
		s.q = make([]uint8, len(m.Pix))
	}
	s.q = s.q[:len(m.Pix)]
	for i, v := range m.Pix {
		s.q[i] = QuantizeValue(v, q.sx, q.zx)
	}
	if cap(s.a) < np*k {
		s.a = make([]int32, np*k)
	}
	s.a = s.a[:np*k]
	if q.wm.wp != nil {
		q.pairProducts(s, C, H, W, oh, ow)
	} else {
		// Patches (extractPatch's layout) and their integer products.
		if cap(s.p) < np*dim {
			s.p = make([]uint8, np*dim)
		}
		s.p = s.p[:np*dim]
		for y := 0; y < oh; y++ {
			for x := 0; x < ow; x++ {
				dst := s.p[(y*ow+x)*dim:]
				j := 0
				for c := 0; c < C; c++ {
					for dy := 0; dy < p; dy++ {
						off := (c*H+y*st+dy)*W + x*st
						j += copy(dst[j:j+p], s.q[off:off+p])
					}
				}
			}
		}
		q.wm.mulRows(s.a, s.p, np, &s.wide, &s.pairs)
	}
	// Σq and Σq² of every patch from integral images (exact in int64).
	if cap(s.sums) < 2*np {
		s.sums = make([]int64, 2*np)
	}
	s.sums = s.sums[:2*np]
	if q.eps >= 0 {
		W1 := W + 1
		if cap(s.box) < 2*(H+1)*W1 {
			s.box = make([]int64, 2*(H+1)*W1)
		}
		b := s.box[:2*(H+1)*W1]
		clear(b[:2*W1])
		for y := 0; y < H; y++ {
			var r1, r2 int64
			b[2*(y+1)*W1], b[2*(y+1)*W1+1] = 0, 0
			for x := 0; x < W; x++ {
				var c1, c2 int64
				for c, off := 0, y*W+x; c < C; c, off = c+1, off+H*W {
					v := int64(s.q[off])
					c1 += v
					c2 += v * v
				}
				r1 += c1
				r2 += c2
				o, u := 2*((y+1)*W1+x+1), 2*(y*W1+x+1)
				b[o], b[o+1] = b[u]+r1, b[u+1]+r2
			}
		}
		for y := 0; y < oh; y++ {
			y0, y1 := y*st, y*st+p
			for x := 0; x < ow; x++ {
				x0, x1 := x*st, x*st+p
				a, bb, c, d := 2*(y0*W1+x0), 2*(y0*W1+x1), 2*(y1*W1+x0), 2*(y1*W1+x1)
				i := y*ow + x
				s.sums[2*i] = b[d] - b[bb] - b[c] + b[a]
				s.sums[2*i+1] = b[d+1] - b[bb+1] - b[c+1] + b[a+1]
			}
		}
	}
	F := 2 * k
	if cap(s.f) < np*F {
		s.f = make([]uint8, np*F)
	}
	s.f = s.f[:np*F]
	nn := int64(dim)
	for i := 0; i < np; i++ {
		acc, f := s.a[i*k:(i+1)*k], s.f[i*F:(i+1)*F]
		var recip uint64
		var sum int64
		if q.eps >= 0 {
			sum = s.sums[2*i]
			d := nn*s.sums[2*i+1] - sum*sum + q.eps
			recip = (1 << 62) / isqrt(uint64(d)<<16)
		}
		if q.rq != nil {
			requantNorm(f[:k], f[k:2*k], acc, q.rq, nn, sum, recip)
			continue
		}
		for j, a := range acc {
			var z uint64 // |N_k|/root with 32 fraction bits (normalised), or |N_k|·2^32
			var num int64
			if q.eps >= 0 {
				num = nn*int64(a) - sum*q.wsum[j]
				hi, lo := bits.Mul64(absU(num), recip)
				z = hi<<34 | lo>>30
			} else {
				num = int64(a) - int64(q.zx)*q.wsum[j]
				z = absU(num) << 32
			}
			zs := int64(min(z, satMax))
			if num < 0 {
				zs = -zs
			}
			tk := mulShift(zs, q.mul[j].m0, q.mul[j].shift+16)
			f[j] = clampU8((tk + q.bpos[j] + 1<<15) >> 16)
			f[k+j] = clampU8((-tk + q.bneg[j] + 1<<15) >> 16)
		}
	}
	return oh, ow
}

// requantConst holds one template's constants of the normalised
// requantisation, side by side for requantNorm.
type requantConst struct {
	wsum       int64
	m0         uint64
	s          uint // the multiplier's shift + 16, in [1, 63]
	bpos, bneg int64
}

// requantNorm is the normalised requantisation of features for one patch
// (Σq = sum, reciprocal root recip), the same integers as the general loop
// with mulShift specialised to shifts in [1, 63]: fp and fn receive q⁺ and
// q⁻ of each template.
func requantNorm(fp, fn []uint8, acc []int32, rq []requantConst, nn, sum int64, recip uint64) {
	fp, fn, rq = fp[:len(acc)], fn[:len(acc)], rq[:len(acc)]
	for j, a := range acc {
		c := &rq[j]
		num := nn*int64(a) - sum*c.wsum
		hi, lo := bits.Mul64(absU(num), recip)
		z := min(hi<<34|lo>>30, satMax)
		// mulShift(±z, m0, s) for s < 64: round half away from zero, saturate.
		hi, lo = bits.Mul64(z, c.m0)
		var cy uint64
		lo, cy = bits.Add64(lo, 1<<(c.s-1), 0)
		hi += cy
		r := uint64(satMax)
		if hi>>c.s == 0 {
			r = min(lo>>c.s|hi<<(64-c.s), satMax)
		}
		tk := int64(r)
		if num < 0 {
			tk = -tk
		}
		fp[j] = clampU8((tk + c.bpos + 1<<15) >> 16)
		fn[j] = clampU8((-tk + c.bneg + 1<<15) >> 16)
	}
}

// channelPairs pairs the columns of a [C p p] patch by channel: pair
// (c2, dy, dx) holds channels 2·c2 and 2·c2+1 at (dy, dx) (the second
// none when C is odd), so that the pairs of every patch can be read from
// one map of packed channel pairs (pairProducts).
func channelPairs(c, p int) [][2]int32 {
	c2n := (c + 1) / 2
	cols := make([][2]int32, c2n*p*p)
	for c2 := 0; c2 < c2n; c2++ {
		for e := 0; e < p*p; e++ {
			b := int32(-1)
			if 2*c2+1 < c {
				b = int32((2*c2+1)*p*p + e)
			}
			cols[c2*p*p+e] = [2]int32{int32(2*c2*p*p + e), b}
		}
	}
	return cols
}

// pairProducts fills s.a with the products of every patch by the batch
// kernel: the quantised maps s.q become one map of packed channel pairs,
// and the kernel reads each patch's pairs from it by offset, so no patch is
// copied.
func (q *QuantTemplates) pairProducts(s *quantTmplScratch, C, H, W, oh, ow int) {
	t := q.shape
	p, st, hw := t.p, t.cfg.Stride, H*W
	c2n := (C + 1) / 2
	pm := grow32(&s.pairs.xp, c2n*hw)
	for c2 := 0; c2 < c2n; c2++ {
		a, d := s.q[2*c2*hw:(2*c2+1)*hw], pm[c2*hw:(c2+1)*hw]
		if 2*c2+1 < C {
			b := s.q[(2*c2+1)*hw : (2*c2+2)*hw]
			b = b[:len(a)]
			for i, v := range a {
				d[i] = int32(v) | int32(b[i])<<16
			}
		} else {
			for i, v := range a {
				d[i] = int32(v)
			}
		}
	}
	offs := grow32(&s.pairs.offs, c2n*p*p)
	for c2 := 0; c2 < c2n; c2++ {
		for dy := 0; dy < p; dy++ {
			for dx := 0; dx < p; dx++ {
				offs[(c2*p+dy)*p+dx] = int32((c2*H+dy)*W + dx)
			}
		}
	}
	base := grow32(&s.pairs.base, oh*ow)
	for y := 0; y < oh; y++ {
		for x := 0; x < ow; x++ {
			base[y*ow+x] = int32(y*st*W + x*st)
		}
	}
	mulPairs(s.a, q.wm.wp, pm, base, offs, t.k, q.wm.mpad)
}

func absU(v int64) uint64 {
	if v < 0 {
		return uint64(-v)
	}
	return uint64(v)
}

// poolGrids pools the positions×F codes f on every grid into dst: the max,
// or the mean rounded half up (Templates.poolGrids on codes). Each cell
// runs over its positions once, updating all F features of a position
// (contiguous in f) together.
func (q *QuantTemplates) poolGrids(dst, f []uint8, oh, ow int, s *quantTmplScratch) {
	F := q.Features()
	off := 0
	avg := q.shape.cfg.Pool == PoolAvg
	if cap(s.cell) < F {
		s.cell = make([]int32, F)
	}
	cell := s.cell[:F]
	for _, g := range q.shape.cfg.Grids {
		for gy := 0; gy < g; gy++ {
			y0, y1 := gy*oh/g, (gy+1)*oh/g
			for gx := 0; gx < g; gx++ {
				x0, x1 := gx*ow/g, (gx+1)*ow/g
				clear(cell)
				for y := y0; y < y1; y++ {
					for x := x0; x < x1; x++ {
						row := f[(y*ow+x)*F : (y*ow+x+1)*F]
						row = row[:len(cell)]
						if avg {
							for ff, c := range row {
								cell[ff] += int32(c)
							}
						} else {
							for ff, c := range row {
								cell[ff] = max(cell[ff], int32(c))
							}
						}
					}
				}
				cnt := int32((y1 - y0) * (x1 - x0))
				for ff, v := range cell {
					if avg {
						v = (2*v + cnt) / (2 * cnt)
					}
					dst[off+(ff*g+gy)*g+gx] = uint8(v)
				}
			}
		}
		off += F * g * g
	}
}

// Tensors returns the int8 layer's arrays (copies): w int8 [k c p p],
// wscale [k], oscale [k], fmu [k] (F_k·μ), input [3] (S_x, α, ε; ε < 0: no
// normalisation) and zero int32 [1] (Z_x).
func (q *QuantTemplates) Tensors() []QuantTensor {
	t := q.shape
	f32 := func(s []float32) []float32 { return append([]float32(nil), s...) }
	return []QuantTensor{
		{Name: "w", Shape: []int{t.k, t.c, t.p, t.p}, I8: append([]int8(nil), q.w...)},
		{Name: "wscale", Shape: []int{t.k}, F: f32(q.ws)},
		{Name: "oscale", Shape: []int{t.k}, F: f32(q.os)},
		{Name: "fmu", Shape: []int{t.k}, F: f32(q.fmu)},
		{Name: "input", Shape: []int{3}, F: []float32{q.sx, q.alpha, q.normEps}},
		{Name: "zero", Shape: []int{1}, I32: []int32{q.zx}},
	}
}

// NewQuantTemplatesFromTensors rebuilds an int8 template layer over maps
// of the given channel count from the config it was fitted with and the
// tensors Tensors returned. A tensor whose shape disagrees with cfg (K,
// PatchSize) or channels, a scale that is zero, negative or not finite, or
// a normalisation or threshold that disagrees with cfg (norm_eps, alpha) is
// an error naming the tensor.
func NewQuantTemplatesFromTensors(cfg TemplateConfig, channels int, ts []QuantTensor) (*QuantTemplates, error) {
	r, err := cfg.resolved()
	if err != nil {
		return nil, err
	}
	if r.Encoder != EncodeSoft {
		return nil, fmt.Errorf("learn: int8 templates: encoder %q has no integer form; want %q", r.Encoder, EncodeSoft)
	}
	p := r.PatchSize
	if channels < 1 || channels*p*p > maxPatchDim {
		return nil, fmt.Errorf("learn: int8 templates: %d channels of %d×%d patches; want C·p·p in [1, %d]", channels, p, p, maxPatchDim)
	}
	k := r.K
	by, err := pickQuant("int8 templates", ts, []quantSpec{
		{"w", 'b', []int{k, channels, p, p}}, {"wscale", 'f', []int{k}}, {"oscale", 'f', []int{k}},
		{"fmu", 'f', []int{k}}, {"input", 'f', []int{3}}, {"zero", 'i', []int{1}},
	})
	if err != nil {
		return nil, err
	}
	for _, name := range []string{"wscale", "oscale"} {
		if err := checkScales(name, by[name].F); err != nil {
			return nil, err
		}
	}
	in := by["input"].F
	if err := checkScales("input (element 0: input scale)", in[:1]); err != nil {
		return nil, err
	}
	if !(in[1] >= 0) || math.IsInf(float64(in[1]), 0) || (r.Alpha < 0 && in[1] != 0) {
		return nil, fmt.Errorf("learn: int8 templates tensor \"input\": threshold α = %g; want a finite α ≥ 0 (0 when the config's alpha is negative)", in[1])
	}
	if (r.NormEps < 0) != (in[2] < 0) || math.IsInf(float64(in[2]), 0) {
		return nil, fmt.Errorf("learn: int8 templates tensor \"input\": ε = %g disagrees with the float configuration's norm_eps %g (negative: no normalisation)", in[2], r.NormEps)
	}
	if z := by["zero"].I32[0]; z < 0 || z > 255 {
		return nil, fmt.Errorf("learn: int8 templates tensor \"zero\": zero point %d; want [0, 255]", z)
	}
	for i, w := range by["w"].I8 {
		if w == math.MinInt8 {
			return nil, fmt.Errorf("learn: int8 templates tensor \"w\": weight %d is −128; symmetric weights lie in [−127, 127]", i)
		}
	}
	shape := &Templates{cfg: r, c: channels, p: p, dim: channels * p * p, k: k}
	q := &QuantTemplates{shape: shape, sx: in[0], zx: by["zero"].I32[0], alpha: in[1], normEps: in[2],
		w: by["w"].I8, ws: by["wscale"].F, os: by["oscale"].F, fmu: by["fmu"].F}
	if q.normEps < 0 {
		q.normEps = -1
	}
	return q, q.derive()
}
