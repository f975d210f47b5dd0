package datasets

import "math"

// cannyEdges returns the Canny edge map of the h×w image x (Canny 1986) with
// Gaussian smoothing σ and hysteresis thresholds low ≤ high on the Sobel
// gradient magnitude, following scikit-image 0.19's feature.canny with
// mode='constant' and no mask step by step (described under CorruptionKind).
func cannyEdges(x []float64, h, w int, sigma, low, high float64) []bool {
	n := h * w
	out := make([]bool, n)
	if h < 3 || w < 3 {
		return out // every pixel is a border pixel
	}
	// Smoothing zero outside, renormalised by the smoothed all-ones image.
	sm, ones := make([]float64, n), make([]float64, n)
	for i := range ones {
		ones[i] = 1
	}
	blur(sm, x, h, w, sigma)
	blur(ones, ones, h, w, sigma)
	for i := range sm {
		sm[i] /= ones[i] + 0x1p-52 // numpy's float64 eps, as scikit-image adds
	}
	// Sobel with mirrored borders (scipy.ndimage.sobel, mode='reflect').
	at := func(r, c int) float64 {
		r = min(max(r, 0), h-1)
		c = min(max(c, 0), w-1)
		return sm[r*w+c]
	}
	gi, gj, mag := make([]float64, n), make([]float64, n), make([]float64, n)
	for r := range h {
		for c := range w {
			var a, b float64
			for d, k := range [3]float64{1, 2, 1} {
				a += k * (at(r+1, c+d-1) - at(r-1, c+d-1))
				b += k * (at(r+d-1, c+1) - at(r+d-1, c-1))
			}
			i := r*w + c
			gi[i], gj[i], mag[i] = a, b, math.Hypot(a, b)
		}
	}
	// Non-maximum suppression: compare with the interpolated neighbours on
	// both sides along the gradient; the four sector rules are tried in
	// scikit-image's order and the last that applies decides.
	lm := make([]bool, n)
	for r := 1; r < h-1; r++ {
		for c := 1; c < w-1; c++ {
			i := r*w + c
			m := mag[i]
			if !(m > 0) {
				continue
			}
			nb := func(dr, dc int) float64 { return mag[i+dr*w+dc] }
			side := func(wt float64, d1r, d1c, d2r, d2c int) bool {
				return float64(nb(d2r, d2c)*wt)+float64(nb(d1r, d1c)*(1-wt)) <= m
			}
			ai, aj := math.Abs(gi[i]), math.Abs(gj[i])
			up, down, right, left := gi[i] >= 0, gi[i] <= 0, gj[i] >= 0, gj[i] <= 0
			horiz, vert := ai >= aj, ai <= aj
			same, opposite := up && right || down && left, down && right || up && left
			if same && horiz {
				wt := aj / ai
				lm[i] = side(wt, 1, 0, 1, 1) && side(wt, -1, 0, -1, -1)
			}
			if same && vert {
				wt := ai / aj
				lm[i] = side(wt, 0, 1, 1, 1) && side(wt, 0, -1, -1, -1)
			}
			if opposite && vert {
				wt := ai / aj
				lm[i] = side(wt, 0, 1, -1, 1) && side(wt, 0, -1, 1, -1)
			}
			if opposite && horiz {
				wt := aj / ai
				lm[i] = side(wt, -1, 0, -1, 1) && side(wt, 1, 0, 1, -1)
			}
		}
	}
	// Hysteresis: grow 8-connected from the strong points through the weak.
	var stack []int
	for i := range lm {
		if lm[i] && mag[i] >= high {
			out[i] = true
			stack = append(stack, i)
		}
	}
	for len(stack) > 0 {
		i := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		r, c := i/w, i%w
		for dr := -1; dr <= 1; dr++ {
			for dc := -1; dc <= 1; dc++ {
				rr, cc := r+dr, c+dc
				if rr < 0 || rr >= h || cc < 0 || cc >= w {
					continue
				}
				j := rr*w + cc
				if !out[j] && lm[j] && mag[j] >= low {
					out[j] = true
					stack = append(stack, j)
				}
			}
		}
	}
	return out
}
