//go:build goexperiment.simd && amd64

package v1layer

import (
	"simd/archsimd"
	"unsafe"
)

// The SIMD build (GOEXPERIMENT=simd, amd64) runs the inner loops with
// 8-lane float32 fused multiply-adds (AVX2 + FMA) when the CPU has them;
// otherwise the portable loops stay in place. TestSIMDMatchesPortable
// checks one against the other.
func init() {
	if archsimd.X86.AVX2() && archsimd.X86.FMA() {
		hsum, vsum = hsumSIMD, vsumSIMD
		energyTo, maxInto = energySIMD, maxIntoSIMD
		build = "simd (GOEXPERIMENT=simd, AVX2+FMA, 8 float32 lanes)"
	}
}

func ld(p unsafe.Pointer) archsimd.Float32x8 { return archsimd.LoadFloat32x8((*[8]float32)(p)) }

func st(p unsafe.Pointer, v archsimd.Float32x8) { v.Store((*[8]float32)(p)) }

// hsumSIMD is hsumGo for n a multiple of 8.
func hsumSIMD(dst []float32, n int, srcs, taps [][]float32, off int) {
	if n%8 != 0 || len(dst) < n {
		panic("v1layer: internal error: hsumSIMD length")
	}
	for t, tp := range taps {
		if off+n+len(tp)-1 > len(srcs[t]) {
			panic("v1layer: internal error: hsumSIMD source too short")
		}
	}
	d := unsafe.Pointer(unsafe.SliceData(dst))
	x := 0
	for ; x+32 <= n; x += 32 {
		var a0, a1, a2, a3 archsimd.Float32x8
		for t, tp := range taps {
			p := unsafe.Pointer(&srcs[t][off+x])
			for _, c := range tp {
				cv := archsimd.BroadcastFloat32x8(c)
				a0 = ld(p).MulAdd(cv, a0)
				a1 = ld(unsafe.Add(p, 32)).MulAdd(cv, a1)
				a2 = ld(unsafe.Add(p, 64)).MulAdd(cv, a2)
				a3 = ld(unsafe.Add(p, 96)).MulAdd(cv, a3)
				p = unsafe.Add(p, 4)
			}
		}
		q := unsafe.Add(d, 4*x)
		st(q, a0)
		st(unsafe.Add(q, 32), a1)
		st(unsafe.Add(q, 64), a2)
		st(unsafe.Add(q, 96), a3)
	}
	for ; x < n; x += 8 {
		var a0 archsimd.Float32x8
		for t, tp := range taps {
			p := unsafe.Pointer(&srcs[t][off+x])
			for _, c := range tp {
				a0 = ld(p).MulAdd(archsimd.BroadcastFloat32x8(c), a0)
				p = unsafe.Add(p, 4)
			}
		}
		st(unsafe.Add(d, 4*x), a0)
	}
}

// vsumSIMD is vsumGo for n a multiple of 8.
func vsumSIMD(dst []float32, n int, srcs, taps [][]float32, off, stride int) {
	if n%8 != 0 || len(dst) < n {
		panic("v1layer: internal error: vsumSIMD length")
	}
	for t, tp := range taps {
		if off+(len(tp)-1)*stride+n > len(srcs[t]) {
			panic("v1layer: internal error: vsumSIMD source too short")
		}
	}
	d := unsafe.Pointer(unsafe.SliceData(dst))
	rs := uintptr(4 * stride)
	x := 0
	for ; x+32 <= n; x += 32 {
		var a0, a1, a2, a3 archsimd.Float32x8
		for t, tp := range taps {
			p := unsafe.Pointer(&srcs[t][off+x])
			for _, c := range tp {
				cv := archsimd.BroadcastFloat32x8(c)
				a0 = ld(p).MulAdd(cv, a0)
				a1 = ld(unsafe.Add(p, 32)).MulAdd(cv, a1)
				a2 = ld(unsafe.Add(p, 64)).MulAdd(cv, a2)
				a3 = ld(unsafe.Add(p, 96)).MulAdd(cv, a3)
				p = unsafe.Add(p, rs)
			}
		}
		q := unsafe.Add(d, 4*x)
		st(q, a0)
		st(unsafe.Add(q, 32), a1)
		st(unsafe.Add(q, 64), a2)
		st(unsafe.Add(q, 96), a3)
	}
	for ; x < n; x += 8 {
		var a0 archsimd.Float32x8
		for t, tp := range taps {
			p := unsafe.Pointer(&srcs[t][off+x])
			for _, c := range tp {
				a0 = ld(p).MulAdd(archsimd.BroadcastFloat32x8(c), a0)
				p = unsafe.Add(p, rs)
			}
		}
		st(unsafe.Add(d, 4*x), a0)
	}
}

func energySIMD(dst, e, o []float32) {
	n := len(dst)
	e, o = e[:n], o[:n]
	i := 0
	for ; i+8 <= n; i += 8 {
		a := archsimd.LoadFloat32x8Slice(e[i:])
		b := archsimd.LoadFloat32x8Slice(o[i:])
		a.Mul(a).Add(b.Mul(b)).Sqrt().StoreSlice(dst[i:])
	}
	if i < n {
		energyGo(dst[i:], e[i:], o[i:])
	}
}

func maxIntoSIMD(dst, src []float32) {
	n := len(dst)
	src = src[:n]
	i := 0
	for ; i+8 <= n; i += 8 {
		a := archsimd.LoadFloat32x8Slice(dst[i:])
		a.Max(archsimd.LoadFloat32x8Slice(src[i:])).StoreSlice(dst[i:])
	}
	if i < n {
		maxIntoGo(dst[i:], src[i:])
	}
}
