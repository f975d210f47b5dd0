package pipeline

import (
	"math"
	"slices"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/internal/raster"
)

// Deblurring by what the image shows (InputConfig.Deblur "auto").
//
// The blur of an image's edges is estimated by the re-blur gradient ratio
// of Zhuo & Sim (2011, "Defocus map estimation from a single image",
// Pattern Recognition 44:1852-1858): a step edge of amplitude A blurred by
// a Gaussian of σ has the gradient A/(√(2π)·σ) at the edge; blurred again
// by a known σ₀ it has A/(√(2π)·√(σ²+σ₀²)), so the ratio R of the two
// gradients gives σ = σ₀/√(R²−1), whatever A is (contrast does not
// matter). The estimate is the median over the edge pixels: the strongest
// gradients that are local maxima along their direction. Strokes a few
// pixels wide are not isolated steps and read smaller than their blur,
// so the estimate is compared with the same estimate on the training
// images (InputConfig.DeblurRef, measured by Fit), not with zero: only the
// blur in excess of the training images', σₑ = √(σ̂² − σ_ref²), is undone,
// by Richardson-Lucy deconvolution (Richardson 1972, JOSA 62:55-59; Lucy
// 1974, AJ 79:745-754) with a Gaussian of σₑ. An image that is no blurrier
// than the training images is left exactly as it is.

// Parameters of the blur estimate and the deconvolution.
const (
	deblurSigma0   = 1.0  // σ₀ of the re-blur
	deblurEdgeFrac = 0.3  // edge pixels: gradient ≥ this fraction of the image's largest
	deblurMinEdges = 8    // fewer edge pixels: no estimate (nothing is done)
	deblurMaxSigma = 4.0  // estimates are clipped here
	deblurIters    = 12   // Richardson-Lucy iterations
	deblurEps      = 1e-4 // floor of the re-blurred image in the RL ratio
)

// Gates of the deconvolution, chosen on validation images of both training
// splits under the whole development suite (TestInputSuiteValidation):
// edges whose estimates spread more than deblurMaxSpread (their
// interquartile range over their median) are not one Gaussian blur —
// noise, glass-like shuffling, edges of different sharpness — and an
// excess blur below deblurMinExcess px is within what the estimate reads
// off sharp but differently shaped edges (the hard steps of MNIST-C's
// stripes read 0.83 px, the training digits' strokes 0.69 at the 0.9
// quantile): both are left alone. Without the gates the MNIST-C mean and
// worst kind fell on MNIST (glass blur, stripes).
const (
	deblurMaxSpread = 0.3
	deblurMinExcess = 0.5
)

// gaussKernel returns the float32 weights of the Gaussian of sigma that
// gaussBlurClamp uses: radius int(3σ + 0.5) (at least 1), summing to 1.
func gaussKernel(sigma float64) []float32 {
	k64 := raster.Gaussian(sigma, max(1, int(3*sigma+0.5)))
	k := make([]float32, len(k64))
	for i, v := range k64 {
		k[i] = float32(v)
	}
	return k
}

// deblurKernel0 is the re-blur's Gaussian of σ₀.
var deblurKernel0 = gaussKernel(deblurSigma0)

// gaussBlurClamp writes src blurred by the separable Gaussian k (from
// gaussKernel; border pixels replicated) into dst; tmp holds h·w. Sums are
// float32.
func gaussBlurClamp(dst, tmp, src []float32, h, w int, k []float32) {
	r := len(k) / 2
	for y := range h {
		row, out := src[y*w:][:w], tmp[y*w:][:w]
		for x := range out {
			var acc float32
			if x >= r && x+r < w {
				for t, kv := range k {
					acc += kv * row[x+t-r]
				}
			} else {
				for t, kv := range k {
					acc += kv * row[min(max(x+t-r, 0), w-1)]
				}
			}
			out[x] = acc
		}
	}
	for y := range h {
		out := dst[y*w:][:w]
		clear(out)
		for t, kv := range k {
			in := tmp[min(max(y+t-r, 0), h-1)*w:][:w]
			for x, v := range in {
				out[x] += kv * v
			}
		}
	}
}

// gradMag writes the central-difference gradient magnitude of src into g
// and, when gx is not nil, its components into gx, gy (border pixels
// replicated).
func gradMag(g, gx, gy, src []float32, h, w int) {
	for y := range h {
		up, row, dn := src[max(y-1, 0)*w:][:w], src[y*w:][:w], src[min(y+1, h-1)*w:][:w]
		gr := g[y*w:][:w]
		for x := range gr {
			dx := (row[min(x+1, w-1)] - row[max(x-1, 0)]) / 2
			dy := (dn[x] - up[x]) / 2
			gr[x] = float32(math.Sqrt(float64(dx*dx + dy*dy)))
			if gx != nil {
				gx[y*w+x], gy[y*w+x] = dx, dy
			}
		}
	}
}

// edgeBlur returns the estimated Gaussian blur σ̂ of src's edges (see the
// comment above), the spread of the edge pixels' estimates (their
// interquartile range over their median) and whether there were enough
// edge pixels for an estimate. scratch holds 7·h·w (the last h·w hold the
// edge pixels' estimates).
func edgeBlur(scratch, src []float32, h, w int) (sigma, spread float64, ok bool) {
	n := h * w
	g, gx, gy := scratch[:n], scratch[n:2*n], scratch[2*n:3*n]
	rb, tmp, g1 := scratch[3*n:4*n], scratch[4*n:5*n], scratch[5*n:6*n]
	gradMag(g, gx, gy, src, h, w)
	gaussBlurClamp(rb, tmp, src, h, w, deblurKernel0)
	gradMag(g1, nil, nil, rb, h, w)
	var gmax float32
	for _, v := range g {
		gmax = max(gmax, v)
	}
	if gmax <= 0 {
		return 0, 0, false
	}
	est := scratch[6*n : 6*n : 7*n]
	for y := 1; y+1 < h; y++ {
		for x := 1; x+1 < w; x++ {
			i := y*w + x
			v := g[i]
			if v < deblurEdgeFrac*gmax || g1[i] <= 0 {
				continue
			}
			// Non-maximum suppression along the gradient, quantised to 4
			// directions.
			ax, ay := math.Abs(float64(gx[i])), math.Abs(float64(gy[i]))
			var a, b float32
			switch {
			case ay <= 0.4142*ax: // horizontal gradient
				a, b = g[i-1], g[i+1]
			case ax <= 0.4142*ay: // vertical
				a, b = g[i-w], g[i+w]
			case (gx[i] > 0) == (gy[i] > 0): // down-right diagonal
				a, b = g[i-w-1], g[i+w+1]
			default:
				a, b = g[i-w+1], g[i+w-1]
			}
			if v < a || v < b {
				continue
			}
			r := float64(v / g1[i])
			s := float64(deblurMaxSigma)
			if r > 1 {
				s = min(deblurSigma0/math.Sqrt(r*r-1), deblurMaxSigma)
			}
			est = append(est, float32(s))
		}
	}
	if len(est) < deblurMinEdges {
		return 0, 0, false
	}
	slices.Sort(est)
	med := quantileSorted(est, 0.5)
	return med, (quantileSorted(est, 0.75) - quantileSorted(est, 0.25)) / med, true
}

// quantileSorted is the q quantile of the sorted v by linear interpolation
// between order statistics (NumPy's default, "linear").
func quantileSorted[T float32 | float64](v []T, q float64) float64 {
	x := q * float64(len(v)-1)
	i := int(x)
	if i+1 >= len(v) {
		return float64(v[len(v)-1])
	}
	return float64(v[i]) + (x-float64(i))*float64(v[i+1]-v[i])
}

// deblurExcess returns σₑ, the blur of src in excess of ref (0 when there
// is none to undo).
func deblurExcess(scratch, src []float32, h, w int, ref float64) float64 {
	s, spread, ok := edgeBlur(scratch, src, h, w)
	if !ok || s <= ref || spread > deblurMaxSpread {
		return 0
	}
	e := math.Sqrt(s*s - ref*ref)
	if e < deblurMinExcess {
		return 0
	}
	return e
}

// richardsonLucy writes src deconvolved by a Gaussian of sigma (deblurIters
// Richardson-Lucy iterations from src itself) into dst. scratch holds
// 3·h·w. Values are taken as non-negative intensities.
func richardsonLucy(dst, scratch, src []float32, h, w int, sigma float64) {
	n := h * w
	est, tmp, ratio := dst[:n], scratch[:n], scratch[n:2*n]
	conv := scratch[2*n : 3*n]
	for i, v := range src[:n] {
		est[i] = max(v, 0) + deblurEps
	}
	k := gaussKernel(sigma)
	for range deblurIters {
		gaussBlurClamp(conv, tmp, est, h, w, k)
		for i := range ratio {
			ratio[i] = (max(src[i], 0) + deblurEps) / max(conv[i], deblurEps)
		}
		gaussBlurClamp(conv, tmp, ratio, h, w, k)
		for i := range est {
			est[i] *= conv[i]
		}
	}
}

// Parameters of measureDeblurRef.
const (
	deblurRefImages   = 2000 // training images the reference is measured on (evenly spaced)
	deblurRefQuantile = 0.9  // the quantile of their estimates that is the reference
)

// measureDeblurRef is InputConfig.DeblurRef measured on train: the 0.9
// quantile of the edge-blur estimates of up to 2,000 evenly spaced training
// images after the plan's Denoise step (images without an estimate are
// skipped). It is deterministic whatever workers is.
func measureDeblurRef(p *Plan, train *datasets.Set, workers int) float64 {
	n := min(train.N, deblurRefImages)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i * train.N / n
	}
	est := make([]float64, n)
	ok := make([]bool, n)
	c := p.cfg.Input
	h, w := c.Height, c.Width
	p.eachImage(train, idx, nil, workers, nil, "", nil, func(i int, in []float32, wk *work) {
		if cap(wk.norm) < 11*h*w {
			wk.norm = make([]float32, 11*h*w)
		}
		buf := wk.norm[:11*h*w]
		denoiseStage(buf[:h*w], buf[h*w:2*h*w], buf, in, h, w, c)
		est[i], _, ok[i] = edgeBlur(buf[4*h*w:], buf[h*w:2*h*w], h, w)
	})
	var v []float64
	for i, e := range est {
		if ok[i] {
			v = append(v, e)
		}
	}
	if len(v) == 0 {
		return deblurMaxSigma // no edges anywhere: nothing is ever deblurred
	}
	slices.Sort(v)
	return v[int(deblurRefQuantile*float64(len(v)-1))]
}
