//go:build goexperiment.simd && amd64

package v1layer

import (
	"simd/archsimd"
	"unsafe"
)

// On CPUs with AVX-512 the 1-D passes run 16 float32 lanes per vector
// (conv_simd_amd64.go picks these at init): the same sums as sum8 in
// blocks of 96 outputs (six accumulators: Go 1.26 allocates 15 vector
// registers, and eight accumulators spill), then 64, 32, 16 and a last
// 8-lane block. These loops are bound by loads rather than by the FMAs
// (one 64-byte load per FMA plus the tap, and most horizontal loads
// straddle two cache lines), so vsum2x16 runs two filter sets over the
// same sources at once: each loaded vector feeds two FMAs. The blocks
// (blk16x*, blkP16x*) and sum16 are generated (conv_gen_amd64.go).

func ld16(p unsafe.Pointer) archsimd.Float32x16 {
	return archsimd.LoadFloat32x16((*[16]float32)(p))
}

func st16(p unsafe.Pointer, v archsimd.Float32x16) { v.Store((*[16]float32)(p)) }

// bulkOf16 is bulkOf for the 16-lane loops: the bulk is whole 32-wide
// steps, the tail (n mod 32 ≤ 24) runs three rows at a time.
func bulkOf16(n int) int {
	if n <= 32 {
		return 0
	}
	return n - n%32
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
