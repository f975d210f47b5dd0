package learn

import (
	"fmt"
	"math"
	"math/bits"
)

// Integer arithmetic shared by the int8 template layer and the int8 head.
//
// The scheme is that of Jacob et al. 2018 ("Quantization and training of
// neural networks for efficient integer-arithmetic-only inference", CVPR):
//
//	eq. 1  r = S·(q − Z)                  a real value r held as the integer q with
//	                                      scale S > 0 and zero point Z
//	eq. 4  q3 = Z3 + M·Σ (q1 − Z1)(q2 − Z2) the product of two quantised matrices
//	eq. 5  M = S1·S2/S3                   the only real number left, fixed per layer
//	eq. 6  M = 2^(−n)·M0, M0 ∈ [0.5, 1)   M0 held as a 31-bit fixed-point integer
//	eq. 7  Σ (q1 − Z1)(q2 − Z2) = N·Z1·Z2 − Z1·Σ q2 − Z2·Σ q1 + Σ q1·q2
//
// Weights are int8, symmetric (Z = 0) with one scale per output channel, in
// [−127, 127]; activations are uint8 in [0, 255] with a scale and a zero
// point. Products accumulate in int32 (int64 where a per-patch moment is
// involved). Every rounding to an integer rounds half away from zero, and a
// value past the range of its type saturates. The multipliers are derived
// from the stored float32 scales with single IEEE-754 operations (each
// product rounded on its own, so no fused multiply-add can change a bit):
// the same file gives the same integers, and the same predictions, on every
// architecture.

// fixedMul is a positive real multiplier M = m0·2^(−shift) with m0 in
// [2^30, 2^31) (Jacob et al. 2018, eq. 6).
type fixedMul struct {
	m0    uint64
	shift int
}

// Bounds on a multiplier's exponent: shift = 31 − e for M = f·2^e,
// f ∈ [0.5, 1). apply needs shift+extra in [1, 127].
const (
	minMulShift = -15
	maxMulShift = 100
)

// newFixedMul returns the fixed-point form of m, or an error naming what
// when m is not a positive finite number within the supported exponents.
func newFixedMul(m float64, what string) (fixedMul, error) {
	if !(m > 0) || math.IsInf(m, 0) {
		return fixedMul{}, fmt.Errorf("learn: %s: multiplier %g; want a positive finite number (a scale is zero, negative or not finite)", what, m)
	}
	frac, exp := math.Frexp(m) // m = frac·2^exp, frac ∈ [0.5, 1)
	q := int64(math.Round(frac * (1 << 31)))
	if q == 1<<31 {
		q >>= 1
		exp++
	}
	shift := 31 - exp
	if shift < minMulShift || shift > maxMulShift {
		return fixedMul{}, fmt.Errorf("learn: %s: multiplier %g is outside [2^%d, 2^%d]; a scale is far out of proportion to the others", what, m, 31-maxMulShift, 31-minMulShift)
	}
	return fixedMul{m0: uint64(q), shift: shift}, nil
}

// satMax is the magnitude at which mulShift saturates.
const satMax = 1 << 62

// mulShift returns round(|x|·m0·2^(−s)) with the sign of x, rounding half
// away from zero and saturating at ±2^62. s must be in [1, 127].
func mulShift(x int64, m0 uint64, s int) int64 {
	ax := uint64(x)
	if x < 0 {
		ax = uint64(-x)
	}
	hi, lo := bits.Mul64(ax, m0)
	var c uint64
	if s <= 64 {
		lo, c = bits.Add64(lo, 1<<(s-1), 0)
		hi += c
	} else {
		hi += 1 << (s - 65)
	}
	var r uint64
	if s < 64 {
		if hi>>s != 0 {
			r = satMax
		} else {
			r = lo>>s | hi<<(64-s)
		}
	} else {
		r = hi >> (s - 64)
	}
	r = min(r, satMax)
	if x < 0 {
		return -int64(r)
	}
	return int64(r)
}

// apply returns round(M·x) (Jacob et al. 2018, eq. 4's M·Σ with eq. 6's M).
func (f fixedMul) apply(x int64) int64 { return mulShift(x, f.m0, f.shift) }

// real returns M as a float64 (for tests and reports).
func (f fixedMul) real() float64 { return math.Ldexp(float64(f.m0), -f.shift) }

// roundHalfAway rounds v to the nearest integer, halves away from zero.
func roundHalfAway(v float64) int64 { return int64(math.Round(v)) }

// clampU8 saturates v to [0, 255].
func clampU8(v int64) uint8 { return uint8(min(max(v, 0), 255)) }

// quantizeRows quantises the rows of the m×d matrix w (float64) to int8,
// symmetric per row (Jacob et al. 2018, eq. 1 with Z = 0): scale s_j =
// max_i |w_ji| / 127 (1 for an all-zero row), q_ji = round(w_ji / s_j).
func quantizeRows(q []int8, s []float32, w []float64, m, d int) {
	for j := 0; j < m; j++ {
		row := w[j*d : (j+1)*d]
		var mx float64
		for _, v := range row {
			mx = max(mx, math.Abs(v))
		}
		sc := float32(mx / 127)
		if sc == 0 || mx == 0 {
			sc = 1
		}
		s[j] = sc
		for i, v := range row {
			q[j*d+i] = int8(min(max(roundHalfAway(v/float64(sc)), -127), 127))
		}
	}
}

// maxBiasSteps bounds a quantised bias, in steps of its row's scale: half
// the ±2^30 the int32 accumulators leave for it, the other half for the
// zero-point term Σ w_q·z.
const maxBiasSteps = 1 << 29

// fitBias raises row j's scale, when needed, until its real bias b takes at
// most maxBiasSteps steps, and quantises the row again at that scale. A row
// whose weights are negligible beside its bias (a unit that training left
// almost constant, as weight decay does to units that never fire) then
// keeps its bias exactly and quantises its weights to zero or near it: each
// weight is still rounded to the nearest step, so the error bound of
// quantizeRows (half a step per weight) holds.
func fitBias(q []int8, s []float32, w []float64, d, j int, b float64) {
	need := float32(math.Abs(b) / maxBiasSteps)
	if need <= s[j] {
		return
	}
	s[j] = need
	for i, v := range w[j*d : (j+1)*d] {
		q[j*d+i] = int8(min(max(roundHalfAway(v/float64(need)), -127), 127))
	}
}

// ActivationScale returns the scale and zero point of uint8 activations
// calibrated to the observed range [lo, hi], widened to hold 0 exactly
// (Jacob et al. 2018, §2.1: the real 0 must be representable):
// S = (hi − lo)/255, Z = round(−lo/S). An empty range (all zero) gives
// S = 1, Z = 0.
func ActivationScale(lo, hi float64) (float32, int32) {
	lo, hi = min(lo, 0), max(hi, 0)
	if hi-lo == 0 {
		return 1, 0
	}
	s := float32((hi - lo) / 255)
	if s == 0 {
		return 1, 0
	}
	z := min(max(roundHalfAway(-lo/float64(s)), 0), 255)
	return s, int32(z)
}

// QuantizeValue returns the uint8 code of the real value v at scale s and
// zero point z: clamp(round(v/s) + z, 0, 255) (Jacob et al. 2018, eq. 1
// inverted). It is the one place where a float enters the integer path.
func QuantizeValue(v, s float32, z int32) uint8 {
	u := float64(float32(v / s)) // one float32 division, rounded on its own
	return clampU8(roundHalfAway(u) + int64(z))
}

// checkScales reports the first scale of s that is not a positive finite
// number, naming the tensor.
func checkScales(name string, s []float32) error {
	for i, v := range s {
		if !(v > 0) || math.IsInf(float64(v), 0) {
			return fmt.Errorf("learn: int8 tensor %q: element %d is %g; a scale must be a positive finite number", name, i, v)
		}
	}
	return nil
}

// QuantTensor is one named array of an int8 stage. Exactly one of I8, I32
// and F is set.
type QuantTensor struct {
	Name  string
	Shape []int
	I8    []int8
	I32   []int32
	F     []float32
}

func (t QuantTensor) len() int { return len(t.I8) + len(t.I32) + len(t.F) }

// quantTensors indexes ts by name, checking that each has the shape want
// names, the right element type and the right number of elements.
type quantSpec struct {
	name  string
	kind  byte // 'b' int8, 'i' int32, 'f' float32
	shape []int
}

func pickQuant(what string, ts []QuantTensor, specs []quantSpec) (map[string]QuantTensor, error) {
	by := make(map[string]QuantTensor, len(ts))
	for _, t := range ts {
		if _, dup := by[t.Name]; dup {
			return nil, fmt.Errorf("learn: %s: tensor %q appears twice", what, t.Name)
		}
		by[t.Name] = t
	}
	out := make(map[string]QuantTensor, len(specs))
	for _, sp := range specs {
		t, ok := by[sp.name]
		if !ok {
			return nil, fmt.Errorf("learn: %s: tensor %q missing", what, sp.name)
		}
		delete(by, sp.name)
		var typed int
		switch sp.kind {
		case 'b':
			typed = len(t.I8)
		case 'i':
			typed = len(t.I32)
		case 'f':
			typed = len(t.F)
		}
		n := 1
		for _, d := range sp.shape {
			n *= d
		}
		if len(t.Shape) != len(sp.shape) || typed != n || t.len() != n {
			return nil, fmt.Errorf("learn: %s: tensor %q has shape %v (%d values); the float configuration needs %v of %s", what, sp.name, t.Shape, t.len(), sp.shape, map[byte]string{'b': "int8", 'i': "int32", 'f': "float32"}[sp.kind])
		}
		for i := range sp.shape {
			if t.Shape[i] != sp.shape[i] {
				return nil, fmt.Errorf("learn: %s: tensor %q has shape %v; the float configuration needs %v", what, sp.name, t.Shape, sp.shape)
			}
		}
		out[sp.name] = t
	}
	for name := range by {
		return nil, fmt.Errorf("learn: %s: unknown tensor %q", what, name)
	}
	return out, nil
}

// Packed products. Two int8 weight rows j, j+1 are held as one int64 per
// column, p_i = w_{j,i} + w_{j+1,i}·2^32, so that one 64-bit multiply-add
// by an activation x_i accumulates both products: Σ_i x_i·p_i = A + B·2^32
// with A = Σ_i x_i·w_{j,i}, B = Σ_i x_i·w_{j+1,i}. With |A|, |B| < 2^31
// (at most maxPackedIn columns of 255·127) the int64 sum is exact, A is its
// low 32 bits read as a signed number and B = (sum − A)/2^32: the same
// integers as two separate int32 accumulations, in half the multiplies.

// maxPackedIn bounds the columns of a packed product: n·255·127 < 2^31.
const maxPackedIn = 66000

// packRows returns the m×d int8 matrix w as ⌈m/2⌉×d packed pairs (an odd
// last row is paired with zeros).
func packRows(w []int8, m, d int) []int64 {
	p := make([]int64, (m+1)/2*d)
	for j := 0; j < m; j += 2 {
		dst := p[j/2*d : j/2*d+d]
		for i := range dst {
			v := int64(w[j*d+i])
			if j+1 < m {
				v += int64(w[(j+1)*d+i]) << 32
			}
			dst[i] = v
		}
	}
	return p
}

// unpack splits a packed sum into its two products.
func unpack(s int64) (a, b int32) {
	lo := int64(int32(uint32(s)))
	return int32(lo), int32((s - lo) >> 32)
}

// dotPacked sets acc_j = Σ_i w_ji·x_i + b_j (b nil: no bias) for the
// m = len(acc) rows packed in p (packRows of an m×len(x) matrix).
func dotPacked(acc []int32, p []int64, x []uint8, b []int32) {
	d, m := len(x), len(acc)
	j := 0
	// Two packed row pairs at a time: each activation loaded once for two
	// multiplies (four products).
	for ; j+4 <= m; j += 4 {
		r0 := p[j/2*d : j/2*d+d]
		r1 := p[(j/2+1)*d : (j/2+1)*d+d]
		s0, s1 := dot2x1(r0, r1, x)
		a0, a1 := unpack(s0)
		a2, a3 := unpack(s1)
		if b != nil {
			b := b[j : j+4]
			a0, a1, a2, a3 = a0+b[0], a1+b[1], a2+b[2], a3+b[3]
		}
		acc[j], acc[j+1], acc[j+2], acc[j+3] = a0, a1, a2, a3
	}
	for ; j < m; j += 2 {
		row := p[j/2*d : j/2*d+d]
		row = row[:len(x)]
		var s0, s1 int64
		i := 0
		for ; i+2 <= len(x); i += 2 {
			s0 += row[i] * int64(x[i])
			s1 += row[i+1] * int64(x[i+1])
		}
		if i < len(x) {
			s0 += row[i] * int64(x[i])
		}
		a, c := unpack(s0 + s1)
		if b != nil {
			a += b[j]
			if j+1 < m {
				c += b[j+1]
			}
		}
		acc[j] = a
		if j+1 < m {
			acc[j+1] = c
		}
	}
}

// dot2x1 returns Σ_i r0_i·x_i and Σ_i r1_i·x_i (len(r0) = len(r1) =
// len(x)). A leaf of its own (not inlined), so that its sums stay in
// registers: inlined into dotPacked they are spilled to the stack.
//
//go:noinline
func dot2x1(r0, r1 []int64, x []uint8) (s0, s1 int64) {
	r0, r1 = r0[:len(x)], r1[:len(x)]
	for i, v := range x {
		xi := int64(v)
		s0 += r0[i] * xi
		s1 += r1[i] * xi
	}
	return s0, s1
}

// dot2x2 returns the four sums Σ_i r_i·x_i, r_i·y_i for r = r0, r1
// (all of length len(x)), as dot2x1.
//
//go:noinline
func dot2x2(r0, r1 []int64, x, y []uint8) (s0x, s0y, s1x, s1y int64) {
	r0, r1, y = r0[:len(x)], r1[:len(x)], y[:len(x)]
	for i, v := range x {
		xi, yi := int64(v), int64(y[i])
		s0x += r0[i] * xi
		s1x += r1[i] * xi
		s0y += r0[i] * yi
		s1y += r1[i] * yi
	}
	return s0x, s0y, s1x, s1y
}

// dotPacked2 is dotPacked without bias for two inputs x and y of the same
// length at once: two packed row pairs at a time, so that each step loads
// two weights and two activations for four multiplies (eight products),
// in four independent int64 sums.
func dotPacked2(ax, ay []int32, p []int64, x, y []uint8) {
	d, m := len(x), len(ax)
	y = y[:len(x)]
	ay = ay[:m]
	j := 0
	for ; j+4 <= m; j += 4 {
		r0 := p[j/2*d : j/2*d+d]
		r1 := p[(j/2+1)*d : (j/2+1)*d+d]
		s0x, s0y, s1x, s1y := dot2x2(r0, r1, x, y)
		ax[j], ax[j+1] = unpack(s0x)
		ay[j], ay[j+1] = unpack(s0y)
		ax[j+2], ax[j+3] = unpack(s1x)
		ay[j+2], ay[j+3] = unpack(s1y)
	}
	for ; j < m; j += 2 {
		row := p[j/2*d : j/2*d+d]
		row = row[:len(x)]
		var sx, sy int64
		for i, w := range row {
			sx += w * int64(x[i])
			sy += w * int64(y[i])
		}
		a, c := unpack(sx)
		e, f := unpack(sy)
		ax[j], ay[j] = a, e
		if j+1 < m {
			ax[j+1], ay[j+1] = c, f
		}
	}
}

// int8Matrix is an m×d int8 weight matrix in the form this build's product
// kernel reads: packed row pairs (portable), or int8 rows padded with
// zeros to a multiple of 16 columns, which the kernel widens to int16 as it
// loads them (SIMD build with AVX2, int8_simd_amd64.go). Both give exactly the int32 sums Σ_i w_ji·x_i.
type int8Matrix struct {
	m, d  int
	pairs []int64
	w8    []int8 // rows padded to dpad columns (SIMD build), or nil
	dpad  int
	wp    []int16 // column pairs for mulPairs (usePairs), or nil
	mpad  int
}

// mulWide, when not nil, is the SIMD kernel: acc_j = Σ_c w[j·dpad+c]·x[c]
// for j < m, over int8 rows and int16 input padded to dpad (a multiple of
// 16).
var mulWide func(acc []int32, w []int8, x []int16, m, dpad int)

func newInt8Matrix(w []int8, m, d int) *int8Matrix {
	a := &int8Matrix{m: m, d: d}
	if mulWide == nil {
		a.pairs = packRows(w, m, d)
		return a
	}
	a.dpad = (d + 15) &^ 15
	a.w8 = make([]int8, m*a.dpad)
	for j := 0; j < m; j++ {
		copy(a.w8[j*a.dpad:j*a.dpad+d], w[j*d:(j+1)*d])
	}
	return a
}

// widen writes x as int16, zero-padded to dpad, into *buf and returns it.
func widen(buf *[]int16, x []uint8, dpad int) []int16 {
	if cap(*buf) < dpad {
		*buf = make([]int16, dpad)
	}
	w := (*buf)[:dpad]
	for i, v := range x {
		w[i] = int16(v)
	}
	clear(w[len(x):])
	return w
}

// mulVec sets acc_j = Σ_i w_ji·x_i + b_j (b nil: no bias) for the m rows;
// buf is scratch for the SIMD build.
func (a *int8Matrix) mulVec(acc []int32, x []uint8, b []int32, buf *[]int16) {
	if a.w8 == nil {
		dotPacked(acc, a.pairs, x, b)
		return
	}
	mulWide(acc, a.w8, widen(buf, x, a.dpad), a.m, a.dpad)
	for j := range b {
		acc[j] += b[j]
	}
}

// mulVec2 is mulVec without bias for two inputs of the same length.
func (a *int8Matrix) mulVec2(ax, ay []int32, x, y []uint8, buf *[]int16) {
	if a.w8 == nil {
		dotPacked2(ax, ay, a.pairs, x, y)
		return
	}
	mulWide(ax, a.w8, widen(buf, x, a.dpad), a.m, a.dpad)
	mulWide(ay, a.w8, widen(buf, y, a.dpad), a.m, a.dpad)
}

// mulPairs, when not nil, is the SIMD batch kernel. Its inputs are pairs
// of activations packed in one int32, x_a + x_b·2^16; for input i and pair
// c the pair is xp[base[i]+offs[c]], so a kernel can read the pairs of a
// patch straight out of a map of packed pairs. It sets acc[i·m+j] = Σ_c of
// the pair c times row j's weights for that pair, from the weights laid out
// by pairsLayout.
var mulPairs func(acc []int32, wp []int16, xp, base, offs []int32, m, mpad int)

// pairsLayout returns the m×d int8 matrix w in mulPairs' layout for the
// column pairs cols (cols[c] = the two columns of pair c, −1 for none):
// element ((c·mpad + j)·2 + e) is w_j,cols[c][e], with mpad = m rounded up
// to 16 and zeros past m, so that one 32-lane load holds pair c of 16
// consecutive rows.
func pairsLayout(w []int8, m, d int, cols [][2]int32) (wp []int16, mpad int) {
	mpad = (m + 15) &^ 15
	wp = make([]int16, len(cols)*mpad*2)
	for c, pr := range cols {
		for e, col := range pr {
			if col < 0 {
				continue
			}
			for j := 0; j < m; j++ {
				wp[(c*mpad+j)*2+e] = int16(w[j*d+int(col)])
			}
		}
	}
	return wp, mpad
}

// contiguousPairs pairs the columns of a d-column matrix in order: (0, 1),
// (2, 3), … (the last with none when d is odd).
func contiguousPairs(d int) [][2]int32 {
	cols := make([][2]int32, (d+1)/2)
	for c := range cols {
		cols[c] = [2]int32{int32(2 * c), int32(2*c + 1)}
		if 2*c+1 >= d {
			cols[c][1] = -1
		}
	}
	return cols
}

// pairScratch is the batch kernel's scratch.
type pairScratch struct {
	xp, base, offs []int32
}

// grow32 returns (*b)[:n], reallocated when too short.
func grow32(b *[]int32, n int) []int32 {
	if cap(*b) < n {
		*b = make([]int32, n)
	}
	return (*b)[:n]
}

// packPairs writes the n inputs of length d in x (contiguous) as column
// pairs x_2c + x_2c+1·2^16, one int32 each (a zero past d), into s.xp, with
// the bases and offsets that read them in order, and returns the three.
func packPairs(s *pairScratch, x []uint8, n, d int) (xp, base, offs []int32) {
	dim2 := (d + 1) / 2
	xp, base, offs = grow32(&s.xp, n*dim2), grow32(&s.base, n), grow32(&s.offs, dim2)
	for c := range offs {
		offs[c] = int32(c)
	}
	for i := 0; i < n; i++ {
		base[i] = int32(i * dim2)
		row, dst := x[i*d:(i+1)*d], xp[i*dim2:(i+1)*dim2]
		c := 0
		for ; 2*c+1 < len(row); c++ {
			dst[c] = int32(row[2*c]) | int32(row[2*c+1])<<16
		}
		if c < len(dst) {
			dst[c] = int32(row[2*c])
		}
	}
	return xp, base, offs
}

// usePairs builds the batch kernel's layout for the column pairs cols,
// when this build has the kernel (mulRows and the pair path of the
// template layer then use it).
func (a *int8Matrix) usePairs(w []int8, cols [][2]int32) {
	if mulPairs != nil {
		a.wp, a.mpad = pairsLayout(w, a.m, a.d, cols)
	}
}

// mulRows sets acc[i·m+j] = Σ_c w_jc·x[i·d+c] for the n inputs of length d
// held one after another in x. buf and ps are scratch; with the batch
// kernel the matrix must have been given contiguousPairs.
func (a *int8Matrix) mulRows(acc []int32, x []uint8, n int, buf *[]int16, ps *pairScratch) {
	m, d := a.m, a.d
	if a.wp != nil {
		xp, base, offs := packPairs(ps, x[:n*d], n, d)
		mulPairs(acc[:n*m], a.wp, xp, base, offs, m, a.mpad)
		return
	}
	i := 0
	for ; i+2 <= n; i += 2 {
		a.mulVec2(acc[i*m:(i+1)*m], acc[(i+1)*m:(i+2)*m], x[i*d:(i+1)*d], x[(i+1)*d:(i+2)*d], buf)
	}
	if i < n {
		a.mulVec(acc[i*m:(i+1)*m], x[i*d:(i+1)*d], nil, buf)
	}
}
