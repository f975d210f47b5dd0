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
		hsum, vsum, sum3 = hsumSIMD, vsumSIMD, sum3SIMD
		energyTo, maxInto = energySIMD, maxIntoSIMD
		max2To, max3To = max2SIMD, max3SIMD
		min2To, min3To, esq2To, esq3To, sqrtsOf = min2SIMD, min3SIMD, esq2SIMD, esq3SIMD, sqrtsSIMD
		build = "simd (GOEXPERIMENT=simd, AVX2+FMA, 8 float32 lanes)"
	}
	if archsimd.X86.AVX512() {
		hsum, vsum, vsum2 = hsum16, vsum16, vsum2x16
		bulkOf = bulkOf16
		build = "simd (GOEXPERIMENT=simd, AVX-512, 16 float32 lanes)"
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
			cp = unsafe.Add(cp, 64)
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
			cp = unsafe.Add(cp, 64)
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
			cp = unsafe.Add(cp, 64)
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
			cp = unsafe.Add(cp, 64)
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

func min2SIMD(dst, a, b []float32) {
	n := len(dst)
	if n < 8 {
		min2Go(dst, a, b)
		return
	}
	a, b = a[:n], b[:n]
	for i := 0; ; i += 8 {
		if i > n-8 {
			i = n - 8
		}
		x := archsimd.LoadFloat32x8Slice(a[i:])
		x.Min(archsimd.LoadFloat32x8Slice(b[i:])).StoreSlice(dst[i:])
		if i == n-8 {
			archsimd.ClearAVXUpperBits()
			return
		}
	}
}

func min3SIMD(dst, a, b, c []float32) {
	n := len(dst)
	if n < 8 {
		min3Go(dst, a, b, c)
		return
	}
	a, b, c = a[:n], b[:n], c[:n]
	for i := 0; ; i += 8 {
		if i > n-8 {
			i = n - 8
		}
		x := archsimd.LoadFloat32x8Slice(a[i:])
		y := archsimd.LoadFloat32x8Slice(b[i:])
		x.Min(y).Min(archsimd.LoadFloat32x8Slice(c[i:])).StoreSlice(dst[i:])
		if i == n-8 {
			archsimd.ClearAVXUpperBits()
			return
		}
	}
}

func esq2SIMD(dst, e0, e1, o0, o1 []float32) {
	n := len(dst)
	if n < 8 {
		esq2Go(dst, e0, e1, o0, o1)
		return
	}
	e0, e1, o0, o1 = e0[:n], e1[:n], o0[:n], o1[:n]
	for i := 0; ; i += 8 {
		if i > n-8 {
			i = n - 8
		}
		a := archsimd.LoadFloat32x8Slice(e0[i:])
		b := archsimd.LoadFloat32x8Slice(o0[i:])
		c := archsimd.LoadFloat32x8Slice(e1[i:])
		d := archsimd.LoadFloat32x8Slice(o1[i:])
		a.Mul(a).Add(b.Mul(b)).Max(c.Mul(c).Add(d.Mul(d))).StoreSlice(dst[i:])
		if i == n-8 {
			archsimd.ClearAVXUpperBits()
			return
		}
	}
}

func esq3SIMD(dst, e0, e1, e2, o0, o1, o2 []float32) {
	n := len(dst)
	if n < 8 {
		esq3Go(dst, e0, e1, e2, o0, o1, o2)
		return
	}
	e0, e1, e2, o0, o1, o2 = e0[:n], e1[:n], e2[:n], o0[:n], o1[:n], o2[:n]
	for i := 0; ; i += 8 {
		if i > n-8 {
			i = n - 8
		}
		a := archsimd.LoadFloat32x8Slice(e0[i:])
		b := archsimd.LoadFloat32x8Slice(o0[i:])
		v := a.Mul(a).Add(b.Mul(b))
		a = archsimd.LoadFloat32x8Slice(e1[i:])
		b = archsimd.LoadFloat32x8Slice(o1[i:])
		v = v.Max(a.Mul(a).Add(b.Mul(b)))
		a = archsimd.LoadFloat32x8Slice(e2[i:])
		b = archsimd.LoadFloat32x8Slice(o2[i:])
		v.Max(a.Mul(a).Add(b.Mul(b))).StoreSlice(dst[i:])
		if i == n-8 {
			archsimd.ClearAVXUpperBits()
			return
		}
	}
}

// sqrtsSIMD works in place, so it cannot overlap its last vector (that
// would take the root twice): the first n%8 elements go scalar.
func sqrtsSIMD(x []float32) {
	n := len(x)
	h := n % 8
	sqrtsGo(x[:h])
	for i := h; i < n; i += 8 {
		archsimd.LoadFloat32x8Slice(x[i:]).Sqrt().StoreSlice(x[i:])
	}
	archsimd.ClearAVXUpperBits()
}

// sum3SIMD is three rows of sumSIMD (row j: dst[j·ds:], sources at
// off + j·rstep) for n ≤ 32, a multiple of 8: blocks of 3 rows × 16 (six
// accumulators, as blk6) and 3 × 8, right to left, so that a row's
// overrun past its width into the next row's first columns is rewritten
// by that row's first block afterwards. Narrow images (28×28) get six
// independent FMA chains this way instead of four.
func sum3SIMD(dst []float32, ds, n int, srcs [][]float32, taps []filt, off, step, rstep int) {
	if n%8 != 0 || n > 32 || len(dst) < 2*ds+n || len(srcs) < len(taps) || off < 0 {
		panic("v1layer: internal error: sum3SIMD length")
	}
	for t := range taps {
		if nt := len(taps[t].wb); nt > 0 && off+2*rstep+(nt-1)*step+n > len(srcs[t]) {
			panic("v1layer: internal error: sum3SIMD source too short")
		}
	}
	d := unsafe.Pointer(unsafe.SliceData(dst))
	rs, dss, rst := uintptr(4*step), uintptr(4*ds), uintptr(4*rstep)
	x := n
	if n%16 != 0 {
		x -= 8
		blk3x1(unsafe.Add(d, 4*x), dss, srcs, taps, off+x, rs, rst)
	}
	for x >= 16 {
		x -= 16
		blk3x2(unsafe.Add(d, 4*x), dss, srcs, taps, off+x, rs, rst)
	}
	archsimd.ClearAVXUpperBits()
}

// blk3x2 is blk2 for three rows at once: row j reads its sources at
// off + j·rstep/4 and writes at d + j·ds.
func blk3x2(d unsafe.Pointer, ds uintptr, srcs [][]float32, taps []filt, off int, rs, rstep uintptr) {
	var a00, a01, a10, a11, a20, a21 archsimd.Float32x8
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p0 := unsafe.Pointer(&srcs[t][off])
		p1 := unsafe.Add(p0, rstep)
		p2 := unsafe.Add(p1, rstep)
		cp := unsafe.Pointer(&wb[0])
		for k := len(wb) - 1; k > 0; k-- {
			c := ld(cp)
			a00 = ld(unsafe.Add(p0, 0)).MulAdd(c, a00)
			a01 = ld(unsafe.Add(p0, 32)).MulAdd(c, a01)
			a10 = ld(unsafe.Add(p1, 0)).MulAdd(c, a10)
			a11 = ld(unsafe.Add(p1, 32)).MulAdd(c, a11)
			a20 = ld(unsafe.Add(p2, 0)).MulAdd(c, a20)
			a21 = ld(unsafe.Add(p2, 32)).MulAdd(c, a21)
			p0 = unsafe.Add(p0, rs)
			p1 = unsafe.Add(p1, rs)
			p2 = unsafe.Add(p2, rs)
			cp = unsafe.Add(cp, 64)
		}
		c := ld(cp)
		a00 = ld(unsafe.Add(p0, 0)).MulAdd(c, a00)
		a01 = ld(unsafe.Add(p0, 32)).MulAdd(c, a01)
		a10 = ld(unsafe.Add(p1, 0)).MulAdd(c, a10)
		a11 = ld(unsafe.Add(p1, 32)).MulAdd(c, a11)
		a20 = ld(unsafe.Add(p2, 0)).MulAdd(c, a20)
		a21 = ld(unsafe.Add(p2, 32)).MulAdd(c, a21)
	}
	d0 := d
	d1 := unsafe.Add(d0, ds)
	d2 := unsafe.Add(d1, ds)
	st(unsafe.Add(d0, 0), a00)
	st(unsafe.Add(d0, 32), a01)
	st(unsafe.Add(d1, 0), a10)
	st(unsafe.Add(d1, 32), a11)
	st(unsafe.Add(d2, 0), a20)
	st(unsafe.Add(d2, 32), a21)
}

// blk3x1 is blk1 for three rows at once: row j reads its sources at
// off + j·rstep/4 and writes at d + j·ds.
func blk3x1(d unsafe.Pointer, ds uintptr, srcs [][]float32, taps []filt, off int, rs, rstep uintptr) {
	var a00, a10, a20 archsimd.Float32x8
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p0 := unsafe.Pointer(&srcs[t][off])
		p1 := unsafe.Add(p0, rstep)
		p2 := unsafe.Add(p1, rstep)
		cp := unsafe.Pointer(&wb[0])
		for k := len(wb) - 1; k > 0; k-- {
			c := ld(cp)
			a00 = ld(unsafe.Add(p0, 0)).MulAdd(c, a00)
			a10 = ld(unsafe.Add(p1, 0)).MulAdd(c, a10)
			a20 = ld(unsafe.Add(p2, 0)).MulAdd(c, a20)
			p0 = unsafe.Add(p0, rs)
			p1 = unsafe.Add(p1, rs)
			p2 = unsafe.Add(p2, rs)
			cp = unsafe.Add(cp, 64)
		}
		c := ld(cp)
		a00 = ld(unsafe.Add(p0, 0)).MulAdd(c, a00)
		a10 = ld(unsafe.Add(p1, 0)).MulAdd(c, a10)
		a20 = ld(unsafe.Add(p2, 0)).MulAdd(c, a20)
	}
	d0 := d
	d1 := unsafe.Add(d0, ds)
	d2 := unsafe.Add(d1, ds)
	st(unsafe.Add(d0, 0), a00)
	st(unsafe.Add(d1, 0), a10)
	st(unsafe.Add(d2, 0), a20)
}
