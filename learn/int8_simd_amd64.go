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
	}
}

// hsum8 returns the sum of the eight lanes of v.
func hsum8(v archsimd.Int32x8) int32 {
	var t [8]int32
	v.Store(&t)
	return t[0] + t[1] + t[2] + t[3] + t[4] + t[5] + t[6] + t[7]
}

// mulWideAVX2 is mulWide: four rows at a time share each load of x.
func mulWideAVX2(acc []int32, w, x []int16, m, dpad int) {
	x = x[:dpad]
	w = w[:m*dpad]
	acc = acc[:m]
	j := 0
	for ; j+4 <= m; j += 4 {
		r0, r1, r2, r3 := w[j*dpad:(j+1)*dpad], w[(j+1)*dpad:(j+2)*dpad], w[(j+2)*dpad:(j+3)*dpad], w[(j+3)*dpad:(j+4)*dpad]
		var a0, a1, a2, a3 archsimd.Int32x8
		for c := 0; c+16 <= dpad; c += 16 {
			xv := archsimd.LoadInt16x16((*[16]int16)(x[c : c+16]))
			a0 = a0.Add(archsimd.LoadInt16x16((*[16]int16)(r0[c : c+16])).DotProductPairs(xv))
			a1 = a1.Add(archsimd.LoadInt16x16((*[16]int16)(r1[c : c+16])).DotProductPairs(xv))
			a2 = a2.Add(archsimd.LoadInt16x16((*[16]int16)(r2[c : c+16])).DotProductPairs(xv))
			a3 = a3.Add(archsimd.LoadInt16x16((*[16]int16)(r3[c : c+16])).DotProductPairs(xv))
		}
		acc[j], acc[j+1], acc[j+2], acc[j+3] = hsum8(a0), hsum8(a1), hsum8(a2), hsum8(a3)
	}
	for ; j < m; j++ {
		r := w[j*dpad : (j+1)*dpad]
		var a archsimd.Int32x8
		for c := 0; c+16 <= dpad; c += 16 {
			a = a.Add(archsimd.LoadInt16x16((*[16]int16)(r[c : c+16])).DotProductPairs(archsimd.LoadInt16x16((*[16]int16)(x[c : c+16]))))
		}
		acc[j] = hsum8(a)
	}
	archsimd.ClearAVXUpperBits()
}
