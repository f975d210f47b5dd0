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
