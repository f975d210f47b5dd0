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
//
// The 1-D passes run whole blocks of outputs per row: sum8 takes blocks of
// 48 outputs (six accumulators, which hide the FMA latency without
// spilling under Go's register allocation), then 32, 16 and 8. Each block
// walks the taps with a pointer per source, so every load has a constant
// offset; taps come pre-broadcast (filt.wb). The blocks of every lane
// width, vector count and row count, their row drivers (sum8, sum16) and
// the element-wise loops are generated (conv_gen_amd64.go,
// elementwise_gen_amd64.go; see internal/simdgen). This file keeps what
// exists once: the start-up choice, the loads and stores, the three-row
// driver sum3SIMD and sqrtsSIMD.
//
// Go 1.26 does not clear the upper halves of the Y registers after AVX
// code; the SSE moves the compiler uses elsewhere (struct copies) then
// stall on them. Measured: 28×28 at half speed without the
// archsimd.ClearAVXUpperBits at the end of every loop.
func init() {
	if archsimd.X86.AVX2() && archsimd.X86.FMA() {
		hsum, vsum, sum3, lanes = hsum8, vsum8, sum3SIMD, 8
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

func ld8(p unsafe.Pointer) archsimd.Float32x8 { return archsimd.LoadFloat32x8((*[8]float32)(p)) }

func st8(p unsafe.Pointer, v archsimd.Float32x8) { v.Store((*[8]float32)(p)) }

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

// sum3SIMD is three rows of sum8 (row j: dst[j·ds:], sources at
// off + j·rstep) for n ≤ 32, a multiple of 8: blocks of 3 rows × 16 (six
// accumulators, as blk8x6) and 3 × 8, right to left, so that a row's
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
		blk8x1r3(unsafe.Add(d, 4*x), dss, srcs, taps, off+x, rs, rst)
	}
	for x >= 16 {
		x -= 16
		blk8x2r3(unsafe.Add(d, 4*x), dss, srcs, taps, off+x, rs, rst)
	}
	archsimd.ClearAVXUpperBits()
}
