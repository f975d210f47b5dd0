package nn

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
)

// BenchmarkEval times one forward+backward pass of the gorgonia graph at the
// shapes of the full-MNIST head, beside the three GEMMs a hand-written
// backward pass needs (forward X·W1, dW1 = Xᵀ·dA, and the small layer), so
// the graph's overhead is visible. Run under the shared lock.
func BenchmarkEval(b *testing.B) {
	for _, sp := range []Spec{
		{In: 2000, Out: 10, Batch: 128, L2: 1e-4},
		{In: 2000, Hidden: 256, Out: 10, Batch: 128, L2: 1e-4},
		{In: 2000, Hidden: 256, Out: 10, Batch: 512, L2: 1e-4},
	} {
		b.Run(fmt.Sprintf("gorgonia/h%d-b%d", sp.Hidden, sp.Batch), func(b *testing.B) {
			n, err := New(sp)
			if err != nil {
				b.Fatal(err)
			}
			defer n.Close()
			rng := rand.New(rand.NewPCG(1, 1))
			for _, s := range append(n.Params32(), n.X32()) {
				for i := range s {
					s[i] = float32(rng.NormFloat64() * 0.05)
				}
			}
			y := n.Y32()
			for i := 0; i < sp.Batch; i++ {
				y[i*sp.Out+i%sp.Out] = 1
			}
			grads := make([][]float32, 0)
			for _, p := range n.Params32() {
				grads = append(grads, make([]float32, len(p)))
			}
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				if _, err := n.Eval(grads); err != nil {
					b.Fatal(err)
				}
			}
		})
		b.Run(fmt.Sprintf("gemm-only/h%d-b%d", sp.Hidden, sp.Batch), func(b *testing.B) {
			m := sp.Hidden
			if m == 0 {
				m = sp.Out
			}
			X := blas32.General{Rows: sp.Batch, Cols: sp.In, Stride: sp.In, Data: make([]float32, sp.Batch*sp.In)}
			W := blas32.General{Rows: sp.In, Cols: m, Stride: m, Data: make([]float32, sp.In*m)}
			A := blas32.General{Rows: sp.Batch, Cols: m, Stride: m, Data: make([]float32, sp.Batch*m)}
			for i := range X.Data {
				X.Data[i] = 0.01 * float32(i%7)
			}
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				blas32.Gemm(blas.NoTrans, blas.NoTrans, 1, X, W, 0, A)
				blas32.Gemm(blas.Trans, blas.NoTrans, 1, X, A, 0, W)
			}
		})
	}
}
