//go:build goexperiment.simd && amd64

package learn

import (
	"simd/archsimd"
	"unsafe"
)

func init() {
	if archsimd.X86.AVX2() {
		adamRange, adamL2Range = adamRangeSIMD, adamL2RangeSIMD
		standardizeRow = standardizeRowSIMD
	}
}

// adamRangeSIMD is adamRangeGo on 8 lanes: each lane does the scalar
// loop's multiplications, additions, square root and division, unfused and
// in the same order, so the results are the same bits.
func adamRangeSIMD(p, g, m, v []float32, step, eps float32) {
	const b1, b2 = float32(adamBeta1), float32(adamBeta2)
	n := len(p)
	if len(g) < n || len(m) < n || len(v) < n {
		panic("learn: internal error: adamRangeSIMD lengths")
	}
	vb1, vc1 := archsimd.BroadcastFloat32x8(b1), archsimd.BroadcastFloat32x8(1-b1)
	vb2, vc2 := archsimd.BroadcastFloat32x8(b2), archsimd.BroadcastFloat32x8(1-b2)
	vst, vep := archsimd.BroadcastFloat32x8(step), archsimd.BroadcastFloat32x8(eps)
	pp, gp := unsafe.Pointer(unsafe.SliceData(p)), unsafe.Pointer(unsafe.SliceData(g))
	mp, vp := unsafe.Pointer(unsafe.SliceData(m)), unsafe.Pointer(unsafe.SliceData(v))
	i := 0
	for ; i+8 <= n; i += 8 {
		o := uintptr(i) * 4
		gj := ld8(unsafe.Add(gp, o))
		mj := vb1.Mul(ld8(unsafe.Add(mp, o))).Add(vc1.Mul(gj))
		vj := vb2.Mul(ld8(unsafe.Add(vp, o))).Add(vc2.Mul(gj).Mul(gj))
		st8(unsafe.Add(mp, o), mj)
		st8(unsafe.Add(vp, o), vj)
		pj := ld8(unsafe.Add(pp, o)).Sub(vst.Mul(mj).Div(vj.Sqrt().Add(vep)))
		st8(unsafe.Add(pp, o), pj)
	}
	archsimd.ClearAVXUpperBits()
	if i < n {
		adamRangeGo(p[i:], g[i:n], m[i:n], v[i:n], step, eps)
	}
}

// adamL2RangeSIMD is adamL2RangeGo on 8 lanes, as adamRangeSIMD is
// adamRangeGo; the gradient g + lam·p is formed as nn's l2AddSIMD forms it.
func adamL2RangeSIMD(p, g, m, v []float32, lam, step, eps float32) {
	const b1, b2 = float32(adamBeta1), float32(adamBeta2)
	n := len(p)
	if len(g) < n || len(m) < n || len(v) < n {
		panic("learn: internal error: adamL2RangeSIMD lengths")
	}
	vb1, vc1 := archsimd.BroadcastFloat32x8(b1), archsimd.BroadcastFloat32x8(1-b1)
	vb2, vc2 := archsimd.BroadcastFloat32x8(b2), archsimd.BroadcastFloat32x8(1-b2)
	vst, vep := archsimd.BroadcastFloat32x8(step), archsimd.BroadcastFloat32x8(eps)
	vl := archsimd.BroadcastFloat32x8(lam)
	pp, gp := unsafe.Pointer(unsafe.SliceData(p)), unsafe.Pointer(unsafe.SliceData(g))
	mp, vp := unsafe.Pointer(unsafe.SliceData(m)), unsafe.Pointer(unsafe.SliceData(v))
	i := 0
	for ; i+8 <= n; i += 8 {
		o := uintptr(i) * 4
		pj := ld8(unsafe.Add(pp, o))
		gj := ld8(unsafe.Add(gp, o)).Add(vl.Mul(pj))
		mj := vb1.Mul(ld8(unsafe.Add(mp, o))).Add(vc1.Mul(gj))
		vj := vb2.Mul(ld8(unsafe.Add(vp, o))).Add(vc2.Mul(gj).Mul(gj))
		st8(unsafe.Add(mp, o), mj)
		st8(unsafe.Add(vp, o), vj)
		st8(unsafe.Add(pp, o), pj.Sub(vst.Mul(mj).Div(vj.Sqrt().Add(vep))))
	}
	archsimd.ClearAVXUpperBits()
	if i < n {
		adamL2RangeGo(p[i:], g[i:n], m[i:n], v[i:n], lam, step, eps)
	}
}

// standardizeRowSIMD is standardizeRowGo on 8 lanes (VSUBPS, VDIVPS: the
// same correctly rounded operations).
func standardizeRowSIMD(dst, x, mean, std []float32) {
	n := len(x)
	if len(dst) < n || len(mean) < n || len(std) < n {
		panic("learn: internal error: standardizeRowSIMD lengths")
	}
	dp, xp := unsafe.Pointer(unsafe.SliceData(dst)), unsafe.Pointer(unsafe.SliceData(x))
	mp, sp := unsafe.Pointer(unsafe.SliceData(mean)), unsafe.Pointer(unsafe.SliceData(std))
	i := 0
	for ; i+8 <= n; i += 8 {
		o := uintptr(i) * 4
		st8(unsafe.Add(dp, o), ld8(unsafe.Add(xp, o)).Sub(ld8(unsafe.Add(mp, o))).Div(ld8(unsafe.Add(sp, o))))
	}
	archsimd.ClearAVXUpperBits()
	standardizeRowGo(dst[i:n], x[i:], mean[i:n], std[i:n])
}
