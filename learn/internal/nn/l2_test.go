package nn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// l2SumTol bounds the relative error of Σ w² over at most a few thousand
// exact float64 squares summed in a different order: a few float64 ulps.
const l2SumTol = 1e-13

// TestL2RangeMatchesScalar checks l2Range (8 lanes in the SIMD build)
// against the scalar loop: the same gradient bits, dst[j] + λ·w[j] rounded
// once per operation as IEEE 754 float32 prescribes, and Σ w² equal to
// math.FMA-free float64 summation within l2SumTol.
func TestL2RangeMatchesScalar(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{1, 7, 8, 9, 17, 4099} {
		w, d := make([]float32, n), make([]float32, n)
		for i := range w {
			w[i], d[i] = float32(r.NormFloat64()), float32(r.NormFloat64())
		}
		d2 := append([]float32(nil), d...)
		const lam = 1e-4
		got := l2Range(d, w, lam)
		var want float64
		for j, v := range w {
			want += float64(v) * float64(v)
			if g := d2[j] + float32(lam)*v; math.Float32bits(d[j]) != math.Float32bits(g) {
				t.Fatalf("n=%d element %d: gradient %v, want %v", n, j, d[j], g)
			}
		}
		if math.Abs(got-want) > l2SumTol*want {
			t.Errorf("n=%d: Σw² = %v, float64 loop %v", n, got, want)
		}
	}
}
