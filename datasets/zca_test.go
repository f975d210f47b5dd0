package datasets

import (
	"encoding/json"
	"math"
	"os"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// covariance returns the (1/N) sample covariance of the patches.
func covariance(p *Patches) *mat.SymDense {
	d := p.Size * p.Size
	mean := make([]float64, d)
	for i, v := range p.Pix {
		mean[i%d] += float64(v) / float64(p.N)
	}
	c := mat.NewSymDense(d, nil)
	c.SymOuterK(1/float64(p.N), centredBlock(p, mean, 0, p.N).T())
	return c
}

// TestZCAMatchesSciPy compares the fitted transform with one computed by
// NumPy 1.24.2 / SciPy 1.10.1 (scipy.linalg.eigh) on the committed patch set
// testdata/datasets/whiten/zca.json (generator: gen_whiten.py).
func TestZCAMatchesSciPy(t *testing.T) {
	raw, err := os.ReadFile("../testdata/datasets/whiten/zca.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Size        int
		Eps         float64
		PatchesU8   []uint8 `json:"patches_u8"`
		Mean        []float64
		Eigenvalues []float64
		W           []float64
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	d := ref.Size * ref.Size
	p := &Patches{N: len(ref.PatchesU8) / d, Size: ref.Size, Pix: make([]float32, len(ref.PatchesU8))}
	for i, v := range ref.PatchesU8 {
		p.Pix[i] = float32(v) / 255
	}
	p.RemoveMean()
	z, err := FitZCA(p, ref.Eps)
	if err != nil {
		t.Fatal(err)
	}
	if z.Dim() != d || z.Eps() != ref.Eps {
		t.Fatalf("dim %d eps %g", z.Dim(), z.Eps())
	}
	// Tolerance: both sides compute in float64 from identical float32 inputs;
	// the remaining difference is eigen-solver rounding, ~1e-13 relative.
	// 1e-9 of the largest entry leaves ample margin and still catches any
	// formula slip (a missing ε, N−1 instead of N, a transposed U).
	w := z.Matrix()
	var wmax float64
	for _, v := range ref.W {
		wmax = math.Max(wmax, math.Abs(v))
	}
	const relTol = 1e-9
	var worst float64
	for i := range w {
		worst = math.Max(worst, math.Abs(w[i]-ref.W[i]))
		if math.Abs(w[i]-ref.W[i]) > relTol*wmax {
			t.Fatalf("W[%d,%d] = %.15g, SciPy %.15g", i/d, i%d, w[i], ref.W[i])
		}
	}
	t.Logf("max |W − W_SciPy| = %.3g (max |W| = %.3g)", worst, wmax)
	ev := z.Eigenvalues()
	for i := range ev {
		if math.Abs(ev[i]-ref.Eigenvalues[i]) > relTol*ref.Eigenvalues[d-1] {
			t.Errorf("λ[%d] = %g, SciPy %g", i, ev[i], ref.Eigenvalues[i])
		}
	}
	mu := z.Mean()
	for i := range mu {
		if math.Abs(mu[i]-ref.Mean[i]) > 1e-12 {
			t.Errorf("μ[%d] = %g, NumPy %g", i, mu[i], ref.Mean[i])
		}
	}
}

// TestZCAWhitenedCovariance: on natural patches the whitened sample
// covariance is U diag(λ/(λ+ε)) Uᵀ, and with ε far below the smallest
// eigenvalue it is the identity.
func TestZCAWhitenedCovariance(t *testing.T) {
	ph, err := Photos()
	if err != nil {
		t.Fatal(err)
	}
	p, err := SamplePatches(ph, PatchConfig{Size: 8, Count: 20000, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	// ε = 1e-9 is ≥ 10⁴× below the smallest eigenvalue of 8×8 patches
	// (asserted below; measured λmin ≈ 3.6e-4), so λ/(λ+ε) is 1 within 1e-4.
	const eps = 1e-9
	z, err := FitZCA(p, eps)
	if err != nil {
		t.Fatal(err)
	}
	lmin := z.Eigenvalues()[0]
	if lmin < 1e4*eps {
		t.Fatalf("smallest eigenvalue %g too close to ε", lmin)
	}
	z.Apply(p)
	c := covariance(p)
	// Tolerance: the ε bias ε/(λmin+ε) < 1e-4 plus float32 storage of the
	// whitened values (relative 6e-8 on unit-variance data; measured total
	// 1.1e-6): 1e-4.
	const identityTol = 1e-4
	var worst float64
	for i := 0; i < 64; i++ {
		for j := 0; j < 64; j++ {
			want := 0.0
			if i == j {
				want = 1
			}
			worst = math.Max(worst, math.Abs(c.At(i, j)-want))
		}
	}
	t.Logf("max |cov(whitened) − I| = %.3g, λmin = %.3g", worst, lmin)
	if worst > identityTol {
		t.Errorf("whitened covariance differs from I by %g (> %g)", worst, identityTol)
	}
	// A large ε: covariance equals U diag(λ/(λ+ε)) Uᵀ exactly (up to float32).
	q, _ := SamplePatches(ph, PatchConfig{Size: 4, Count: 5000, Seed: 8})
	q.RemoveMean() // one zero eigenvalue along the all-ones direction
	z2, err := FitZCA(q, 1e-3)
	if err != nil {
		t.Fatal(err)
	}
	var u mat.Dense
	var es mat.EigenSym
	es.Factorize(covariance(q), true)
	es.VectorsTo(&u)
	lam := es.Values(nil)
	z2.Apply(q)
	got := covariance(q)
	for i := 0; i < 16; i++ {
		for j := 0; j < 16; j++ {
			var want float64
			for k := range lam {
				l := math.Max(lam[k], 0)
				want += u.At(i, k) * u.At(j, k) * l / (l + 1e-3)
			}
			// float32 storage of values of order 1: 1e-5 absolute.
			if math.Abs(got.At(i, j)-want) > 1e-5 {
				t.Fatalf("cov[%d,%d] = %g, want %g", i, j, got.At(i, j), want)
			}
		}
	}
}

func TestZCAErrors(t *testing.T) {
	p := &Patches{N: 3, Size: 1, Pix: []float32{1, 2, 3}}
	for _, eps := range []float64{0, -1, math.NaN(), math.Inf(1)} {
		if _, err := FitZCA(p, eps); err == nil || !strings.Contains(err.Error(), "epsilon") {
			t.Errorf("eps %v: %v", eps, err)
		}
	}
	if _, err := FitZCA(&Patches{N: 1, Size: 1, Pix: []float32{1}}, 1); err == nil {
		t.Error("one patch accepted")
	}
	if _, err := FitZCA(&Patches{N: 2, Size: 1, Pix: []float32{1, float32(math.NaN())}}, 1); err == nil || !strings.Contains(err.Error(), "finite") {
		t.Errorf("NaN accepted: %v", err)
	}
	z, _ := FitZCA(p, 1)
	defer func() {
		if recover() == nil {
			t.Error("size mismatch did not panic")
		}
	}()
	z.Apply(&Patches{N: 1, Size: 2, Pix: make([]float32, 4)})
}
