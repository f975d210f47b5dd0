package nn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// l2SumTol bounds the relative error of Σ w² over at most a few thousand
// exact float64 squares summed in a different order: a few float64 ulps.
const l2SumTol = 1e-13

// TestL2LoopsMatchScalar checks l2Add and l2Sq (8 lanes in the SIMD build)
// against the scalar loop: the same gradient bits, dst[j] + λ·w[j] rounded
// once per operation as IEEE 754 float32 prescribes, and Σ w² equal to
// math.FMA-free float64 summation within l2SumTol.
func TestL2LoopsMatchScalar(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	for _, n := range []int{1, 7, 8, 9, 17, 4099} {
		w, d := make([]float32, n), make([]float32, n)
		for i := range w {
			w[i], d[i] = float32(r.NormFloat64()), float32(r.NormFloat64())
		}
		d2 := append([]float32(nil), d...)
		const lam = 1e-4
		l2Add(d, w, lam)
		got := l2Sq(w)
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

// TestReLULoopsMatchScalar checks biasReLU and maskReLU (8 lanes in the
// SIMD build) against the definition max(0, x) and its derivative
// (1 for x > 0, else 0), bit for bit on values without exact zeros, and
// that a NaN activation stays NaN (so a diverged fit is reported, not
// hidden).
func TestReLULoopsMatchScalar(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 8, 13, 100} {
		row, src := make([]float32, n), make([]float32, n)
		for i := range row {
			row[i], src[i] = float32(r.NormFloat64()), float32(r.NormFloat64())
		}
		row[n-1] = float32(math.NaN())
		const b = 0.25
		want := make([]float32, n)
		for i, v := range row {
			if x := v + b; x > 0 || x != x {
				want[i] = x
			}
		}
		biasReLU(row, b)
		dst := make([]float32, n)
		maskReLU(dst, src, row)
		for i := range row {
			if math.Float32bits(row[i]) != math.Float32bits(want[i]) && !(row[i] != row[i] && want[i] != want[i]) {
				t.Fatalf("n=%d: biasReLU[%d] = %v, want %v", n, i, row[i], want[i])
			}
			g := float32(0)
			if row[i] > 0 {
				g = src[i]
			}
			if math.Float32bits(dst[i]) != math.Float32bits(g) {
				t.Fatalf("n=%d: maskReLU[%d] = %v, want %v", n, i, dst[i], g)
			}
		}
		if got := row[n-1]; got == got {
			t.Errorf("n=%d: a NaN activation became %v", n, got)
		}
	}
}

// TestTransposeAndBiasRowsMatchDefinition checks transpose (8×8 register
// blocks in the SIMD build) against its definition dst[c·ld+r] =
// src[r·cols+c] bit for bit, with ld wider than rows and values outside
// the block left alone, and biasReLURows against biasReLU row by row bit
// for bit (zeros and their signs included: the same operations), on
// shapes around the blocks of 8.
func TestTransposeAndBiasRowsMatchDefinition(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	for _, sh := range [][2]int{{1, 1}, {8, 8}, {7, 9}, {16, 24}, {32, 10}, {10, 512}, {512, 32}, {13, 17}} {
		rows, cols := sh[0], sh[1]
		for _, ld := range []int{rows, rows + 3} {
			src := make([]float32, rows*cols)
			for i := range src {
				src[i] = float32(r.NormFloat64())
			}
			dst := make([]float32, (cols-1)*ld+rows+2)
			for i := range dst {
				dst[i] = float32(math.NaN())
			}
			transpose(dst, src, rows, cols, ld)
			for c := 0; c < cols; c++ {
				for rr := 0; rr < rows; rr++ {
					if got, want := dst[c*ld+rr], src[rr*cols+c]; math.Float32bits(got) != math.Float32bits(want) {
						t.Fatalf("%v ld %d: dst[%d·%d+%d] = %v, want %v", sh, ld, c, ld, rr, got, want)
					}
				}
				for rr := rows; rr < ld && c*ld+rr < len(dst); rr++ {
					if v := dst[c*ld+rr]; v == v {
						t.Fatalf("%v ld %d: dst[%d·%d+%d] = %v written outside the block", sh, ld, c, ld, rr, v)
					}
				}
			}
		}
		m := make([]float32, rows*cols)
		for i := range m {
			m[i] = float32(r.NormFloat64())
			if i%5 == 0 {
				m[i] = 0
			}
		}
		b := make([]float32, rows)
		for i := range b {
			b[i] = float32(r.NormFloat64())
			if i%3 == 0 {
				b[i] = float32(math.Copysign(0, -1))
			}
		}
		want := append([]float32(nil), m...)
		for h, bh := range b {
			biasReLU(want[h*cols:(h+1)*cols], bh)
		}
		biasReLURows(m, b, cols)
		for i := range m {
			if math.Float32bits(m[i]) != math.Float32bits(want[i]) {
				t.Fatalf("%v: biasReLURows element %d = %v, biasReLU %v", sh, i, m[i], want[i])
			}
		}
	}
}
