package learn

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestKernelsMatchReference checks the dense kernels in use (gonum's, or
// the SIMD ones under GOEXPERIMENT=simd) against a float64 triple loop on
// shapes that exercise every edge case of the 6×16, 4×16 and 1×16 tiles and
// of the row blocks (60 rows at p = 1,085; 354 at p = 128).
func TestKernelsMatchReference(t *testing.T) {
	t.Logf("kernels: %s", kernelBuild)
	r := rand.New(rand.NewPCG(1, 2))
	for _, k := range []struct {
		name   string
		f      func(c, a, b []float32, m, n, p int)
		bt     bool // b is p×n (c = a·b), else n×p (c = a·bᵀ)
		shapes [][3]int
	}{
		{"gemmNT", gemmNT, false, [][3]int{{1, 1, 1}, {4, 16, 8}, {5, 17, 3}, {7, 33, 64}, {256, 256, 256}, {3, 9, 1}, {13, 15, 20}, {131, 29, 1085}, {6, 16, 5}, {11, 40, 7}}},
		{"gemmNN", gemmNN, true, [][3]int{{1, 1, 1}, {4, 16, 8}, {5, 17, 3}, {7, 33, 64}, {256, 256, 256}, {3, 9, 1}, {13, 15, 20}, {131, 29, 1085}, {359, 61, 128}, {11, 40, 7}}},
	} {
		for _, sh := range k.shapes {
			m, n, p := sh[0], sh[1], sh[2]
			a := make([]float32, m*p)
			b := make([]float32, n*p)
			for i := range a {
				a[i] = float32(r.NormFloat64())
			}
			for i := range b {
				b[i] = float32(r.NormFloat64())
			}
			bAt := func(j, q int) float32 { return b[j*p+q] }
			if k.bt {
				bAt = func(j, q int) float32 { return b[q*n+j] }
			}
			c := make([]float32, m*n)
			for i := range c {
				c[i] = 99 // must be overwritten
			}
			k.f(c, a, b, m, n, p)
			var worst float64
			for i := 0; i < m; i++ {
				for j := 0; j < n; j++ {
					var s float64
					for q := 0; q < p; q++ {
						s += float64(a[i*p+q]) * float64(bAt(j, q))
					}
					// float32 accumulation error grows like sqrt(p)·ε·|terms|
					worst = math.Max(worst, math.Abs(float64(c[i*n+j])-s)/math.Sqrt(float64(p)))
				}
			}
			const gemmTol = 1e-5 // per sqrt(p), for N(0,1) entries: ~10 float32 ulps
			if worst > gemmTol {
				t.Errorf("%s %v: error %.3g (per √p) > %g", k.name, sh, worst, gemmTol)
			}
		}
	}
	for _, sh := range [][3]int{{1, 1, 1}, {4, 16, 8}, {5, 17, 3}, {7, 33, 64}, {16, 256, 256}, {14, 48, 30}, {3, 9, 1}, {13, 100, 20}} {
		m, n, p := sh[0], sh[1], sh[2]
		a := make([]float32, m*p)
		b := make([]float32, p*n)
		c := make([]float32, m*n)
		for i := range a {
			a[i] = float32(r.NormFloat64())
		}
		for i := range b {
			b[i] = float32(r.NormFloat64())
		}
		for i := range c {
			c[i] = float32(r.NormFloat64())
		}
		c0 := append([]float32(nil), c...)
		gemmNNSub(c, a, b, m, n, p)
		var worst float64
		for i := 0; i < m; i++ {
			for j := 0; j < n; j++ {
				s := float64(c0[i*n+j])
				for q := 0; q < p; q++ {
					s -= float64(a[i*p+q]) * float64(b[q*n+j])
				}
				worst = math.Max(worst, math.Abs(float64(c[i*n+j])-s)/math.Sqrt(float64(p)))
			}
		}
		const gemmTol = 1e-5 // as for gemmNT
		if worst > gemmTol {
			t.Errorf("gemmNNSub %v: error %.3g (per √p) > %g", sh, worst, gemmTol)
		}
	}
	for _, sh := range [][2]int{{1, 1}, {5, 3}, {33, 64}, {70, 17}, {256, 256}} {
		k, dim := sh[0], sh[1]
		w := make([]float32, k*dim)
		for i := range w {
			w[i] = float32(r.NormFloat64())
		}
		g := make([]float32, k*k)
		gramInto(g, w, k, dim)
		// Higham (2002, Accuracy and Stability of Numerical Algorithms,
		// §3.1): a float32 dot product of length n is off by at most
		// γ_n·Σ|x_q·y_q|, γ_n = nu/(1−nu), u = 2⁻²⁴ (FMA only tightens it).
		u := math.Ldexp(1, -24)
		gamma := float64(dim) * u / (1 - float64(dim)*u)
		var worst float64
		for i := 0; i < k; i++ {
			for j := 0; j < k; j++ {
				var s, sa float64
				for q := 0; q < dim; q++ {
					v := float64(w[i*dim+q]) * float64(w[j*dim+q])
					s += v
					sa += math.Abs(v)
				}
				worst = math.Max(worst, math.Abs(float64(g[i*k+j])-s)/(gamma*sa))
			}
		}
		if worst > 1 {
			t.Errorf("gramInto %v: error %.3g × the γ_n bound", sh, worst)
		}
	}
	for _, n := range []int{0, 1, 7, 8, 15, 16, 17, 33, 256} {
		x := make([]float32, n)
		y := make([]float32, n)
		want := make([]float64, n)
		for i := range x {
			x[i], y[i] = float32(r.NormFloat64()), float32(r.NormFloat64())
			want[i] = float64(y[i]) + float64(float32(0.7))*float64(x[i])
		}
		axpy(0.7, x, y)
		for i := range y {
			if math.Abs(float64(y[i])-want[i]) > 1e-6 {
				t.Errorf("axpy n=%d: y[%d] = %v, want %v", n, i, y[i], want[i])
			}
		}
	}
}

// BenchmarkGemmNT times the correlation product of 256 signals of 256
// pixels with 256 atoms (the shape of one minibatch of the bench protocol).
func BenchmarkGemmNT(b *testing.B) {
	const m, n, p = 256, 256, 256
	a := make([]float32, m*p)
	w := make([]float32, n*p)
	c := make([]float32, m*n)
	for i := range a {
		a[i] = float32(i%13) - 6
	}
	for i := range w {
		w[i] = float32(i%7) - 3
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		gemmNT(c, a, w, m, n, p)
	}
	b.ReportMetric(2*m*n*p*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
}

// TestKernelTilingInvariant: a row of a product does not depend on which
// tile kernel computes it or on the row blocks, and gemmNN gives gemmNT's
// bits on the transposed operand, since every element is one chain of
// multiply-adds in the order of the inner index. The head relies on this:
// its weight gradients use gemmNN where they used gemmNT of transposed
// copies, and the chunking of a minibatch must not move a bit.
func TestKernelTilingInvariant(t *testing.T) {
	if !strings.HasPrefix(kernelBuild, "simd") {
		t.Skipf("kernels: %s; gonum's blas32 sums NN and NT products in different orders", kernelBuild)
	}
	r := rand.New(rand.NewPCG(7, 8))
	for _, sh := range [][3]int{{131, 45, 1085}, {23, 19, 128}, {6, 16, 3}, {128, 40, 128}, {9, 17, 30}, {8, 16, 5}} {
		m, n, p := sh[0], sh[1], sh[2]
		a, b, bt := make([]float32, m*p), make([]float32, n*p), make([]float32, p*n)
		for i := range a {
			a[i] = float32(r.NormFloat64())
		}
		for i := range b {
			b[i] = float32(r.NormFloat64())
		}
		for j := 0; j < n; j++ {
			for q := 0; q < p; q++ {
				bt[q*n+j] = b[j*p+q]
			}
		}
		whole, nn, row := make([]float32, m*n), make([]float32, m*n), make([]float32, n)
		gemmNT(whole, a, b, m, n, p)
		gemmNN(nn, a, bt, m, n, p)
		for i := 0; i < m; i++ {
			gemmNT(row, a[i*p:(i+1)*p], b, 1, n, p)
			for j := 0; j < n; j++ {
				if math.Float32bits(whole[i*n+j]) != math.Float32bits(row[j]) {
					t.Fatalf("%v: c[%d][%d] = %v in the whole product, %v computed alone", sh, i, j, whole[i*n+j], row[j])
				}
				if math.Float32bits(whole[i*n+j]) != math.Float32bits(nn[i*n+j]) {
					t.Fatalf("%v: c[%d][%d] = %v by gemmNT, %v by gemmNN", sh, i, j, whole[i*n+j], nn[i*n+j])
				}
			}
		}
	}
}
