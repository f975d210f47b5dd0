//go:build goexperiment.simd && amd64

package nn

import (
	"simd/archsimd"
	"unsafe"
)

func init() {
	if archsimd.X86.AVX2() && archsimd.X86.FMA() {
		l2Add, l2Sq = l2AddSIMD, l2SqSIMD
		biasReLU, maskReLU = biasReLUSIMD, maskReLUSIMD
		biasReLURows, transpose = biasReLURowsSIMD, transposeSIMD
	}
}

// biasReLURowsSIMD is biasReLUSIMD on every row of m (len(b) rows of n
// values), without a call, a broadcast of zero and a VZEROUPPER per row:
// the 8-lane parts of all rows, then their tails as biasReLUSIMD does them.
func biasReLURowsSIMD(m, b []float32, n int) {
	if len(m) < len(b)*n {
		panic("nn: internal error: biasReLURowsSIMD lengths")
	}
	zero := archsimd.BroadcastFloat32x8(0)
	mp := unsafe.Pointer(unsafe.SliceData(m))
	n8 := n &^ 7
	for h, bh := range b {
		vb := archsimd.BroadcastFloat32x8(bh)
		rp := unsafe.Add(mp, uintptr(h*n)*4)
		for i := 0; i < n8; i += 8 {
			p := (*[8]float32)(unsafe.Add(rp, uintptr(i)*4))
			zero.Max(archsimd.LoadFloat32x8(p).Add(vb)).Store(p)
		}
	}
	archsimd.ClearAVXUpperBits()
	if n8 < n {
		for h, bh := range b {
			biasReLUGo(m[h*n+n8:(h+1)*n], bh)
		}
	}
}

//go:noescape
func transpose8x8asm(dst unsafe.Pointer, ds uintptr, src unsafe.Pointer, ss uintptr)

// transposeSIMD is transposeGo by 8×8 blocks transposed in registers
// (transpose8x8asm); the edges past the last multiples of 8 go by
// transposeGo's loop. transposeGo, writing a chunk's 512×32 activations
// value by value 2 KB apart, took about 3 ns a value in the 150-image
// digits fit (0.34 s of its 11 s of CPU); the blocks take a tenth of that.
func transposeSIMD(dst, src []float32, rows, cols, ld int) {
	if rows == 0 || cols == 0 {
		return
	}
	if len(src) < rows*cols || len(dst) < (cols-1)*ld+rows {
		panic("nn: internal error: transposeSIMD lengths")
	}
	r8, c8 := rows&^7, cols&^7
	dp, sp := unsafe.Pointer(unsafe.SliceData(dst)), unsafe.Pointer(unsafe.SliceData(src))
	for r0 := 0; r0 < r8; r0 += 8 {
		for c0 := 0; c0 < c8; c0 += 8 {
			transpose8x8asm(unsafe.Add(dp, uintptr(c0*ld+r0)*4), uintptr(ld)*4, unsafe.Add(sp, uintptr(r0*cols+c0)*4), uintptr(cols)*4)
		}
	}
	for r := 0; r < rows; r++ {
		c := c8
		if r >= r8 {
			c = 0
		}
		for ; c < cols; c++ {
			dst[c*ld+r] = src[r*cols+c]
		}
	}
}

// l2AddSIMD is l2AddGo on 8 lanes (a multiplication, then an addition).
func l2AddSIMD(dst, w []float32, lam float32) {
	n := len(w)
	if len(dst) < n {
		panic("nn: internal error: l2AddSIMD lengths")
	}
	vl := archsimd.BroadcastFloat32x8(lam)
	dp, wp := unsafe.Pointer(unsafe.SliceData(dst)), unsafe.Pointer(unsafe.SliceData(w))
	i := 0
	for ; i+8 <= n; i += 8 {
		o := uintptr(i) * 4
		v := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(wp, o)))
		d := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(dp, o)))
		d.Add(vl.Mul(v)).Store((*[8]float32)(unsafe.Add(dp, o)))
	}
	archsimd.ClearAVXUpperBits()
	l2AddGo(dst[i:n], w[i:], lam)
}

// l2SqSIMD is l2SqGo on 8 lanes. The squares are exact in float64, so the
// fused multiply-add of the sums rounds as an addition would; the eight
// lane sums are added in lane order at the end, then the tail's sum.
func l2SqSIMD(w []float32) float64 {
	n := len(w)
	wp := unsafe.Pointer(unsafe.SliceData(w))
	var s0, s1 archsimd.Float64x4
	i := 0
	for ; i+8 <= n; i += 8 {
		v := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(wp, uintptr(i)*4)))
		lo, hi := v.GetLo().ConvertToFloat64(), v.GetHi().ConvertToFloat64()
		s0 = lo.MulAdd(lo, s0)
		s1 = hi.MulAdd(hi, s1)
	}
	var lanes [8]float64
	s0.Store((*[4]float64)(lanes[:4]))
	s1.Store((*[4]float64)(lanes[4:]))
	archsimd.ClearAVXUpperBits()
	var sq float64
	for _, v := range lanes {
		sq += v
	}
	return sq + l2SqGo(w[i:])
}

// biasReLUSIMD is biasReLUGo on 8 lanes; VMAXPS returns its second operand
// for a NaN (kept, as max does) and for two zeros (so −0 stays −0 where max
// gives +0, which no product or sum downstream can tell apart but by the
// sign of an exact zero).
func biasReLUSIMD(row []float32, b float32) {
	n := len(row)
	vb, zero := archsimd.BroadcastFloat32x8(b), archsimd.BroadcastFloat32x8(0)
	rp := unsafe.Pointer(unsafe.SliceData(row))
	i := 0
	for ; i+8 <= n; i += 8 {
		p := (*[8]float32)(unsafe.Add(rp, uintptr(i)*4))
		zero.Max(archsimd.LoadFloat32x8(p).Add(vb)).Store(p)
	}
	archsimd.ClearAVXUpperBits()
	biasReLUGo(row[i:], b)
}

// maskReLUSIMD is maskReLUGo on 8 lanes.
func maskReLUSIMD(dst, src, act []float32) {
	n := len(dst)
	if len(src) < n || len(act) < n {
		panic("nn: internal error: maskReLUSIMD lengths")
	}
	zero := archsimd.BroadcastFloat32x8(0)
	dp, sp, ap := unsafe.Pointer(unsafe.SliceData(dst)), unsafe.Pointer(unsafe.SliceData(src)), unsafe.Pointer(unsafe.SliceData(act))
	i := 0
	for ; i+8 <= n; i += 8 {
		o := uintptr(i) * 4
		a := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(ap, o)))
		archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(sp, o))).Masked(a.Greater(zero)).Store((*[8]float32)(unsafe.Add(dp, o)))
	}
	archsimd.ClearAVXUpperBits()
	maskReLUGo(dst[i:], src[i:n], act[i:n])
}
