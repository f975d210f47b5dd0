//go:build goexperiment.simd && amd64

package v1layer

import (
	"simd/archsimd"
	"unsafe"
)

// On CPUs with AVX-512 the 1-D passes run 16 float32 lanes per vector
// (conv_simd_amd64.go picks these at init): the same sums as sumSIMD in
// blocks of 96 outputs (six accumulators: Go 1.26 allocates 15 vector
// registers, and eight accumulators spill), then 64, 32, 16 and a last
// 8-lane block. These loops are bound by loads rather than by the FMAs
// (one 64-byte load per FMA plus the tap, and most horizontal loads
// straddle two cache lines), so vsum2x16 runs two filter sets over the
// same sources at once: each loaded vector feeds two FMAs.

func ld16(p unsafe.Pointer) archsimd.Float32x16 {
	return archsimd.LoadFloat32x16((*[16]float32)(p))
}

func st16(p unsafe.Pointer, v archsimd.Float32x16) { v.Store((*[16]float32)(p)) }

// sum16 is sumSIMD with 16-lane blocks.
func sum16(dst []float32, n int, srcs [][]float32, taps []filt, off, step int) {
	if n%8 != 0 || len(dst) < n || len(srcs) < len(taps) {
		panic("v1layer: internal error: sum16 length")
	}
	for t := range taps {
		if nt := len(taps[t].wb); nt > 0 && (off < 0 || off+(nt-1)*step+n > len(srcs[t])) {
			panic("v1layer: internal error: sum16 source too short")
		}
	}
	d := unsafe.Pointer(unsafe.SliceData(dst))
	rs := uintptr(4 * step)
	x := 0
	for ; x+96 <= n; x += 96 {
		blk16x6(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
	}
	if x+64 <= n {
		blk16x4(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
		x += 64
	}
	if x+32 <= n {
		blk16x2(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
		x += 32
	}
	if x+16 <= n {
		blk16x1(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
		x += 16
	}
	if x < n {
		blk1(unsafe.Add(d, 4*x), srcs, taps, off+x, rs)
	}
	archsimd.ClearAVXUpperBits()
}

func hsum16(dst []float32, n int, srcs [][]float32, taps []filt, off int) {
	sum16(dst, n, srcs, taps, off, 1)
}

func vsum16(dst []float32, n int, srcs [][]float32, taps []filt, off, stride int) {
	sum16(dst, n, srcs, taps, off, stride)
}

// blk16x6 writes 96 outputs at d: Σ_t Σ_k taps[t][k]·src_t[off + k·rs/4 + (0..95)], 16 lanes.
func blk16x6(d unsafe.Pointer, srcs [][]float32, taps []filt, off int, rs uintptr) {
	var a0, a1, a2, a3, a4, a5 archsimd.Float32x16
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		cp := unsafe.Pointer(&wb[0])
		for k := len(wb) - 1; k > 0; k-- {
			c := ld16(cp)
			a0 = ld16(unsafe.Add(p, 0)).MulAdd(c, a0)
			a1 = ld16(unsafe.Add(p, 64)).MulAdd(c, a1)
			a2 = ld16(unsafe.Add(p, 128)).MulAdd(c, a2)
			a3 = ld16(unsafe.Add(p, 192)).MulAdd(c, a3)
			a4 = ld16(unsafe.Add(p, 256)).MulAdd(c, a4)
			a5 = ld16(unsafe.Add(p, 320)).MulAdd(c, a5)
			p = unsafe.Add(p, rs)
			cp = unsafe.Add(cp, 64)
		}
		c := ld16(cp)
		a0 = ld16(unsafe.Add(p, 0)).MulAdd(c, a0)
		a1 = ld16(unsafe.Add(p, 64)).MulAdd(c, a1)
		a2 = ld16(unsafe.Add(p, 128)).MulAdd(c, a2)
		a3 = ld16(unsafe.Add(p, 192)).MulAdd(c, a3)
		a4 = ld16(unsafe.Add(p, 256)).MulAdd(c, a4)
		a5 = ld16(unsafe.Add(p, 320)).MulAdd(c, a5)
	}
	st16(unsafe.Add(d, 0), a0)
	st16(unsafe.Add(d, 64), a1)
	st16(unsafe.Add(d, 128), a2)
	st16(unsafe.Add(d, 192), a3)
	st16(unsafe.Add(d, 256), a4)
	st16(unsafe.Add(d, 320), a5)
}

// blk16x4 writes 64 outputs at d: Σ_t Σ_k taps[t][k]·src_t[off + k·rs/4 + (0..63)], 16 lanes.
func blk16x4(d unsafe.Pointer, srcs [][]float32, taps []filt, off int, rs uintptr) {
	var a0, a1, a2, a3 archsimd.Float32x16
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		cp := unsafe.Pointer(&wb[0])
		for k := len(wb) - 1; k > 0; k-- {
			c := ld16(cp)
			a0 = ld16(unsafe.Add(p, 0)).MulAdd(c, a0)
			a1 = ld16(unsafe.Add(p, 64)).MulAdd(c, a1)
			a2 = ld16(unsafe.Add(p, 128)).MulAdd(c, a2)
			a3 = ld16(unsafe.Add(p, 192)).MulAdd(c, a3)
			p = unsafe.Add(p, rs)
			cp = unsafe.Add(cp, 64)
		}
		c := ld16(cp)
		a0 = ld16(unsafe.Add(p, 0)).MulAdd(c, a0)
		a1 = ld16(unsafe.Add(p, 64)).MulAdd(c, a1)
		a2 = ld16(unsafe.Add(p, 128)).MulAdd(c, a2)
		a3 = ld16(unsafe.Add(p, 192)).MulAdd(c, a3)
	}
	st16(unsafe.Add(d, 0), a0)
	st16(unsafe.Add(d, 64), a1)
	st16(unsafe.Add(d, 128), a2)
	st16(unsafe.Add(d, 192), a3)
}

// blk16x2 writes 32 outputs at d: Σ_t Σ_k taps[t][k]·src_t[off + k·rs/4 + (0..31)], 16 lanes.
func blk16x2(d unsafe.Pointer, srcs [][]float32, taps []filt, off int, rs uintptr) {
	var a0, a1 archsimd.Float32x16
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		cp := unsafe.Pointer(&wb[0])
		for k := len(wb) - 1; k > 0; k-- {
			c := ld16(cp)
			a0 = ld16(unsafe.Add(p, 0)).MulAdd(c, a0)
			a1 = ld16(unsafe.Add(p, 64)).MulAdd(c, a1)
			p = unsafe.Add(p, rs)
			cp = unsafe.Add(cp, 64)
		}
		c := ld16(cp)
		a0 = ld16(unsafe.Add(p, 0)).MulAdd(c, a0)
		a1 = ld16(unsafe.Add(p, 64)).MulAdd(c, a1)
	}
	st16(unsafe.Add(d, 0), a0)
	st16(unsafe.Add(d, 64), a1)
}

// blk16x1 writes 16 outputs at d: Σ_t Σ_k taps[t][k]·src_t[off + k·rs/4 + (0..15)], 16 lanes.
func blk16x1(d unsafe.Pointer, srcs [][]float32, taps []filt, off int, rs uintptr) {
	var a0 archsimd.Float32x16
	for t := range taps {
		wb := taps[t].wb
		if len(wb) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		cp := unsafe.Pointer(&wb[0])
		for k := len(wb) - 1; k > 0; k-- {
			c := ld16(cp)
			a0 = ld16(unsafe.Add(p, 0)).MulAdd(c, a0)
			p = unsafe.Add(p, rs)
			cp = unsafe.Add(cp, 64)
		}
		c := ld16(cp)
		a0 = ld16(unsafe.Add(p, 0)).MulAdd(c, a0)
	}
	st16(unsafe.Add(d, 0), a0)
}

// bulkOf16 is bulkOf for the 16-lane loops: the bulk is whole 32-wide
// steps, the tail (n mod 32 ≤ 24) runs three rows at a time.
func bulkOf16(n int) int {
	if n <= 32 {
		return 0
	}
	return n - n%32
}

// blkP16x4 writes 64 outputs at da and at db: Σ_t Σ_k ta[t][k]·src_t[off + k·rs/4 + (0..63)],
// and the same with tb (one load feeds both sums), 16 lanes.
func blkP16x4(da, db unsafe.Pointer, srcs [][]float32, ta, tb []filt, off int, rs uintptr) {
	var a0, a1, a2, a3, b0, b1, b2, b3 archsimd.Float32x16
	for t := range ta {
		wa, wb := ta[t].wb, tb[t].wb
		if len(wa) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		ca, cb := unsafe.Pointer(&wa[0]), unsafe.Pointer(&wb[0])
		for k := len(wa) - 1; k > 0; k-- {
			c, e := ld16(ca), ld16(cb)
			x0 := ld16(unsafe.Add(p, 0))
			x1 := ld16(unsafe.Add(p, 64))
			x2 := ld16(unsafe.Add(p, 128))
			x3 := ld16(unsafe.Add(p, 192))
			a0 = x0.MulAdd(c, a0)
			b0 = x0.MulAdd(e, b0)
			a1 = x1.MulAdd(c, a1)
			b1 = x1.MulAdd(e, b1)
			a2 = x2.MulAdd(c, a2)
			b2 = x2.MulAdd(e, b2)
			a3 = x3.MulAdd(c, a3)
			b3 = x3.MulAdd(e, b3)
			p = unsafe.Add(p, rs)
			ca, cb = unsafe.Add(ca, 64), unsafe.Add(cb, 64)
		}
		c, e := ld16(ca), ld16(cb)
		x0 := ld16(unsafe.Add(p, 0))
		x1 := ld16(unsafe.Add(p, 64))
		x2 := ld16(unsafe.Add(p, 128))
		x3 := ld16(unsafe.Add(p, 192))
		a0 = x0.MulAdd(c, a0)
		b0 = x0.MulAdd(e, b0)
		a1 = x1.MulAdd(c, a1)
		b1 = x1.MulAdd(e, b1)
		a2 = x2.MulAdd(c, a2)
		b2 = x2.MulAdd(e, b2)
		a3 = x3.MulAdd(c, a3)
		b3 = x3.MulAdd(e, b3)
	}
	st16(unsafe.Add(da, 0), a0)
	st16(unsafe.Add(da, 64), a1)
	st16(unsafe.Add(da, 128), a2)
	st16(unsafe.Add(da, 192), a3)
	st16(unsafe.Add(db, 0), b0)
	st16(unsafe.Add(db, 64), b1)
	st16(unsafe.Add(db, 128), b2)
	st16(unsafe.Add(db, 192), b3)
}

// blkP16x3 writes 48 outputs at da and at db: Σ_t Σ_k ta[t][k]·src_t[off + k·rs/4 + (0..47)],
// and the same with tb (one load feeds both sums), 16 lanes.
func blkP16x3(da, db unsafe.Pointer, srcs [][]float32, ta, tb []filt, off int, rs uintptr) {
	var a0, a1, a2, b0, b1, b2 archsimd.Float32x16
	for t := range ta {
		wa, wb := ta[t].wb, tb[t].wb
		if len(wa) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		ca, cb := unsafe.Pointer(&wa[0]), unsafe.Pointer(&wb[0])
		for k := len(wa) - 1; k > 0; k-- {
			c, e := ld16(ca), ld16(cb)
			x0 := ld16(unsafe.Add(p, 0))
			x1 := ld16(unsafe.Add(p, 64))
			x2 := ld16(unsafe.Add(p, 128))
			a0 = x0.MulAdd(c, a0)
			b0 = x0.MulAdd(e, b0)
			a1 = x1.MulAdd(c, a1)
			b1 = x1.MulAdd(e, b1)
			a2 = x2.MulAdd(c, a2)
			b2 = x2.MulAdd(e, b2)
			p = unsafe.Add(p, rs)
			ca, cb = unsafe.Add(ca, 64), unsafe.Add(cb, 64)
		}
		c, e := ld16(ca), ld16(cb)
		x0 := ld16(unsafe.Add(p, 0))
		x1 := ld16(unsafe.Add(p, 64))
		x2 := ld16(unsafe.Add(p, 128))
		a0 = x0.MulAdd(c, a0)
		b0 = x0.MulAdd(e, b0)
		a1 = x1.MulAdd(c, a1)
		b1 = x1.MulAdd(e, b1)
		a2 = x2.MulAdd(c, a2)
		b2 = x2.MulAdd(e, b2)
	}
	st16(unsafe.Add(da, 0), a0)
	st16(unsafe.Add(da, 64), a1)
	st16(unsafe.Add(da, 128), a2)
	st16(unsafe.Add(db, 0), b0)
	st16(unsafe.Add(db, 64), b1)
	st16(unsafe.Add(db, 128), b2)
}

// blkP16x2 writes 32 outputs at da and at db: Σ_t Σ_k ta[t][k]·src_t[off + k·rs/4 + (0..31)],
// and the same with tb (one load feeds both sums), 16 lanes.
func blkP16x2(da, db unsafe.Pointer, srcs [][]float32, ta, tb []filt, off int, rs uintptr) {
	var a0, a1, b0, b1 archsimd.Float32x16
	for t := range ta {
		wa, wb := ta[t].wb, tb[t].wb
		if len(wa) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		ca, cb := unsafe.Pointer(&wa[0]), unsafe.Pointer(&wb[0])
		for k := len(wa) - 1; k > 0; k-- {
			c, e := ld16(ca), ld16(cb)
			x0 := ld16(unsafe.Add(p, 0))
			x1 := ld16(unsafe.Add(p, 64))
			a0 = x0.MulAdd(c, a0)
			b0 = x0.MulAdd(e, b0)
			a1 = x1.MulAdd(c, a1)
			b1 = x1.MulAdd(e, b1)
			p = unsafe.Add(p, rs)
			ca, cb = unsafe.Add(ca, 64), unsafe.Add(cb, 64)
		}
		c, e := ld16(ca), ld16(cb)
		x0 := ld16(unsafe.Add(p, 0))
		x1 := ld16(unsafe.Add(p, 64))
		a0 = x0.MulAdd(c, a0)
		b0 = x0.MulAdd(e, b0)
		a1 = x1.MulAdd(c, a1)
		b1 = x1.MulAdd(e, b1)
	}
	st16(unsafe.Add(da, 0), a0)
	st16(unsafe.Add(da, 64), a1)
	st16(unsafe.Add(db, 0), b0)
	st16(unsafe.Add(db, 64), b1)
}

// blkP16x1 writes 16 outputs at da and at db: Σ_t Σ_k ta[t][k]·src_t[off + k·rs/4 + (0..15)],
// and the same with tb (one load feeds both sums), 16 lanes.
func blkP16x1(da, db unsafe.Pointer, srcs [][]float32, ta, tb []filt, off int, rs uintptr) {
	var a0, b0 archsimd.Float32x16
	for t := range ta {
		wa, wb := ta[t].wb, tb[t].wb
		if len(wa) == 0 {
			continue
		}
		p := unsafe.Pointer(&srcs[t][off])
		ca, cb := unsafe.Pointer(&wa[0]), unsafe.Pointer(&wb[0])
		for k := len(wa) - 1; k > 0; k-- {
			c, e := ld16(ca), ld16(cb)
			x0 := ld16(unsafe.Add(p, 0))
			a0 = x0.MulAdd(c, a0)
			b0 = x0.MulAdd(e, b0)
			p = unsafe.Add(p, rs)
			ca, cb = unsafe.Add(ca, 64), unsafe.Add(cb, 64)
		}
		c, e := ld16(ca), ld16(cb)
		x0 := ld16(unsafe.Add(p, 0))
		a0 = x0.MulAdd(c, a0)
		b0 = x0.MulAdd(e, b0)
	}
	st16(unsafe.Add(da, 0), a0)
	st16(unsafe.Add(db, 0), b0)
}

// vsum2x16 is vsum for two filter sets ta, tb over the same sources (the
// same number of taps per term), writing da and db; n a multiple of 16.
func vsum2x16(da, db []float32, n int, srcs [][]float32, ta, tb []filt, off, stride int) {
	if n%16 != 0 || len(da) < n || len(db) < n || len(srcs) < len(ta) || len(tb) != len(ta) {
		panic("v1layer: internal error: vsum2x16 length")
	}
	for t := range ta {
		if nt := len(ta[t].wb); len(tb[t].wb) != nt || nt > 0 && (off < 0 || off+(nt-1)*stride+n > len(srcs[t])) {
			panic("v1layer: internal error: vsum2x16 source too short")
		}
	}
	a, b := unsafe.Pointer(unsafe.SliceData(da)), unsafe.Pointer(unsafe.SliceData(db))
	rs := uintptr(4 * stride)
	x := 0
	for ; x+64 <= n; x += 64 {
		blkP16x4(unsafe.Add(a, 4*x), unsafe.Add(b, 4*x), srcs, ta, tb, off+x, rs)
	}
	switch n - x {
	case 48:
		blkP16x3(unsafe.Add(a, 4*x), unsafe.Add(b, 4*x), srcs, ta, tb, off+x, rs)
	case 32:
		blkP16x2(unsafe.Add(a, 4*x), unsafe.Add(b, 4*x), srcs, ta, tb, off+x, rs)
	case 16:
		blkP16x1(unsafe.Add(a, 4*x), unsafe.Add(b, 4*x), srcs, ta, tb, off+x, rs)
	}
	archsimd.ClearAVXUpperBits()
}
