//go:build goexperiment.simd && amd64

package nn

import (
	"simd/archsimd"
	"unsafe"
)

func init() {
	if archsimd.X86.AVX2() && archsimd.X86.FMA() {
		l2Range = l2RangeSIMD
	}
}

// l2RangeSIMD is l2RangeGo on 8 lanes. The squares are exact in float64,
// so the fused multiply-add of the sums rounds as an addition would; the
// eight lane sums are added in lane order at the end, then the tail.
func l2RangeSIMD(dst, w []float32, lam float32) float64 {
	n := len(w)
	if len(dst) < n {
		panic("nn: internal error: l2RangeSIMD lengths")
	}
	vl := archsimd.BroadcastFloat32x8(lam)
	dp, wp := unsafe.Pointer(unsafe.SliceData(dst)), unsafe.Pointer(unsafe.SliceData(w))
	var s0, s1 archsimd.Float64x4
	i := 0
	for ; i+8 <= n; i += 8 {
		o := uintptr(i) * 4
		v := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(wp, o)))
		d := archsimd.LoadFloat32x8((*[8]float32)(unsafe.Add(dp, o)))
		d.Add(vl.Mul(v)).Store((*[8]float32)(unsafe.Add(dp, o)))
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
	return sq + l2RangeGo(dst[i:n], w[i:], lam)
}
