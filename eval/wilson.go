package eval

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// Interval is a confidence interval [Lo, Hi] at level Level (e.g. 0.95).
type Interval struct {
	Lo    float64 `json:"lo"`
	Hi    float64 `json:"hi"`
	Level float64 `json:"level"`
}

func (iv Interval) String() string {
	return fmt.Sprintf("[%.4f, %.4f]", iv.Lo, iv.Hi)
}

// confidenceLevel returns the interval level c, 0.95 when c is 0, or an
// error when it is outside (0,1).
func confidenceLevel(c float64) (float64, error) {
	if c == 0 {
		return 0.95, nil
	}
	if !(c > 0 && c < 1) {
		return 0, fmt.Errorf("eval: confidence %v outside (0,1); use e.g. 0.95", c)
	}
	return c, nil
}

// checkClassCount reports a predictor whose class count differs from the
// data's.
func checkClassCount(model string, p Predictor, data string, k int) error {
	if n := p.NumClasses(); n != k {
		return fmt.Errorf("eval: model %s predicts %d classes but data %q has %d", model, n, data, k)
	}
	return nil
}

// zQuantile returns the two-sided standard normal quantile for confidence
// level conf, z = Φ⁻¹((1+conf)/2); 1.959964 for 0.95.
func zQuantile(conf float64) float64 {
	return distuv.UnitNormal.Quantile((1 + conf) / 2)
}

// Wilson returns the Wilson score interval for a binomial proportion with k
// successes out of n trials at confidence level conf in (0,1) (Wilson 1927,
// without continuity correction; the method='wilson' of SciPy's
// BinomTestResult.proportion_ci):
//
//	centre = (k + z²/2) / (n + z²)
//	half   = z / (n + z²) · sqrt(k(n−k)/n + z²/4),   z = Φ⁻¹((1+conf)/2)
//
// clipped to [0, 1]. With n = 0 it returns the uninformative [0, 1].
// It panics if k is outside [0, n] or conf is outside (0, 1).
func Wilson(k, n int, conf float64) Interval {
	if k < 0 || k > n {
		panic(fmt.Sprintf("eval: Wilson with %d successes out of %d trials", k, n))
	}
	if !(conf > 0 && conf < 1) {
		panic(fmt.Sprintf("eval: Wilson confidence %v outside (0,1)", conf))
	}
	if n == 0 {
		return Interval{0, 1, conf}
	}
	z := zQuantile(conf)
	nf, kf, z2 := float64(n), float64(k), z*z
	centre := (kf + z2/2) / (nf + z2)
	half := z / (nf + z2) * math.Sqrt(kf*(nf-kf)/nf+z2/4)
	lo, hi := centre-half, centre+half
	// At k = 0 and k = n the exact bounds are 0 and 1; the formula gives them
	// up to rounding.
	if k == 0 {
		lo = 0
	}
	if k == n {
		hi = 1
	}
	return Interval{max(lo, 0), min(hi, 1), conf}
}

// binomTwoSidedHalf returns the exact two-sided p-value of k successes in n
// trials under success probability 1/2: p = min(1, 2·P(X ≤ min(k, n−k))).
// Under p = 1/2 the distribution is symmetric, so this equals the
// "sum of all outcomes no more likely than the observed one" definition used
// by scipy.stats.binomtest. Terms are summed in log space (math.Lgamma), so
// the p-value stays accurate far into the tail (1e-300).
func binomTwoSidedHalf(k, n int) float64 {
	if n == 0 {
		return 1
	}
	m := min(k, n-k)
	if 2*m == n {
		return 1
	}
	ln2 := math.Ln2 * float64(n)
	lgN, _ := math.Lgamma(float64(n + 1))
	// Largest term is the last (i = m ≤ n/2); factor it out for stability.
	logTerm := func(i int) float64 {
		a, _ := math.Lgamma(float64(i + 1))
		b, _ := math.Lgamma(float64(n - i + 1))
		return lgN - a - b - ln2
	}
	top := logTerm(m)
	var s float64
	for i := m; i >= 0; i-- {
		t := math.Exp(logTerm(i) - top)
		s += t
		if t < 1e-17*s {
			break
		}
	}
	p := 2 * math.Exp(top) * s
	return min(p, 1)
}
