//go:build goexperiment.simd && amd64

package learn

import "simd/archsimd"

// The SIMD build runs the int8 products with AVX2's VPMADDWD
// (Int16x16.DotProductPairs): sixteen int16 products summed in pairs into
// eight int32 lanes, exact (|w·x| ≤ 127·255, a pair below 2^16), so the
// sums equal the portable kernel's bit for bit.
func init() {
	if archsimd.X86.AVX2() {
		mulWide = mulWideAVX2
		mulPairs = mulPairsAVX2
	}
	if archsimd.X86.AVX512() {
		mulPairs = mulPairsAVX512
	}
}

// mulPairsAVX2 is mulPairs with AVX2's VPMADDWD on 16 int16 lanes, for
// machines without AVX-512: each input pair is broadcast to every lane and
// multiplied by the pair of 8 consecutive rows, the int32 lanes
// accumulating 8 outputs each. A tile of 4 inputs × 16 outputs keeps its 8
// accumulators, 2 weight vectors and a broadcast in registers (16 ymm, one
// of them Go's zero register), each weight load feeding four inputs.
// Exact, as mulPairsAVX512.
func mulPairsAVX2(acc []int32, wp []int16, xp, base, offs []int32, m, mpad int) {
	n, np := len(base), len(offs)
	wp = wp[:np*mpad*2]
	acc = acc[:n*m]
	var tmp [8]int32
	i := 0
	for ; i+4 <= n; i += 4 {
		x0, x1, x2, x3 := xp[base[i]:], xp[base[i+1]:], xp[base[i+2]:], xp[base[i+3]:]
		for j := 0; j < mpad; j += 16 {
			var a00, a01, a10, a11, a20, a21, a30, a31 archsimd.Int32x8
			for c, o := range offs {
				w := (*[32]int16)(wp[(c*mpad+j)*2:])
				w0 := archsimd.LoadInt16x16((*[16]int16)(w[0:16]))
				w1 := archsimd.LoadInt16x16((*[16]int16)(w[16:32]))
				b := archsimd.BroadcastInt32x8(x0[o]).AsInt16x16()
				a00 = a00.Add(w0.DotProductPairs(b))
				a01 = a01.Add(w1.DotProductPairs(b))
				b = archsimd.BroadcastInt32x8(x1[o]).AsInt16x16()
				a10 = a10.Add(w0.DotProductPairs(b))
				a11 = a11.Add(w1.DotProductPairs(b))
				b = archsimd.BroadcastInt32x8(x2[o]).AsInt16x16()
				a20 = a20.Add(w0.DotProductPairs(b))
				a21 = a21.Add(w1.DotProductPairs(b))
				b = archsimd.BroadcastInt32x8(x3[o]).AsInt16x16()
				a30 = a30.Add(w0.DotProductPairs(b))
				a31 = a31.Add(w1.DotProductPairs(b))
			}
			store8(acc, &tmp, a00, i, j, m)
			store8(acc, &tmp, a01, i, j+8, m)
			store8(acc, &tmp, a10, i+1, j, m)
			store8(acc, &tmp, a11, i+1, j+8, m)
			store8(acc, &tmp, a20, i+2, j, m)
			store8(acc, &tmp, a21, i+2, j+8, m)
			store8(acc, &tmp, a30, i+3, j, m)
			store8(acc, &tmp, a31, i+3, j+8, m)
		}
	}
	for ; i < n; i++ {
		x0 := xp[base[i]:]
		for j := 0; j < mpad; j += 16 {
			var a0, a1 archsimd.Int32x8
			for c, o := range offs {
				w := (*[32]int16)(wp[(c*mpad+j)*2:])
				b := archsimd.BroadcastInt32x8(x0[o]).AsInt16x16()
				a0 = a0.Add(archsimd.LoadInt16x16((*[16]int16)(w[0:16])).DotProductPairs(b))
				a1 = a1.Add(archsimd.LoadInt16x16((*[16]int16)(w[16:32])).DotProductPairs(b))
			}
			store8(acc, &tmp, a0, i, j, m)
			store8(acc, &tmp, a1, i, j+8, m)
		}
	}
	archsimd.ClearAVXUpperBits()
}

// store8 stores the 8 outputs j… of input i into the n×m acc, those below
// m only (tmp is scratch for a last partial block).
func store8(acc []int32, tmp *[8]int32, v archsimd.Int32x8, i, j, m int) {
	switch {
	case j+8 <= m:
		v.Store((*[8]int32)(acc[i*m+j : i*m+j+8]))
	case j < m:
		v.Store(tmp)
		copy(acc[i*m+j:i*m+m], tmp[:m-j])
	}
}

// mulPairsAVX512 is mulPairs with AVX-512's VPMADDWD on 32 int16 lanes:
// each input pair is broadcast to every lane and multiplied by the pair of
// 16 consecutive rows, so the int32 lanes accumulate 16 outputs at once and
// no horizontal sum is needed. A tile of 2 inputs × 32 outputs keeps its
// accumulators, weights, broadcasts and products in the 15 vector registers
// Go allocates (2 × 64 spills), each weight load feeding both inputs.
// Exact: a pair product is at most 2·255·127 and a sum over maxPackedIn
// columns stays below 2^31, as in the portable kernel.
func mulPairsAVX512(acc []int32, wp []int16, xp, base, offs []int32, m, mpad int) {
	n, np := len(base), len(offs)
	wp = wp[:np*mpad*2]
	acc = acc[:n*m]
	var tmp [16]int32
	i := 0
	for ; i+2 <= n; i += 2 {
		b0, b1 := int(base[i]), int(base[i+1])
		j := 0
		for ; j+32 <= mpad; j += 32 {
			var a00, a01, a10, a11 archsimd.Int32x16
			for c, o := range offs {
				w := (*[64]int16)(wp[(c*mpad+j)*2:])
				w0 := archsimd.LoadInt16x32((*[32]int16)(w[0:32]))
				w1 := archsimd.LoadInt16x32((*[32]int16)(w[32:64]))
				b := archsimd.BroadcastInt32x16(xp[b0+int(o)]).AsInt16x32()
				a00 = a00.Add(w0.DotProductPairs(b))
				a01 = a01.Add(w1.DotProductPairs(b))
				b = archsimd.BroadcastInt32x16(xp[b1+int(o)]).AsInt16x32()
				a10 = a10.Add(w0.DotProductPairs(b))
				a11 = a11.Add(w1.DotProductPairs(b))
			}
			storePart(acc, &tmp, a00, i, j, m)
			storePart(acc, &tmp, a01, i, j+16, m)
			storePart(acc, &tmp, a10, i+1, j, m)
			storePart(acc, &tmp, a11, i+1, j+16, m)
		}
		for ; j < mpad; j += 16 {
			var a0, a1 archsimd.Int32x16
			for c, o := range offs {
				w := archsimd.LoadInt16x32((*[32]int16)(wp[(c*mpad+j)*2:]))
				a0 = a0.Add(w.DotProductPairs(archsimd.BroadcastInt32x16(xp[b0+int(o)]).AsInt16x32()))
				a1 = a1.Add(w.DotProductPairs(archsimd.BroadcastInt32x16(xp[b1+int(o)]).AsInt16x32()))
			}
			storePart(acc, &tmp, a0, i, j, m)
			storePart(acc, &tmp, a1, i+1, j, m)
		}
	}
	for ; i < n; i++ {
		b0 := int(base[i])
		for j := 0; j < mpad; j += 16 {
			var a archsimd.Int32x16
			for c, o := range offs {
				w := archsimd.LoadInt16x32((*[32]int16)(wp[(c*mpad+j)*2:]))
				a = a.Add(w.DotProductPairs(archsimd.BroadcastInt32x16(xp[b0+int(o)]).AsInt16x32()))
			}
			storePart(acc, &tmp, a, i, j, m)
		}
	}
	archsimd.ClearAVXUpperBits()
}

// storePart stores the 16 outputs j… of input i into the n×m acc, those
// below m only (tmp is scratch for a last partial block).
func storePart(acc []int32, tmp *[16]int32, v archsimd.Int32x16, i, j, m int) {
	switch {
	case j+16 <= m:
		v.Store((*[16]int32)(acc[i*m+j : i*m+j+16]))
	case j < m:
		v.Store(tmp)
		copy(acc[i*m+j:i*m+m], tmp[:m-j])
	}
}

// hsum8 returns the sum of the eight lanes of v.
func hsum8(v archsimd.Int32x8) int32 {
	var t [8]int32
	v.Store(&t)
	return t[0] + t[1] + t[2] + t[3] + t[4] + t[5] + t[6] + t[7]
}

// mulWideAVX2 is mulWide: four rows at a time share each load of x; the
// int8 weights are sign-extended to int16 as they are loaded (VPMOVSXBW),
// so the kernel reads half the bytes of int16 rows.
func mulWideAVX2(acc []int32, w []int8, x []int16, m, dpad int) {
	x = x[:dpad]
	w = w[:m*dpad]
	acc = acc[:m]
	j := 0
	for ; j+4 <= m; j += 4 {
		r0, r1, r2, r3 := w[j*dpad:(j+1)*dpad], w[(j+1)*dpad:(j+2)*dpad], w[(j+2)*dpad:(j+3)*dpad], w[(j+3)*dpad:(j+4)*dpad]
		var a0, a1, a2, a3 archsimd.Int32x8
		for c := 0; c+16 <= dpad; c += 16 {
			xv := archsimd.LoadInt16x16((*[16]int16)(x[c : c+16]))
			a0 = a0.Add(archsimd.LoadInt8x16((*[16]int8)(r0[c : c+16])).ExtendToInt16().DotProductPairs(xv))
			a1 = a1.Add(archsimd.LoadInt8x16((*[16]int8)(r1[c : c+16])).ExtendToInt16().DotProductPairs(xv))
			a2 = a2.Add(archsimd.LoadInt8x16((*[16]int8)(r2[c : c+16])).ExtendToInt16().DotProductPairs(xv))
			a3 = a3.Add(archsimd.LoadInt8x16((*[16]int8)(r3[c : c+16])).ExtendToInt16().DotProductPairs(xv))
		}
		acc[j], acc[j+1], acc[j+2], acc[j+3] = hsum8(a0), hsum8(a1), hsum8(a2), hsum8(a3)
	}
	for ; j < m; j++ {
		r := w[j*dpad : (j+1)*dpad]
		var a archsimd.Int32x8
		for c := 0; c+16 <= dpad; c += 16 {
			a = a.Add(archsimd.LoadInt8x16((*[16]int8)(r[c : c+16])).ExtendToInt16().DotProductPairs(archsimd.LoadInt16x16((*[16]int16)(x[c : c+16]))))
		}
		acc[j] = hsum8(a)
	}
	archsimd.ClearAVXUpperBits()
}
