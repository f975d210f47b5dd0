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
		max2To, max3To = max2SIMD, max3SIMD
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
			base := unsafe.Pointer(&srcs[t][off+x])
			for u, c := range tp {
				p := unsafe.Add(base, 4*u)
				cv := archsimd.BroadcastFloat32x8(c)
				a0 = ld(p).MulAdd(cv, a0)
				a1 = ld(unsafe.Add(p, 32)).MulAdd(cv, a1)
				a2 = ld(unsafe.Add(p, 64)).MulAdd(cv, a2)
				a3 = ld(unsafe.Add(p, 96)).MulAdd(cv, a3)
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
			base := unsafe.Pointer(&srcs[t][off+x])
			for u, c := range tp {
				a0 = ld(unsafe.Add(base, 4*u)).MulAdd(archsimd.BroadcastFloat32x8(c), a0)
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
			base := unsafe.Pointer(&srcs[t][off+x])
			for k, c := range tp {
				p := unsafe.Add(base, uintptr(k)*rs)
				cv := archsimd.BroadcastFloat32x8(c)
				a0 = ld(p).MulAdd(cv, a0)
				a1 = ld(unsafe.Add(p, 32)).MulAdd(cv, a1)
				a2 = ld(unsafe.Add(p, 64)).MulAdd(cv, a2)
				a3 = ld(unsafe.Add(p, 96)).MulAdd(cv, a3)
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
			base := unsafe.Pointer(&srcs[t][off+x])
			for k, c := range tp {
				a0 = ld(unsafe.Add(base, uintptr(k)*rs)).MulAdd(archsimd.BroadcastFloat32x8(c), a0)
			}
		}
		st(unsafe.Add(d, 4*x), a0)
	}
}

// The element-wise loops finish with one vector overlapping the previous
// one instead of a scalar tail: each is idempotent (dst is not an input, or
// dst = max(dst, src)), so recomputing a few elements is harmless.

func energySIMD(dst, e, o []float32) {
	n := len(dst)
	if n < 8 {
		energyGo(dst, e, o)
		return
	}
	e, o = e[:n], o[:n]
	for i := 0; ; i += 8 {
		if i > n-8 {
			i = n - 8
		}
		a := archsimd.LoadFloat32x8Slice(e[i:])
		b := archsimd.LoadFloat32x8Slice(o[i:])
		a.Mul(a).Add(b.Mul(b)).Sqrt().StoreSlice(dst[i:])
		if i == n-8 {
			return
		}
	}
}

func maxIntoSIMD(dst, src []float32) {
	n := len(dst)
	if n < 8 {
		maxIntoGo(dst, src)
		return
	}
	src = src[:n]
	for i := 0; ; i += 8 {
		if i > n-8 {
			i = n - 8
		}
		a := archsimd.LoadFloat32x8Slice(dst[i:])
		a.Max(archsimd.LoadFloat32x8Slice(src[i:])).StoreSlice(dst[i:])
		if i == n-8 {
			return
		}
	}
}

func max2SIMD(dst, a, b []float32) {
	n := len(dst)
	if n < 8 {
		max2Go(dst, a, b)
		return
	}
	a, b = a[:n], b[:n]
	for i := 0; ; i += 8 {
		if i > n-8 {
			i = n - 8
		}
		x := archsimd.LoadFloat32x8Slice(a[i:])
		x.Max(archsimd.LoadFloat32x8Slice(b[i:])).StoreSlice(dst[i:])
		if i == n-8 {
			return
		}
	}
}

func max3SIMD(dst, a, b, c []float32) {
	n := len(dst)
	if n < 8 {
		max3Go(dst, a, b, c)
		return
	}
	a, b, c = a[:n], b[:n], c[:n]
	for i := 0; ; i += 8 {
		if i > n-8 {
			i = n - 8
		}
		x := archsimd.LoadFloat32x8Slice(a[i:])
		y := archsimd.LoadFloat32x8Slice(b[i:])
		x.Max(y).Max(archsimd.LoadFloat32x8Slice(c[i:])).StoreSlice(dst[i:])
		if i == n-8 {
			return
		}
	}
}
