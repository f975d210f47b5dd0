package learn

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
)

// Head is a fitted supervised classifier over feature vectors: a softmax
// (multinomial logistic) regression or a one-hidden-layer ReLU network, applied
// to standardised features z = (x − mean) / std. It is immutable and safe for
// concurrent use; inference runs in plain Go on float32 slices (no gorgonia).
//
// Internally the standardisation is folded into the first affine layer
// (W' = diag(1/std)·W, b' = b − (mean/std)·W), so a prediction costs one
// matrix–vector product per layer.
type Head struct {
	kind      string // "softmax" or "mlp"
	d, h, k   int    // inputs, hidden units (0 for softmax), classes
	mean, std []float32
	w1, b1    []float32 // m×d (m = h, or k for softmax), m; weights out×in
	w2, b2    []float32 // k×h, k (mlp only)
	fw, fb    []float32 // folded first layer
}

// newHead builds a head from its parameters, taking ownership of the slices.
func newHead(kind string, d, h, k int, mean, std, w1, b1, w2, b2 []float32) *Head {
	m := k
	if kind == KindMLP {
		m = h
	}
	hd := &Head{kind: kind, d: d, h: h, k: k, mean: mean, std: std, w1: w1, b1: b1, w2: w2, b2: b2}
	hd.fw = make([]float32, m*d)
	hd.fb = make([]float32, m)
	for j := 0; j < m; j++ {
		acc := float64(b1[j])
		row, frow := w1[j*d:(j+1)*d], hd.fw[j*d:(j+1)*d]
		for i, w := range row {
			fw := float64(w) / float64(std[i])
			frow[i] = float32(fw)
			acc -= float64(mean[i]) * fw
		}
		hd.fb[j] = float32(acc)
	}
	return hd
}

// Kind returns "softmax" or "mlp".
func (hd *Head) Kind() string { return hd.kind }

// In returns the feature length the head expects.
func (hd *Head) In() int { return hd.d }

// Hidden returns the number of hidden units (0 for softmax).
func (hd *Head) Hidden() int { return hd.h }

// NumClasses returns the number of classes.
func (hd *Head) NumClasses() int { return hd.k }

// ScratchLen returns the scratch length PredictBatch needs for n rows
// (Predict needs ScratchLen(1)).
func (hd *Head) ScratchLen(n int) int { return n * hd.h }

// Predict writes the class probabilities of one feature vector x (length In())
// into dst (length NumClasses(); a shorter dst is replaced by a new slice) and
// returns it. scratch may be nil or of length ≥ ScratchLen(1); with both dst
// and scratch supplied Predict allocates nothing. It panics if len(x) != In().
func (hd *Head) Predict(dst, x, scratch []float32) []float32 {
	if len(x) != hd.d {
		panic(fmt.Sprintf("learn: Head.Predict: feature length %d, head expects %d", len(x), hd.d))
	}
	return hd.PredictBatch(dst, x, scratch)
}

// PredictBatch is Predict for n = len(X)/In() row-major feature vectors: it
// writes n×NumClasses() probabilities into dst (grown if too short) and returns
// dst[:n*NumClasses()]. scratch may be nil or of length ≥ ScratchLen(n). It
// panics if len(X) is not a multiple of In().
func (hd *Head) PredictBatch(dst, X, scratch []float32) []float32 {
	if len(X)%hd.d != 0 {
		panic(fmt.Sprintf("learn: Head.PredictBatch: len(X) = %d is not a multiple of the feature length %d", len(X), hd.d))
	}
	n := len(X) / hd.d
	if cap(dst) < n*hd.k {
		dst = make([]float32, n*hd.k)
	}
	dst = dst[:n*hd.k]
	if n == 0 {
		return dst
	}
	if hd.kind == KindSoftmax {
		headAffine(dst, X, n, hd.d, hd.k, hd.fw, hd.fb)
	} else {
		if len(scratch) < n*hd.h {
			scratch = make([]float32, n*hd.h)
		}
		a := scratch[:n*hd.h]
		headAffine(a, X, n, hd.d, hd.h, hd.fw, hd.fb)
		for i, v := range a {
			if v < 0 {
				a[i] = 0
			}
		}
		headAffine(dst, a, n, hd.h, hd.k, hd.w2, hd.b2)
	}
	for i := 0; i < n; i++ {
		headSoftmax(dst[i*hd.k : (i+1)*hd.k])
	}
	return dst
}

// headAffine sets out (n×m) = X (n×d) · Wᵀ + 1·bᵀ with W m×d.
func headAffine(out, X []float32, n, d, m int, W, b []float32) {
	for i := 0; i < n; i++ {
		copy(out[i*m:(i+1)*m], b)
	}
	if n == 1 {
		blas32.Gemv(blas.NoTrans, 1,
			blas32.General{Rows: m, Cols: d, Stride: d, Data: W},
			blas32.Vector{N: d, Inc: 1, Data: X},
			1, blas32.Vector{N: m, Inc: 1, Data: out})
		return
	}
	blas32.Gemm(blas.NoTrans, blas.Trans, 1,
		blas32.General{Rows: n, Cols: d, Stride: d, Data: X},
		blas32.General{Rows: m, Cols: d, Stride: d, Data: W},
		1, blas32.General{Rows: n, Cols: m, Stride: m, Data: out})
}

// headSoftmax replaces logits z by exp(z − max z) / Σ exp(z − max z).
func headSoftmax(z []float32) {
	mx := z[0]
	for _, v := range z[1:] {
		if v > mx {
			mx = v
		}
	}
	var s float64
	for i, v := range z {
		e := math.Exp(float64(v - mx))
		z[i] = float32(e)
		s += e
	}
	inv := 1 / s
	for i := range z {
		z[i] = float32(float64(z[i]) * inv)
	}
}
