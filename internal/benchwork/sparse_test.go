package benchwork

import (
	"math"
	"testing"
)

// TestSparseWhitened checks the regenerated protocol against the ZCA
// formula of the shared reference work's README §2, W = U·diag(1/√(λ+ε))·Uᵀ:
// whitened training patches have covariance U·diag(λ/(λ+ε))·Uᵀ, so their
// mean squared norm is Σ λ_i/(λ_i+ε) and every pixel's mean is 0; and the
// split is 90% / 10% as the README has it.
func TestSparseWhitened(t *testing.T) {
	const n = 2000
	ss, err := Sparse(n)
	if err != nil {
		t.Fatal(err)
	}
	d := ss.Dim
	ntr, nh := len(ss.Train)/d, len(ss.Held)/d
	if d != 256 || ntr != 1800 || nh != 200 {
		t.Fatalf("dim %d, %d train, %d held; want 256, 1800, 200", d, ntr, nh)
	}
	var want float64
	for _, l := range ss.Eigen {
		want += l / (l + SparseZCAEps)
	}
	var got float64
	mean := make([]float64, d)
	for i, v := range ss.Train {
		got += float64(v) * float64(v)
		mean[i%d] += float64(v)
	}
	got /= float64(ntr)
	// sparseTol: float32 storage of the whitened values (relative 6e-8 per
	// value) summed over 460,800 squares; 1e-4 relative is far above that
	// and far below the change any wrong whitening makes (ε alone moves
	// the sum by several percent).
	const sparseTol = 1e-4
	if math.Abs(got-want) > sparseTol*want {
		t.Errorf("mean squared norm of whitened training patches %.6f; the ZCA formula gives Σλ/(λ+ε) = %.6f", got, want)
	}
	for j, m := range mean {
		if math.Abs(m/float64(ntr)) > 1e-5 {
			t.Fatalf("pixel %d of the whitened training patches has mean %.3g; want 0 (the training mean is removed)", j, m/float64(ntr))
		}
	}
	// Deterministic in SparseSeed: a second call gives the same values.
	again, err := Sparse(n)
	if err != nil {
		t.Fatal(err)
	}
	for i := range ss.Held {
		if ss.Held[i] != again.Held[i] {
			t.Fatalf("held-out value %d differs between two calls: %g, %g", i, ss.Held[i], again.Held[i])
		}
	}
}
