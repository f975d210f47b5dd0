//go:build goexperiment.simd && amd64

package learn

import (
	"simd/archsimd"
	"sync"
	"unsafe"
)

// The SIMD build (GOEXPERIMENT=simd, amd64) runs the dense products with
// 8-lane float32 fused multiply-adds (AVX2 + FMA) when the CPU has them;
// otherwise the gonum kernels stay in place. Every kernel clears the upper
// halves of the vector registers (VZEROUPPER) before scalar code runs: the
// rest of the program is compiled to SSE, and SSE instructions after 256-bit
// ones with dirty upper halves carry false dependencies. Without it a
// 256-float axpy measured 185 ns instead of 50 on the 2-core EPYC.
func init() {
	if archsimd.X86.AVX2() && archsimd.X86.FMA() {
		gemmNT, gemmNN, gemmNNSub, axpy = gemmNTSIMD, gemmNNSIMD, gemmNNSubSIMD, axpySIMD
		packNN, gemmNNPacked = packNNSIMD, gemmNNPackedSIMD
		packNTb, gemmNTPacked = packNTSIMD, gemmNTPackedSIMD
		kernelBuild = "simd (GOEXPERIMENT=simd, AVX2+FMA, 8 float32 lanes)"
	}
}

func ld8(p unsafe.Pointer) archsimd.Float32x8 { return archsimd.LoadFloat32x8((*[8]float32)(p)) }

func st8(p unsafe.Pointer, v archsimd.Float32x8) { v.Store((*[8]float32)(p)) }

var packPool = sync.Pool{New: func() any { return new([]float32) }}

// The products share their micro-kernels: tile6x16asm and tile4x16asm
// (assembly, dictkernel_simd_amd64.s) and tile1x16 hold a 6×16, 4×16 or
// 1×16 tile of the result in 12, 8 or 2 registers and update it by outer
// products, one element of each row of a broadcast against two vectors of
// one row of b per step; tileStrip runs them down a strip of rows. A tile
// is stored at c (mode tileStore) or subtracted from what is there
// (tileSub).
const (
	tileStore = 0
	tileSub   = 1
)

// tile1x16 computes t = Σ_{q<p} a[q]·b_q[0..16) for the rows b_q = b + q·bs
// of b (offsets in bytes), one chain of fused multiply-adds per element in
// the order q = 0, 1, …, p−1, and stores t at c, or with mode tileSub
// subtracts it from what is there; p ≥ 1.
func tile1x16(c, a, b unsafe.Pointer, bs uintptr, p int, mode int) {
	var c0, c1 archsimd.Float32x8
	bp := b
	for q := 0; ; {
		x := archsimd.BroadcastFloat32x8(*(*float32)(unsafe.Add(a, uintptr(q)*4)))
		c0 = x.MulAdd(ld8(bp), c0)
		c1 = x.MulAdd(ld8(unsafe.Add(bp, 32)), c1)
		// Stop before stepping past b's last row (checkptr rejects such a pointer).
		if q++; q == p {
			break
		}
		bp = unsafe.Add(bp, bs)
	}
	if mode == tileSub {
		c0, c1 = ld8(c).Sub(c0), ld8(unsafe.Add(c, 32)).Sub(c1)
	}
	st8(c, c0)
	st8(unsafe.Add(c, 32), c1)
}

//go:noescape
func tile6x16asm(c unsafe.Pointer, cs uintptr, a unsafe.Pointer, as uintptr, b unsafe.Pointer, bs uintptr, p int, mode int)

//go:noescape
func tile4x16asm(c unsafe.Pointer, cs uintptr, a unsafe.Pointer, as uintptr, b unsafe.Pointer, bs uintptr, p int, mode int)

// tileStrip computes the m×16 strip t = a·b16 for rows a_i = a + i·as
// (i < m) and the p rows b_q = b + q·bs of a 16-column strip of b, stored
// at c + i·cs (or subtracted, by mode): six rows at a time by the assembly
// kernel (12 accumulators; kernels written with archsimd spend more
// instructions on register moves than on multiply-adds), then four rows
// (assembly, 8 accumulators) and one row at a time. Every element is one
// chain of fused multiply-adds in the order q = 0, 1, …, p−1, whichever
// kernel computes it, so the result does not depend on the tiling.
func tileStrip(c unsafe.Pointer, cs uintptr, a unsafe.Pointer, as uintptr, b unsafe.Pointer, bs uintptr, m, p int, mode int) {
	// Rows left over by the six-row tiles go four at a time where that
	// saves one-row tiles (2 or 3 left: 8 = 4+4 rows, 9 = 4+4+1, instead of
	// 6+1+1 and 6+1+1+1): the one-row kernel's two accumulators wait on the
	// FMA latency, so a row costs it about four times what it costs the
	// six-row kernel.
	n6 := m / 6
	if r := m % 6; (r == 2 || r == 3) && n6 > 0 {
		n6--
	}
	i := 0
	for ; i < 6*n6; i += 6 {
		tile6x16asm(unsafe.Add(c, uintptr(i)*cs), cs, unsafe.Add(a, uintptr(i)*as), as, b, bs, p, mode)
	}
	for ; i+4 <= m; i += 4 {
		tile4x16asm(unsafe.Add(c, uintptr(i)*cs), cs, unsafe.Add(a, uintptr(i)*as), as, b, bs, p, mode)
	}
	for ; i < m; i++ {
		tile1x16(unsafe.Add(c, uintptr(i)*cs), unsafe.Add(a, uintptr(i)*as), b, bs, p, mode)
	}
}

// tileRowBlock is the number of rows of a that gemmNTSIMD and gemmNNSIMD
// run against every 16-column strip of b before moving on: rows of
// tileBlockBytes in all, so that the block stays in the L2 cache (1 MB
// per core on Zen 4, 256 KB and up on other AVX2 cores) while the strips
// pass, a multiple of the assembly kernel's six rows.
const tileBlockBytes = 192 << 10

func tileRowBlock(p int) int {
	return max(6, tileBlockBytes/(4*p)/6*6)
}

// gemmNTSIMD is gemmNTGonum. b is packed into panels of 16 rows stored
// column-interleaved (panel[q*16+c] = b[(j0+c)*p+q], zero past n), so that
// the tile kernels read the panel's rows 64 bytes apart. Tiles that reach
// past column n go through a 6×16 buffer.
func gemmNTSIMD(c, a, b []float32, m, n, p int) {
	if m == 0 || n == 0 {
		return
	}
	if len(a) < m*p || len(b) < n*p || len(c) < m*n {
		panic("learn: internal error: gemmNTSIMD slice too short")
	}
	if p == 0 {
		clear(c[:m*n])
		return
	}
	np := (n + 15) / 16
	bufp := packPool.Get().(*[]float32)
	if cap(*bufp) < np*16*p {
		*bufp = make([]float32, np*16*p)
	}
	pk := (*bufp)[:np*16*p]
	packNTSIMD(pk, b, n, p)
	ntPanels(c, a, pk, m, n, p)
	packPool.Put(bufp)
}

// packNTSIMD packs b (n×p) into the ⌈n/16⌉ panels gemmNTSIMD reads (see
// packNT), panel j at pk[j·16p:].
func packNTSIMD(pk, b []float32, n, p int) {
	np := (n + 15) / 16
	if len(pk) < np*16*p || len(b) < n*p {
		panic("learn: internal error: packNTSIMD lengths")
	}
	for jp := 0; jp < np; jp++ {
		packNT(pk[jp*16*p:(jp+1)*16*p], b[jp*16*p:min(n, jp*16+16)*p], p)
	}
}

// gemmNTPackedSIMD is gemmNTSIMD with b packed once by packNTSIMD, for a b
// that several products read (a head chunk's inputs, read by every block
// of the hidden layer's forward pass): the same panels, the same tiles,
// the same bits.
func gemmNTPackedSIMD(c, a, pk []float32, m, n, p int) {
	if m == 0 || n == 0 {
		return
	}
	if len(a) < m*p || len(pk) < (n+15)/16*16*p || len(c) < m*n {
		panic("learn: internal error: gemmNTPackedSIMD slice too short")
	}
	if p == 0 {
		clear(c[:m*n])
		return
	}
	ntPanels(c, a, pk, m, n, p)
}

// ntPanels computes c = a·bᵀ from b's packed panels pk.
func ntPanels(c, a, pk []float32, m, n, p int) {
	np := (n + 15) / 16
	var tile [6 * 16]float32
	tp := unsafe.Pointer(&tile[0])
	as := uintptr(4 * p)
	rb := tileRowBlock(p)
	for i0 := 0; i0 < m; i0 += rb {
		mi := min(rb, m-i0)
		ai := unsafe.Pointer(unsafe.SliceData(a[i0*p:]))
		for jp := 0; jp < np; jp++ {
			panel := unsafe.Pointer(unsafe.SliceData(pk[jp*16*p:]))
			j0 := jp * 16
			if j0+16 <= n {
				tileStrip(unsafe.Pointer(unsafe.SliceData(c[i0*n+j0:])), uintptr(4*n), ai, as, panel, 64, mi, p, tileStore)
				continue
			}
			for r0 := 0; r0 < mi; r0 += 6 {
				rows := min(6, mi-r0)
				tileStrip(tp, 64, unsafe.Add(ai, uintptr(r0)*as), as, panel, 64, rows, p, tileStore)
				for r := 0; r < rows; r++ {
					i := i0 + r0 + r
					copy(c[i*n+j0:i*n+n], tile[r*16:r*16+n-j0])
				}
			}
		}
	}
	archsimd.ClearAVXUpperBits()
}

//go:noescape
func packNT16asm(panel unsafe.Pointer, b unsafe.Pointer, rs uintptr, blocks int)

// packNT writes the rows of b (at most 16, p values each) column-
// interleaved into panel (16·p values): panel[q*16+c] = b[c*p+q], zero for
// the rows past len(b)/p. A full panel goes through 8×8 register
// transposes (packNT16asm) up to the last multiple of 8 of p; the rest is
// copied value by value, walking the panel in order (walking it row by row
// strides 64 bytes per write over a panel larger than L1, 69 KB at
// p = 1,077). Two 16 × 1,077 panels took 37 µs by the scalar loop
// gemmNTSIMD had, 5 µs by the transposes (2-core EPYC).
func packNT(panel, b []float32, p int) {
	rows := len(b) / p
	if len(panel) < 16*p || rows > 16 {
		panic("learn: internal error: packNT lengths")
	}
	if rows < 16 {
		clear(panel[:16*p])
	}
	pp, bp := unsafe.Pointer(unsafe.SliceData(panel)), unsafe.Pointer(unsafe.SliceData(b))
	rs := uintptr(4 * p)
	q0 := 0
	if rows == 16 && p >= 8 {
		packNT16asm(pp, bp, rs, p/8)
		q0 = p / 8 * 8
	}
	for q := q0; q < p; q++ {
		dst := (*[16]float32)(unsafe.Add(pp, uintptr(q)*64))
		src := unsafe.Add(bp, uintptr(q)*4)
		for c := 0; c < rows; c++ {
			dst[c] = *(*float32)(unsafe.Add(src, uintptr(c)*rs))
		}
	}
}

// gemmNNSIMD computes c = a·b for a (m×p), b (p×n), c (m×n), all row-major
// and contiguous, as gemmNTSIMD does, each 16-column strip of b copied
// into a contiguous p×16 panel first (zero-padded past n): read in place,
// a strip's rows lie 4n bytes apart, one page each for a wide b, and the
// data TLB misses cost more than the copy.
func gemmNNSIMD(c, a, b []float32, m, n, p int) {
	if m == 0 || n == 0 {
		return
	}
	if len(a) < m*p || len(b) < p*n || len(c) < m*n {
		panic("learn: internal error: gemmNNSIMD slice too short")
	}
	if p == 0 {
		clear(c[:m*n])
		return
	}
	bufp := packPool.Get().(*[]float32)
	if cap(*bufp) < 16*p {
		*bufp = make([]float32, 16*p)
	}
	pk := (*bufp)[:16*p]
	for j0 := 0; j0 < n; j0 += 16 {
		packNNStrip(pk, b, n, j0, 0, p)
		nnStrip(c, a, pk, m, n, p, j0)
	}
	archsimd.ClearAVXUpperBits()
	packPool.Put(bufp)
}

// packNNStrip copies rows [q0, q1) of the 16-column strip of b (p×n) at
// column j0 into rows [q0, q1) of panel (p×16), zero past column n.
func packNNStrip(panel, b []float32, n, j0, q0, q1 int) {
	w := min(16, n-j0)
	if w < 16 {
		for q := q0; q < q1; q++ {
			copy(panel[q*16:q*16+w], b[q*n+j0:q*n+j0+w])
			clear(panel[q*16+w : (q+1)*16])
		}
		return
	}
	if len(panel) < q1*16 || len(b) < (q1-1)*n+j0+16 {
		panic("learn: internal error: packNNStrip lengths")
	}
	// Two 8-lane moves per row: copy, or a 64-byte array assignment, calls
	// memmove for every row.
	pp := unsafe.Pointer(unsafe.SliceData(panel))
	bp := unsafe.Pointer(unsafe.SliceData(b[j0:]))
	for q := q0; q < q1; q++ {
		src := unsafe.Add(bp, uintptr(q*n)*4)
		st8(unsafe.Add(pp, q*64), ld8(src))
		st8(unsafe.Add(pp, q*64+32), ld8(unsafe.Add(src, 32)))
	}
}

// nnStrip computes columns [j0, j0+16) of c = a·b (a m×p, c m×n) from the
// packed strip panel (p×16) of b; columns past n go through a 6×16 buffer.
func nnStrip(c, a, panel []float32, m, n, p, j0 int) {
	as := uintptr(4 * p)
	ap := unsafe.Pointer(unsafe.SliceData(a))
	pp := unsafe.Pointer(unsafe.SliceData(panel))
	w := min(16, n-j0)
	if w == 16 {
		tileStrip(unsafe.Pointer(unsafe.SliceData(c[j0:])), uintptr(4*n), ap, as, pp, 64, m, p, tileStore)
		return
	}
	var tile [6 * 16]float32
	tp := unsafe.Pointer(&tile[0])
	for r0 := 0; r0 < m; r0 += 6 {
		rows := min(6, m-r0)
		tileStrip(tp, 64, unsafe.Add(ap, uintptr(r0)*as), as, pp, 64, rows, p, tileStore)
		for r := 0; r < rows; r++ {
			i := r0 + r
			copy(c[i*n+j0:i*n+n], tile[r*16:r*16+w])
		}
	}
}

// packNNSIMD writes rows [q0, q1) of b (p×n) into pk in the layout
// gemmNNPackedSIMD reads: the ⌈n/16⌉ strips of gemmNNSIMD's panels one
// after the other, strip j at pk[j·16p:]. Disjoint row ranges may be
// packed concurrently.
func packNNSIMD(pk, b []float32, p, n, q0, q1 int) {
	if len(pk) < (n+15)/16*16*p || len(b) < p*n {
		panic("learn: internal error: packNNSIMD lengths")
	}
	for j0 := 0; j0 < n; j0 += 16 {
		packNNStrip(pk[j0*p:(j0+16)*p], b, n, j0, q0, q1)
	}
	archsimd.ClearAVXUpperBits()
}

// gemmNNPackedSIMD is gemmNNSIMD with b packed once by packNNSIMD, for a
// b that several products read (the head's inputs, read by every block of
// its hidden layer's weight gradient): the same panels, the same tiles,
// the same bits.
func gemmNNPackedSIMD(c, a, pk []float32, m, n, p int) {
	if m == 0 || n == 0 {
		return
	}
	if len(a) < m*p || len(pk) < (n+15)/16*16*p || len(c) < m*n {
		panic("learn: internal error: gemmNNPackedSIMD slice too short")
	}
	if p == 0 {
		clear(c[:m*n])
		return
	}
	for j0 := 0; j0 < n; j0 += 16 {
		nnStrip(c, a, pk[j0*p:(j0+16)*p], m, n, p, j0)
	}
	archsimd.ClearAVXUpperBits()
}

// gemmNNSubSIMD is gemmNNSubGonum. b's rows are read in place (row stride
// 4n bytes) by the tile kernels, which subtract their tiles from c.
// Columns past the last multiple of 16 go scalar.
func gemmNNSubSIMD(c, a, b []float32, m, n, p int) {
	if m == 0 || n == 0 || p == 0 {
		return
	}
	if len(a) < m*p || len(b) < p*n || len(c) < m*n {
		panic("learn: internal error: gemmNNSubSIMD slice too short")
	}
	n16 := n &^ 15
	rs := uintptr(4 * n) // row stride of b and c in bytes
	as := uintptr(4 * p)
	ap := unsafe.Pointer(unsafe.SliceData(a))
	for j := 0; j < n16; j += 16 {
		tileStrip(unsafe.Pointer(unsafe.SliceData(c[j:])), rs, ap, as, unsafe.Pointer(unsafe.SliceData(b[j:])), rs, m, p, tileSub)
	}
	archsimd.ClearAVXUpperBits()
	if n16 == n {
		return
	}
	for i := 0; i < m; i++ { // remaining columns, scalar
		ar := a[i*p : (i+1)*p]
		for j := n16; j < n; j++ {
			var s float32
			for q, v := range ar {
				s += v * b[q*n+j]
			}
			c[i*n+j] -= s
		}
	}
}

// axpySIMD is axpyGonum.
func axpySIMD(alpha float32, x, y []float32) {
	n := len(x)
	if len(y) < n {
		panic("learn: internal error: axpySIMD length")
	}
	av := archsimd.BroadcastFloat32x8(alpha)
	xp := unsafe.Pointer(unsafe.SliceData(x))
	yp := unsafe.Pointer(unsafe.SliceData(y))
	i := 0
	for ; i+16 <= n; i += 16 {
		o := uintptr(i) * 4
		y0 := av.MulAdd(ld8(unsafe.Add(xp, o)), ld8(unsafe.Add(yp, o)))
		y1 := av.MulAdd(ld8(unsafe.Add(xp, o+32)), ld8(unsafe.Add(yp, o+32)))
		st8(unsafe.Add(yp, o), y0)
		st8(unsafe.Add(yp, o+32), y1)
	}
	for ; i+8 <= n; i += 8 {
		o := uintptr(i) * 4
		st8(unsafe.Add(yp, o), av.MulAdd(ld8(unsafe.Add(xp, o)), ld8(unsafe.Add(yp, o))))
	}
	archsimd.ClearAVXUpperBits()
	for ; i < n; i++ {
		y[i] += alpha * x[i]
	}
}
