package learn

import (
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
)

// The dense kernels are variables so that the SIMD build
// (dictkernel_simd_amd64.go, GOEXPERIMENT=simd) can replace them;
// TestKernelsMatchReference checks whichever is in place.
var (
	gemmNT = gemmNTGonum
	axpy   = axpyGonum
	// kernelBuild names the kernels in use, for benchmark logs.
	kernelBuild = "portable (gonum blas32)"
)

// gemmNTGonum computes c = a·bᵀ for a (m×p), b (n×p), c (m×n), all
// row-major and contiguous. It is the one dense float32 product in the
// coders: the correlations of a batch of signals with every atom.
func gemmNTGonum(c, a, b []float32, m, n, p int) {
	if m == 0 || n == 0 {
		return
	}
	blas32.Gemm(blas.NoTrans, blas.Trans, 1,
		blas32.General{Rows: m, Cols: p, Stride: p, Data: a},
		blas32.General{Rows: n, Cols: p, Stride: p, Data: b},
		0, blas32.General{Rows: m, Cols: n, Stride: n, Data: c})
}

// axpyGonum computes y += alpha·x for equal-length slices.
func axpyGonum(alpha float32, x, y []float32) {
	blas32.Axpy(alpha, blas32.Vector{N: len(x), Inc: 1, Data: x}, blas32.Vector{N: len(y), Inc: 1, Data: y})
}

// sparseRowTimes computes dst = a·g for one code row a (len k) and the k×k
// Gram matrix g, visiting only the non-zero entries of a. Sparse codes make
// this several times cheaper than a dense row-matrix product.
func sparseRowTimes(dst, a, g []float32, k int) {
	clear(dst)
	for j, v := range a {
		if v != 0 {
			axpy(v, g[j*k:(j+1)*k], dst)
		}
	}
}
