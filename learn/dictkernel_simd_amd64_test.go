//go:build goexperiment.simd && amd64

package learn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestPackNTExact: packNT's panel is its definition, panel[q·16+c] =
// b[c·p+q] and zero past the rows of b, bit for bit (a copy: the register
// transposes of full panels and the value-by-value tail must agree), on
// lengths around the transposes' blocks of 8.
func TestPackNTExact(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	for _, p := range []int{1, 7, 8, 9, 16, 63, 1077} {
		for _, rows := range []int{1, 5, 15, 16} {
			b := make([]float32, rows*p)
			for i := range b {
				b[i] = float32(r.NormFloat64())
			}
			panel := make([]float32, 16*p)
			for i := range panel {
				panel[i] = float32(math.NaN())
			}
			packNT(panel, b, p)
			for q := 0; q < p; q++ {
				for c := 0; c < 16; c++ {
					var want float32
					if c < rows {
						want = b[c*p+q]
					}
					if got := panel[q*16+c]; math.Float32bits(got) != math.Float32bits(want) {
						t.Fatalf("p %d, %d rows: panel[%d·16+%d] = %v, want %v", p, rows, q, c, got, want)
					}
				}
			}
		}
	}
}

// TestGemmNNPackedMatchesGemmNN: b packed by packNNSIMD in row ranges (as
// the head's chunks pack their rows) gives gemmNNPackedSIMD gemmNNSIMD's
// product bit for bit, strips past a multiple of 16 included.
func TestGemmNNPackedMatchesGemmNN(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	for _, sh := range [][3]int{{128, 1077, 128}, {20, 40, 100}, {7, 16, 3}, {13, 5, 33}} {
		m, n, p := sh[0], sh[1], sh[2]
		a, b := make([]float32, m*p), make([]float32, p*n)
		for i := range a {
			a[i] = float32(r.NormFloat64())
		}
		for i := range b {
			b[i] = float32(r.NormFloat64())
		}
		pk := make([]float32, (n+15)/16*16*p)
		for q0 := 0; q0 < p; q0 += 32 {
			packNNSIMD(pk, b, p, n, q0, min(p, q0+32))
		}
		want, got := make([]float32, m*n), make([]float32, m*n)
		gemmNNSIMD(want, a, b, m, n, p)
		gemmNNPackedSIMD(got, a, pk, m, n, p)
		for i := range want {
			if math.Float32bits(got[i]) != math.Float32bits(want[i]) {
				t.Fatalf("%v: c[%d] = %v packed, %v by gemmNNSIMD", sh, i, got[i], want[i])
			}
		}
	}
}

// TestGemmNTPackedMatchesGemmNT: b packed once by packNTSIMD gives
// gemmNTPackedSIMD gemmNTSIMD's product bit for bit, panels past a
// multiple of 16 rows included.
func TestGemmNTPackedMatchesGemmNT(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 10))
	for _, sh := range [][3]int{{64, 32, 1077}, {20, 40, 100}, {7, 16, 3}, {13, 5, 33}} {
		m, n, p := sh[0], sh[1], sh[2]
		a, b := make([]float32, m*p), make([]float32, n*p)
		for i := range a {
			a[i] = float32(r.NormFloat64())
		}
		for i := range b {
			b[i] = float32(r.NormFloat64())
		}
		pk := make([]float32, (n+15)/16*16*p)
		packNTSIMD(pk, b, n, p)
		want, got := make([]float32, m*n), make([]float32, m*n)
		gemmNTSIMD(want, a, b, m, n, p)
		gemmNTPackedSIMD(got, a, pk, m, n, p)
		for i := range want {
			if math.Float32bits(got[i]) != math.Float32bits(want[i]) {
				t.Fatalf("%v: c[%d] = %v packed, %v by gemmNTSIMD", sh, i, got[i], want[i])
			}
		}
	}
}
