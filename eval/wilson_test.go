package eval

import (
	"math"
	"testing"
)

// wilsonTol: SciPy evaluates the same closed form in float64 with its own
// z = ndtri(0.975); the two differ only by rounding, a few ulps of values ≤ 1.
const wilsonTol = 1e-12

func TestWilsonMatchesSciPy(t *testing.T) {
	var ref struct {
		Wilson []struct {
			K, N   int
			Lo, Hi float64
		} `json:"wilson95"`
	}
	readJSON(t, "scipy.json", &ref) // SciPy 1.10.1 binomtest(k, n).proportion_ci(0.95, method='wilson')
	if len(ref.Wilson) < 10 {
		t.Fatalf("scipy.json has %d Wilson cases", len(ref.Wilson))
	}
	for _, c := range ref.Wilson {
		got := Wilson(c.K, c.N, 0.95)
		if math.Abs(got.Lo-c.Lo) > wilsonTol || math.Abs(got.Hi-c.Hi) > wilsonTol {
			t.Errorf("Wilson(%d, %d) = %v; SciPy [%.17g, %.17g]", c.K, c.N, got, c.Lo, c.Hi)
		}
	}
}

func TestWilsonProperties(t *testing.T) {
	// The interval always contains the point estimate, narrows with n, and
	// widens with the confidence level.
	for _, n := range []int{1, 7, 100, 5000} {
		for _, k := range []int{0, n / 3, n / 2, n} {
			iv := Wilson(k, n, 0.95)
			p := float64(k) / float64(n)
			if iv.Lo > p || iv.Hi < p || iv.Lo < 0 || iv.Hi > 1 {
				t.Errorf("Wilson(%d,%d) = %v does not contain %g within [0,1]", k, n, iv, p)
			}
			w99 := Wilson(k, n, 0.99)
			if w99.Hi-w99.Lo <= iv.Hi-iv.Lo {
				t.Errorf("Wilson(%d,%d): 99%% interval %v not wider than 95%% %v", k, n, w99, iv)
			}
		}
	}
	if a, b := Wilson(50, 100, 0.95), Wilson(500, 1000, 0.95); b.Hi-b.Lo >= a.Hi-a.Lo {
		t.Errorf("interval did not narrow with n: %v vs %v", a, b)
	}
	if iv := Wilson(0, 0, 0.95); iv.Lo != 0 || iv.Hi != 1 {
		t.Errorf("Wilson(0,0) = %v; want [0,1]", iv)
	}
}

func TestWilsonPanicsOnMisuse(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("Wilson(5, 3) did not panic")
		}
	}()
	Wilson(5, 3, 0.95)
}
