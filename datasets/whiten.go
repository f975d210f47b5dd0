package datasets

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// DefaultF0 is the default cut-off of the whitening filter, in cycles per
// pixel: Olshausen & Field (1997) used f0 = 200 cycles/picture on 512×512
// images, i.e. 0.39 cycles/pixel, rounded here to 0.4.
const DefaultF0 = 0.4

// WhitenResponse returns the amplitude response of the whitening / low-pass
// filter of Olshausen & Field, "Sparse coding with an overcomplete basis set:
// a strategy employed by V1?" (Vision Research 37, 1997):
//
//	R(f) = f · exp(−(f/f0)⁴),   f = sqrt(fx² + fy²) in cycles/pixel
//
// The factor f flattens the roughly 1/f amplitude spectrum of natural images;
// the exponential removes the highest frequencies, where noise and the
// square sampling lattice dominate. R(0) = 0, so the output has zero mean.
func WhitenResponse(f, f0 float64) float64 {
	return f * math.Exp(-math.Pow(f/f0, 4))
}

// fftFreq returns the frequency of DFT bin k of n, in cycles per sample, as
// numpy.fft.fftfreq does: k/n for k < ceil(n/2), (k−n)/n above.
func fftFreq(k, n int) float64 {
	if k < (n+1)/2 {
		return float64(k) / float64(n)
	}
	return float64(k-n) / float64(n)
}

// WhitenImage filters the h×w row-major image src with R(f) (WhitenResponse)
// in the 2-D discrete Fourier domain, treating the image as periodic, and
// writes the real result into dst (reused when its capacity suffices, may be
// src itself) and returns it. f0 ≤ 0 means DefaultF0. The periodic treatment
// leaves artefacts within a few pixels of the edges; sample patches with a
// PatchConfig.Border to avoid them. It panics if len(src) != h*w.
func WhitenImage(dst, src []float32, h, w int, f0 float64) []float32 {
	if h < 1 || w < 1 || len(src) != h*w {
		panic(fmt.Sprintf("datasets: WhitenImage of %d values as %d×%d", len(src), h, w))
	}
	if f0 <= 0 {
		f0 = DefaultF0
	}
	c := make([]complex128, h*w)
	for i, v := range src {
		c[i] = complex(float64(v), 0)
	}
	rows, cols := fourier.NewCmplxFFT(w), fourier.NewCmplxFFT(h)
	col := make([]complex128, h)
	fft2 := func(inverse bool) {
		for y := 0; y < h; y++ {
			r := c[y*w : (y+1)*w]
			if inverse {
				rows.Sequence(r, r)
			} else {
				rows.Coefficients(r, r)
			}
		}
		for x := 0; x < w; x++ {
			for y := 0; y < h; y++ {
				col[y] = c[y*w+x]
			}
			if inverse {
				cols.Sequence(col, col)
			} else {
				cols.Coefficients(col, col)
			}
			for y := 0; y < h; y++ {
				c[y*w+x] = col[y]
			}
		}
	}
	fft2(false)
	norm := 1 / float64(h*w) // the gonum transforms are unnormalised
	for y := 0; y < h; y++ {
		fy := fftFreq(y, h)
		for x := 0; x < w; x++ {
			fx := fftFreq(x, w)
			c[y*w+x] *= complex(WhitenResponse(math.Hypot(fx, fy), f0)*norm, 0)
		}
	}
	fft2(true)
	if cap(dst) < h*w {
		dst = make([]float32, h*w)
	}
	dst = dst[:h*w]
	for i := range dst {
		dst[i] = float32(real(c[i]))
	}
	return dst
}

// WhitenPhotos returns copies of photos, each filtered by WhitenImage with
// cut-off f0 (≤ 0 means DefaultF0). Pixel values are then no longer in
// [0,1]; they have zero mean.
func WhitenPhotos(photos []Photo, f0 float64) []Photo {
	out := make([]Photo, len(photos))
	for i, p := range photos {
		out[i] = p
		out[i].Pix = WhitenImage(nil, p.Pix, p.H, p.W, f0)
	}
	return out
}
