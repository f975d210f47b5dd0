package datasets

import (
	"math"
	"math/rand/v2"
)

// plasmaSize returns the side M of the fog's fractal map for an h×w image:
// 256 at 28 px (MNIST-C), times the power of two nearest to side/28, and at
// least the image side, so the fog's structure grows with the image.
func plasmaSize(h, w int) int {
	side := max(h, w)
	k := math.Round(math.Log2(float64(side) / 28))
	n := int(math.Round(256 * math.Pow(2, k)))
	for n < side {
		n *= 2
	}
	return max(n, 2)
}

// plasmaFractal fills a (n×n, n a power of two, row-major, wrapping at the
// edges) with a diamond-square fractal of decay w, scaled to [0,1]; the
// construction is described under CorruptionKind.
func plasmaFractal(a []float64, n int, decay float64, r *rand.Rand) {
	a[0] = 0
	mask := n - 1 // n is a power of two: wrap by masking
	at := func(y, x int) float64 { return a[(y&mask)*n+x&mask] }
	spread := 1.0
	for step := n; step >= 2; step /= 2 {
		half := step / 2
		for y := 0; y < n; y += step {
			for x := 0; x < n; x += step {
				s := at(y, x) + at(y, x+step) + at(y+step, x) + at(y+step, x+step)
				a[(y+half)*n+x+half] = s/4 + spread*(2*r.Float64()-1)
			}
		}
		for y := 0; y < n; y += step {
			for x := 0; x < n; x += step {
				// (y, x+half): left and right corners, centres above and below.
				s := at(y, x) + at(y, x+step) + at(y+n-half, x+half) + at(y+half, x+half)
				a[y*n+x+half] = s/4 + spread*(2*r.Float64()-1)
				// (y+half, x): corners above and below, centres left and right.
				s = at(y, x) + at(y+step, x) + at(y+half, x+n-half) + at(y+half, x+half)
				a[(y+half)*n+x] = s/4 + spread*(2*r.Float64()-1)
			}
		}
		spread /= decay * decay
	}
	lo, hi := a[0], a[0]
	for _, v := range a[:n*n] {
		if v < lo {
			lo = v
		}
		if v > hi {
			hi = v
		}
	}
	if hi == lo {
		clear(a[:n*n])
		return
	}
	for i, v := range a[:n*n] {
		a[i] = (v - lo) / (hi - lo)
	}
}
