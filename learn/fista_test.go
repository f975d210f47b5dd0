package learn

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// lassoRef is testdata/learn/lasso_ref.json, written by
// testdata/learn/gen_lasso.py with scikit-learn 1.2.1 (Debian python3-sklearn):
// Lasso(alpha=λ/dim, fit_intercept=False, tol=1e-14) solved in float64 and
// cross-checked against SparseCoder(transform_algorithm='lasso_cd').
type lassoRef struct {
	Library  string `json:"library"`
	Problems []struct {
		Name        string    `json:"name"`
		Atoms       int       `json:"atoms"`
		Dim         int       `json:"dim"`
		N           int       `json:"n"`
		Lambda      float64   `json:"lambda"`
		D           []float64 `json:"D"`
		X           []float64 `json:"X"`
		CodesSigned []float64 `json:"codes_signed"`
		ObjSigned   []float64 `json:"objective_signed"`
		CodesNonneg []float64 `json:"codes_nonneg"`
		ObjNonneg   []float64 `json:"objective_nonneg"`
	} `json:"problems"`
}

func loadLassoRef(t testing.TB) *lassoRef {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "learn", "lasso_ref.json"))
	if err != nil {
		t.Fatal(err)
	}
	var r lassoRef
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	return &r
}

func to32(v []float64) []float32 {
	out := make([]float32, len(v))
	for i, x := range v {
		out[i] = float32(x)
	}
	return out
}

const (
	// codeTol is the brief's agreement in codes with scikit-learn (1e-4,
	// absolute). Our float32 arithmetic leaves errors near 1e-6 at codes of
	// size ~1, far inside it.
	codeTol = 1e-4
	// objRelTol is the brief's agreement in objective, relative (1e-6). The
	// objective is evaluated in float64 from the float32 codes.
	objRelTol = 1e-6
	// kktTol bounds violations of the optimality conditions, absolute, on
	// correlations of size ~λ; float32 codes perturb them by ~1e-5.
	kktTol = 1e-4
)

// TestCodesMatchSklearn checks FISTA (with and without restart) and CD
// against scikit-learn's Lasso on the committed random and natural-patch
// problems, signed and non-negative, and checks the KKT conditions
// (Dᵀ-residual correlation equals λ·sign(a_j) on the support, at most λ
// in magnitude off it; for non-negative codes ≤ λ off the support).
func TestCodesMatchSklearn(t *testing.T) {
	ref := loadLassoRef(t)
	for _, pr := range ref.Problems {
		d, err := NewDictionary(to32(pr.D), pr.Atoms, pr.Dim)
		if err != nil {
			t.Fatal(err)
		}
		x := to32(pr.X)
		for _, nonneg := range []bool{false, true} {
			want, wantObj := pr.CodesSigned, pr.ObjSigned
			if nonneg {
				want, wantObj = pr.CodesNonneg, pr.ObjNonneg
			}
			for _, cfg := range []CoderConfig{
				{Solver: FISTA},
				{Solver: FISTA, Restart: true},
				{Solver: CD},
				{Solver: FISTA, Restart: true, Workers: 3},
			} {
				cfg.Lambda, cfg.NonNeg, cfg.Tol, cfg.MaxIter = pr.Lambda, nonneg, 1e-13, 100000
				c, err := NewCoder(d, cfg)
				if err != nil {
					t.Fatal(err)
				}
				codes, st, err := c.Encode(nil, x, false)
				if err != nil {
					t.Fatal(err)
				}
				var maxCode, maxObj, maxKKT float64
				for i := 0; i < pr.N; i++ {
					a := codes[i*pr.Atoms : (i+1)*pr.Atoms]
					for j, v := range a {
						maxCode = math.Max(maxCode, math.Abs(float64(v)-want[i*pr.Atoms+j]))
					}
					obj := d.Objective(x[i*pr.Dim:(i+1)*pr.Dim], a, pr.Lambda)
					maxObj = math.Max(maxObj, math.Abs(obj-wantObj[i])/wantObj[i])
					maxKKT = math.Max(maxKKT, kktViolation(d, x[i*pr.Dim:(i+1)*pr.Dim], a, pr.Lambda, nonneg))
				}
				t.Logf("%s nonneg=%v %s restart=%v: max|Δcode| %.2g, max rel Δobj %.2g, KKT %.2g, mean iters %.0f (%s)",
					pr.Name, nonneg, cfg.Solver, cfg.Restart, maxCode, maxObj, maxKKT,
					float64(st.Iterations)/float64(st.Signals), ref.Library)
				if maxCode > codeTol || maxObj > objRelTol || maxKKT > kktTol {
					t.Errorf("%s nonneg=%v %+v: |Δcode| %.3g (tol %g), rel Δobj %.3g (tol %g), KKT %.3g (tol %g)",
						pr.Name, nonneg, cfg, maxCode, codeTol, maxObj, objRelTol, maxKKT, kktTol)
				}
			}
		}
	}
}

// kktViolation returns the largest violation of the Lasso optimality
// conditions at code a, computed in float64.
func kktViolation(d *Dictionary, x, a []float32, lam float64, nonneg bool) float64 {
	dim, k := d.Dim(), d.Atoms()
	r := make([]float64, dim)
	for p := range r {
		r[p] = float64(x[p])
	}
	for j := 0; j < k; j++ {
		for p := 0; p < dim; p++ {
			r[p] -= float64(a[j]) * float64(d.w[j*dim+p])
		}
	}
	var worst float64
	for j := 0; j < k; j++ {
		var c float64
		for p := 0; p < dim; p++ {
			c += float64(d.w[j*dim+p]) * r[p]
		}
		var v float64
		switch {
		case a[j] > 0:
			v = math.Abs(c - lam)
		case a[j] < 0:
			v = math.Abs(c + lam)
		case nonneg:
			v = math.Max(0, c-lam)
		default:
			v = math.Max(0, math.Abs(c)-lam)
		}
		worst = math.Max(worst, v)
	}
	return worst
}

// TestFISTABound checks Beck & Teboulle (2009, Theorem 4.4): with constant
// step 1/L, F(a_k) − F(a*) ≤ 2L·||a_0 − a*||² / (k+1)² for every k, on the
// committed problems, starting from a_0 = 0 without restart. a* and F(a*) are
// scikit-learn's.
func TestFISTABound(t *testing.T) {
	ref := loadLassoRef(t)
	for _, pr := range ref.Problems {
		d, err := NewDictionary(to32(pr.D), pr.Atoms, pr.Dim)
		if err != nil {
			t.Fatal(err)
		}
		x := to32(pr.X)
		var worstRatio float64
		for _, k := range []int{1, 2, 3, 5, 8, 13, 21, 34, 55, 89, 144} {
			c, err := NewCoder(d, CoderConfig{Lambda: pr.Lambda, MaxIter: k, Tol: -1})
			if err != nil {
				t.Fatal(err)
			}
			codes, st, _ := c.Encode(nil, x, false)
			if st.MaxIter != k {
				t.Fatalf("ran %d iterations; want exactly %d with Tol < 0", st.MaxIter, k)
			}
			for i := 0; i < pr.N; i++ {
				var dist float64
				for _, v := range pr.CodesSigned[i*pr.Atoms : (i+1)*pr.Atoms] {
					dist += v * v
				}
				bound := 2 * c.Lipschitz() * dist / float64((k+1)*(k+1))
				gap := d.Objective(x[i*pr.Dim:(i+1)*pr.Dim], codes[i*pr.Atoms:(i+1)*pr.Atoms], pr.Lambda) - pr.ObjSigned[i]
				// boundSlack covers float32 rounding of the objective (~1e-6 relative).
				const boundSlack = 1e-5
				if gap > bound+boundSlack*pr.ObjSigned[i] {
					t.Errorf("%s signal %d after %d steps: gap %.4g exceeds bound %.4g", pr.Name, i, k, gap, bound)
				}
				if bound > 0 {
					worstRatio = math.Max(worstRatio, gap/bound)
				}
			}
		}
		t.Logf("%s: largest gap/bound over k ≤ 144 = %.3g (L = %.4g)", pr.Name, worstRatio, lipschitzOf(t, d))
	}
}

func lipschitzOf(t testing.TB, d *Dictionary) float64 {
	c, err := NewCoder(d, CoderConfig{})
	if err != nil {
		t.Fatal(err)
	}
	return c.Lipschitz()
}

// TestCDNoDriftOnLongRuns is the regression test for residual drift: CD
// forced through 3,000 sweeps (Tol < 0) on the committed random problem
// must still satisfy the KKT conditions and match scikit-learn.
func TestCDNoDriftOnLongRuns(t *testing.T) {
	ref := loadLassoRef(t)
	pr := ref.Problems[0]
	d, err := NewDictionary(to32(pr.D), pr.Atoms, pr.Dim)
	if err != nil {
		t.Fatal(err)
	}
	x := to32(pr.X)
	c, err := NewCoder(d, CoderConfig{Lambda: pr.Lambda, NonNeg: true, Tol: -1, MaxIter: 3000, Solver: CD})
	if err != nil {
		t.Fatal(err)
	}
	codes, _, _ := c.Encode(nil, x, false)
	for i := 0; i < pr.N; i++ {
		a := codes[i*pr.Atoms : (i+1)*pr.Atoms]
		xi := x[i*pr.Dim : (i+1)*pr.Dim]
		if v := kktViolation(d, xi, a, pr.Lambda, true); v > kktTol {
			t.Errorf("signal %d: KKT violation %.3g after 3,000 sweeps (tol %g)", i, v, kktTol)
		}
		if obj := d.Objective(xi, a, pr.Lambda); math.Abs(obj-pr.ObjNonneg[i]) > objRelTol*pr.ObjNonneg[i] {
			t.Errorf("signal %d: objective %.9g, scikit-learn %.9g", i, obj, pr.ObjNonneg[i])
		}
	}
}
