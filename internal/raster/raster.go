// Package raster holds the sampling primitives that the front end (v1layer)
// and the data (datasets) share, with one coordinate convention: an image
// is a row-major h×w slice, a point is (y, x) = (row, column) in pixels, and
// pixel centres sit at integer coordinates (pixel (r, c) covers
// [r−½, r+½) × [c−½, c+½)).
//
// Two bilinear samplers differ only at the border, where a caller must say
// what lies outside the image:
//   - Bilinear treats every pixel outside as 0, so a point half a pixel
//     beyond the edge gets half the edge value (scipy.ndimage's
//     map_coordinates, order 1, mode "grid-constant");
//   - BilinearInside gives 0 for a point outside the pixel-centre grid
//     [0, h−1] × [0, w−1] and interpolates normally inside it
//     (map_coordinates, order 1, mode "constant");
//   - BilinearEdge repeats the edge pixels outward (map_coordinates, order
//     1, mode "nearest"; scikit-image's resize with order 1 and mode
//     "edge").
//
// Reflect is half-sample symmetric extension (scipy.ndimage mode "reflect",
// NumPy pad mode "symmetric"), and Gaussian the sampled, normalised 1-D
// Gaussian.
package raster

import "math"

// Pixel is an element type the float64 samplers read.
type Pixel interface{ ~uint8 | ~float32 | ~float64 }

// Reflect maps any index i into [0, n) by repeated half-sample reflection:
// … 1 0 | 0 1 … n−1 | n−1 n−2 ….
func Reflect(i, n int) int {
	p := 2 * n
	i %= p
	if i < 0 {
		i += p
	}
	if i >= n {
		i = p - 1 - i
	}
	return i
}

// Bilinear samples src (h×w) at (y, x), each neighbour outside the image
// counting as 0. The arithmetic is in T, so a float32 image is sampled in
// float32.
func Bilinear[T float32 | float64](src []T, h, w int, y, x float64) T {
	x0, y0 := math.Floor(x), math.Floor(y)
	fx, fy := T(x-x0), T(y-y0)
	ix, iy := int(x0), int(y0)
	at := func(r, c int) T {
		if r < 0 || r >= h || c < 0 || c >= w {
			return 0
		}
		return src[r*w+c]
	}
	a := at(iy, ix)*(1-fx) + at(iy, ix+1)*fx
	b := at(iy+1, ix)*(1-fx) + at(iy+1, ix+1)*fx
	return a*(1-fy) + b*fy
}

// EdgeSlack is how far (in pixels) a point may fall outside the pixel-centre
// grid by rounding and still count as on its edge in BilinearInside; without
// it a 90° rotation would lose edge rows to errors of 1e-15 px.
const EdgeSlack = 1e-9

// BilinearInside samples src (h×w) at (y, x) in float64: 0 outside the
// pixel-centre grid (beyond EdgeSlack), bilinear inside it.
func BilinearInside[S Pixel](src []S, h, w int, y, x float64) float64 {
	if !(y >= -EdgeSlack && y <= float64(h-1)+EdgeSlack && x >= -EdgeSlack && x <= float64(w-1)+EdgeSlack) {
		return 0
	}
	return BilinearEdge(src, h, w, y, x)
}

// BilinearEdge samples src (h×w) at (y, x) in float64, the point clamped
// onto the pixel-centre grid first (edge pixels repeated outward).
func BilinearEdge[S Pixel](src []S, h, w int, y, x float64) float64 {
	y = math.Min(math.Max(y, 0), float64(h-1))
	x = math.Min(math.Max(x, 0), float64(w-1))
	y0, x0 := int(y), int(x)
	fy, fx := y-float64(y0), x-float64(x0)
	y1, x1 := min(y0+1, h-1), min(x0+1, w-1)
	a := float64(src[y0*w+x0])*(1-fx) + float64(src[y0*w+x1])*fx
	b := float64(src[y1*w+x0])*(1-fx) + float64(src[y1*w+x1])*fx
	return a*(1-fy) + b*fy
}

// Gaussian returns the 2r+1 weights exp(−t²/2σ²), t = −r..r, normalised to
// sum 1.
func Gaussian(sigma float64, r int) []float64 {
	g := make([]float64, 2*r+1)
	var s float64
	for t := -r; t <= r; t++ {
		g[t+r] = math.Exp(-float64(t*t) / (2 * sigma * sigma))
		s += g[t+r]
	}
	for i := range g {
		g[i] /= s
	}
	return g
}
