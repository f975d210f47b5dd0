package learn

import (
	"github.com/striate/striate/learn/internal/nn"
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
)

// The dense kernels are variables so that the SIMD build
// (dictkernel_simd_amd64.go, GOEXPERIMENT=simd) can replace them;
// TestKernelsMatchReference checks whichever is in place.
var (
	gemmNT    = gemmNTGonum
	gemmNN    = nn.GemmNNGonum // c = a·b: the head's weight gradients
	gemmNNSub = gemmNNSubGonum
	axpy      = axpyGonum
	// packNN and gemmNNPacked split gemmNN into packing b and the product
	// (nn.Kernels.PackNN, NNPacked), packNTb and gemmNTPacked gemmNT
	// (PackNT, NTPacked); nil without the SIMD kernels.
	packNN       func(pk, b []float32, p, n, q0, q1 int)
	gemmNNPacked func(c, a, pk []float32, m, n, p int)
	packNTb      func(pk, b []float32, n, p int)
	gemmNTPacked func(c, a, pk []float32, m, n, p int)
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

// gemmNNSubGonum computes c −= a·b for a (m×p), b (p×n), c (m×n), all
// row-major and contiguous: the dictionary update's B − A·D for a block of
// atoms.
func gemmNNSubGonum(c, a, b []float32, m, n, p int) {
	if m == 0 || n == 0 || p == 0 {
		return
	}
	blas32.Gemm(blas.NoTrans, blas.NoTrans, -1,
		blas32.General{Rows: m, Cols: p, Stride: p, Data: a},
		blas32.General{Rows: p, Cols: n, Stride: n, Data: b},
		1, blas32.General{Rows: m, Cols: n, Stride: n, Data: c})
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

// gramRows is the row-block height of gramInto.
const gramRows = 32

// gramInto computes the Gram matrix g = w·wᵀ (k×k) of the k rows of w
// (each of length dim). Only the blocks on and above the diagonal are
// multiplied, gramRows rows at a time, and the rest is mirrored, which
// roughly halves the work of one full product.
func gramInto(g, w []float32, k, dim int) {
	tmp := make([]float32, gramRows*k)
	for i0 := 0; i0 < k; i0 += gramRows {
		m := min(gramRows, k-i0)
		n := k - i0
		t := tmp[:m*n]
		gemmNT(t, w[i0*dim:(i0+m)*dim], w[i0*dim:k*dim], m, n, dim)
		for r := 0; r < m; r++ {
			i := i0 + r
			copy(g[i*k+i0:(i+1)*k], t[r*n:(r+1)*n])
		}
	}
	for i := 0; i < k; i++ {
		for j := 0; j < i; j++ {
			if j/gramRows < i/gramRows {
				g[i*k+j] = g[j*k+i]
			}
		}
	}
}
