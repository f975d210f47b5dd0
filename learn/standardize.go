package learn

import "math"

// standardize returns the per-feature mean and standard deviation of the rows
// rows of X (row-major, d columns), accumulated in float64 with two passes.
// The standard deviation is the population one (divide by n), as in
// scikit-learn's StandardScaler. A feature whose deviation is zero, or below
// 1e-6 of its mean's magnitude (a constant up to rounding), gets std 1 so it
// standardises to ≈0 instead of blowing up.
func standardize(X []float32, d int, rows []int) (mean, std []float32) {
	m := make([]float64, d)
	for _, r := range rows {
		for j, v := range X[r*d : (r+1)*d] {
			m[j] += float64(v)
		}
	}
	n := float64(len(rows))
	for j := range m {
		m[j] /= n
	}
	v := make([]float64, d)
	for _, r := range rows {
		for j, x := range X[r*d : (r+1)*d] {
			e := float64(x) - m[j]
			v[j] += e * e
		}
	}
	mean, std = make([]float32, d), make([]float32, d)
	for j := range m {
		s := math.Sqrt(v[j] / n)
		if s == 0 || s < 1e-6*math.Abs(m[j]) || float32(s) == 0 {
			s = 1
		}
		mean[j], std[j] = float32(m[j]), float32(s)
	}
	return mean, std
}
