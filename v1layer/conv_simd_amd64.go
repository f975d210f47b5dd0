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

// sumSIMD is hsumGo (step 1) and vsumGo (step = row stride) for n a
// multiple of 8: blocks of 48 outputs (six accumulators, which hide the
// FMA latency without spilling under Go's register allocation), then 32,
// 16 and 8. Each block walks the taps with a pointer per source, so every
// load has a constant offset; taps come pre-broadcast (filt.wb).
func sumSIMD(dst []float32, n int, srcs [][]float32, taps []filt, off, step int) {
	if n%8 != 0 || len(dst) < n || len(srcs) < len(taps) {
		panic("v1layer: internal error: sumSIMD length")
	}
	for t := range taps {
		if nt := len(taps[t].wb); nt > 0 && (off < 0 || off+(nt-1)*step+n > len(srcs[t])) {
			panic("v1layer: internal error: sumSIMD source too short")
		}
	}
	d := unsafe.Pointer(unsafe.SliceData(dst))
	rs := uintptr(4 * step)
	x := 0
	for ; x+48 <= n; x += 48 {
		blk6(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
	}
	if x+32 <= n {
		blk4(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
		x += 32
	}
	if x+16 <= n {
		blk2(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
		x += 16
	}
	if x < n {
		blk1(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
	}
	// Go 1.26 does not clear the upper halves of the Y registers after
	// AVX code; the SSE moves the compiler uses elsewhere (struct copies)
	// then stall on them. Measured: 28×28 at half speed without this.
	archsimd.ClearAVXUpperBits()
}

func hsumSIMD(dst []float32, n int, srcs [][]float32, taps []filt, off int) {
	sumSIMD(dst, n, srcs, taps, off, 1)
}

func vsumSIMD(dst []float32, n int, srcs [][]float32, taps []filt, off, stride int) {
	sumSIMD(dst, n, srcs, taps, off, stride)
}

// blk6 writes 48 outputs at d: Σ_t Σ_k taps[t][k]·src_t[off + k·rs/4 + (0..47)].
func blk6(d unsafe.Pointer, srcs [][]float32, taps []filt, off int, rs uintptr) {
	var a0, a1, a2, a3, a4, a5 archsimd.Float32x8
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		cp := unsafe.Pointer(&wb[0])
		// The last tap is peeled so that p and cp never step past their arrays.
		for k := len(wb) - 1; k > 0; k-- {
			c := ld(cp)
			a0 = ld(unsafe.Add(p, 0)).MulAdd(c, a0)
			a1 = ld(unsafe.Add(p, 32)).MulAdd(c, a1)
			a2 = ld(unsafe.Add(p, 64)).MulAdd(c, a2)
			a3 = ld(unsafe.Add(p, 96)).MulAdd(c, a3)
			a4 = ld(unsafe.Add(p, 128)).MulAdd(c, a4)
			a5 = ld(unsafe.Add(p, 160)).MulAdd(c, a5)
			p = unsafe.Add(p, rs)
			cp = unsafe.Add(cp, 32)
		}
		c := ld(cp)
		a0 = ld(unsafe.Add(p, 0)).MulAdd(c, a0)
		a1 = ld(unsafe.Add(p, 32)).MulAdd(c, a1)
		a2 = ld(unsafe.Add(p, 64)).MulAdd(c, a2)
		a3 = ld(unsafe.Add(p, 96)).MulAdd(c, a3)
		a4 = ld(unsafe.Add(p, 128)).MulAdd(c, a4)
		a5 = ld(unsafe.Add(p, 160)).MulAdd(c, a5)
	}
	st(unsafe.Add(d, 0), a0)
	st(unsafe.Add(d, 32), a1)
	st(unsafe.Add(d, 64), a2)
	st(unsafe.Add(d, 96), a3)
	st(unsafe.Add(d, 128), a4)
	st(unsafe.Add(d, 160), a5)
}

// blk4 writes 32 outputs at d: Σ_t Σ_k taps[t][k]·src_t[off + k·rs/4 + (0..31)].
func blk4(d unsafe.Pointer, srcs [][]float32, taps []filt, off int, rs uintptr) {
	var a0, a1, a2, a3 archsimd.Float32x8
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		cp := unsafe.Pointer(&wb[0])
		// The last tap is peeled so that p and cp never step past their arrays.
		for k := len(wb) - 1; k > 0; k-- {
			c := ld(cp)
			a0 = ld(unsafe.Add(p, 0)).MulAdd(c, a0)
			a1 = ld(unsafe.Add(p, 32)).MulAdd(c, a1)
			a2 = ld(unsafe.Add(p, 64)).MulAdd(c, a2)
			a3 = ld(unsafe.Add(p, 96)).MulAdd(c, a3)
			p = unsafe.Add(p, rs)
			cp = unsafe.Add(cp, 32)
		}
		c := ld(cp)
		a0 = ld(unsafe.Add(p, 0)).MulAdd(c, a0)
		a1 = ld(unsafe.Add(p, 32)).MulAdd(c, a1)
		a2 = ld(unsafe.Add(p, 64)).MulAdd(c, a2)
		a3 = ld(unsafe.Add(p, 96)).MulAdd(c, a3)
	}
	st(unsafe.Add(d, 0), a0)
	st(unsafe.Add(d, 32), a1)
	st(unsafe.Add(d, 64), a2)
	st(unsafe.Add(d, 96), a3)
}

// blk2 writes 16 outputs at d: Σ_t Σ_k taps[t][k]·src_t[off + k·rs/4 + (0..15)].
func blk2(d unsafe.Pointer, srcs [][]float32, taps []filt, off int, rs uintptr) {
	var a0, a1 archsimd.Float32x8
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		cp := unsafe.Pointer(&wb[0])
		// The last tap is peeled so that p and cp never step past their arrays.
		for k := len(wb) - 1; k > 0; k-- {
			c := ld(cp)
			a0 = ld(unsafe.Add(p, 0)).MulAdd(c, a0)
			a1 = ld(unsafe.Add(p, 32)).MulAdd(c, a1)
			p = unsafe.Add(p, rs)
			cp = unsafe.Add(cp, 32)
		}
		c := ld(cp)
		a0 = ld(unsafe.Add(p, 0)).MulAdd(c, a0)
		a1 = ld(unsafe.Add(p, 32)).MulAdd(c, a1)
	}
	st(unsafe.Add(d, 0), a0)
	st(unsafe.Add(d, 32), a1)
}

// blk1 writes 8 outputs at d: Σ_t Σ_k taps[t][k]·src_t[off + k·rs/4 + (0..7)].
func blk1(d unsafe.Pointer, srcs [][]float32, taps []filt, off int, rs uintptr) {
	var a0 archsimd.Float32x8
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		cp := unsafe.Pointer(&wb[0])
		// The last tap is peeled so that p and cp never step past their arrays.
		for k := len(wb) - 1; k > 0; k-- {
			c := ld(cp)
			a0 = ld(unsafe.Add(p, 0)).MulAdd(c, a0)
			p = unsafe.Add(p, rs)
			cp = unsafe.Add(cp, 32)
		}
		c := ld(cp)
		a0 = ld(unsafe.Add(p, 0)).MulAdd(c, a0)
	}
	st(unsafe.Add(d, 0), a0)
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
			archsimd.ClearAVXUpperBits()
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
			archsimd.ClearAVXUpperBits()
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
			archsimd.ClearAVXUpperBits()
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
			archsimd.ClearAVXUpperBits()
			return
		}
	}
}
