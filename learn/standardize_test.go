package learn

import (
	"math"
	"testing"
)

// TestStandardize checks the defining properties of z = (x − mean)/std with
// the population standard deviation (scikit-learn's StandardScaler uses the
// same, ddof = 0): over the chosen rows every non-constant column of z has
// mean 0 and variance 1, a constant column keeps std 1, and rows outside
// the selection are ignored. stdTol: float32 storage of mean/std and float64
// sums over 5 rows, 1e-6 relative.
func TestStandardize(t *testing.T) {
	const stdTol = 1e-6
	X := []float32{
		1, 7, 100,
		2, 7, -50,
		3, 7, 25,
		4, 7, 0,
		1e6, 1e6, 1e6, // not selected
		6, 7, 12.5,
	}
	rows := []int{0, 1, 2, 3, 5}
	mean, std := standardize(X, 3, rows)
	if std[1] != 1 || mean[1] != 7 {
		t.Errorf("constant column: mean %g std %g, want 7 and 1", mean[1], std[1])
	}
	for _, j := range []int{0, 2} {
		var m, v float64
		for _, r := range rows {
			m += float64((X[r*3+j] - mean[j]) / std[j])
		}
		m /= float64(len(rows))
		for _, r := range rows {
			z := float64((X[r*3+j] - mean[j]) / std[j])
			v += (z - m) * (z - m)
		}
		v /= float64(len(rows))
		if math.Abs(m) > stdTol || math.Abs(v-1) > stdTol {
			t.Errorf("column %d: standardised mean %g variance %g", j, m, v)
		}
	}
	// Column 0 by hand: values 1,2,3,4,6 → mean 3.2, population variance 2.96.
	if math.Abs(float64(mean[0])-3.2) > 1e-6 || math.Abs(float64(std[0])-math.Sqrt(2.96)) > 1e-6 {
		t.Errorf("column 0: mean %g std %g, want 3.2 and %g", mean[0], std[0], math.Sqrt(2.96))
	}
}
