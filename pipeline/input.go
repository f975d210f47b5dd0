package pipeline

import (
	"fmt"
	"math"
	"slices"
	"sync"

	"github.com/striate/striate/datasets"
)

// Input normalisation modes (InputConfig.Normalize, InputConfig.Center).
const (
	NormalizeMinMax = "minmax" // v' = (v − min)/(max − min), when max − min ≥ minRange
	NormalizeNone   = "none"
	CenterMass      = "mass" // integer shift putting the centre of mass at the centre
	CenterNone      = "none"
	CenterRobust    = "robust"   // integer shift putting the centre of mass of the 3×3 grey opening at the centre
	DenoiseMedian3  = "median3"  // 3×3 median filter, border pixels replicated
	DenoiseAuto     = "auto"     // estimate the noise level; 3×3 median (twice when heavy) only on noisy images
	DenoiseAdaptive = "adaptive" // area opening and closing, then "auto"'s median passes on what is left
	DenoiseSmooth   = "smooth"   // "auto"'s median passes and coring as a continuous function of the noise level
	DenoiseNone     = "none"
	DeskewShear     = "shear" // shear rows so that the second-moment slant μ11/μ02 is removed
	DeskewNone      = "none"
	UprightVertical = "vertical" // rotate a tilted, elongated shape so that its principal axis is vertical
	UprightNone     = "none"
	DeblurAuto      = "auto" // estimate the edges' blur; undo what exceeds the training images'
	DeblurNone      = "none"
)

// minRange is the smallest max − min that NormalizeMinMax stretches: below
// 1/255 (one grey level of an 8-bit image) an image is treated as flat and
// left alone, so a blank image is not blown up into noise.
const minRange = 1.0 / 255

func (c InputConfig) validate() error {
	switch c.Normalize {
	case NormalizeMinMax, NormalizeNone:
	default:
		return fmt.Errorf("pipeline: input.normalize %q; want %q (default) or %q", c.Normalize, NormalizeMinMax, NormalizeNone)
	}
	switch c.Denoise {
	case DenoiseMedian3, DenoiseAuto, DenoiseSmooth, DenoiseAdaptive, DenoiseNone:
	default:
		return fmt.Errorf("pipeline: input.denoise %q; want %q (default), %q, %q, %q or %q", c.Denoise, DenoiseAuto, DenoiseSmooth, DenoiseAdaptive, DenoiseMedian3, DenoiseNone)
	}
	switch c.Center {
	case CenterMass, CenterRobust, CenterAttend, CenterNone:
	default:
		return fmt.Errorf("pipeline: input.center %q; want %q (default), %q, %q or %q", c.Center, CenterMass, CenterRobust, CenterAttend, CenterNone)
	}
	switch c.Deskew {
	case DeskewNone, DeskewShear:
	default:
		return fmt.Errorf("pipeline: input.deskew %q; want %q (default) or %q", c.Deskew, DeskewNone, DeskewShear)
	}
	switch c.Upright {
	case UprightNone, UprightVertical:
	default:
		return fmt.Errorf("pipeline: input.upright %q; want %q (default) or %q", c.Upright, UprightNone, UprightVertical)
	}
	switch c.Deblur {
	case DeblurNone, DeblurAuto:
	default:
		return fmt.Errorf("pipeline: input.deblur %q; want %q (default) or %q", c.Deblur, DeblurNone, DeblurAuto)
	}
	if !(c.DeblurRef >= 0 && c.DeblurRef <= deblurMaxSigma) {
		return fmt.Errorf("pipeline: input.deblur_ref %g px outside [0, %g] (0: measured on the training images by Fit)", c.DeblurRef, float64(deblurMaxSigma))
	}
	return nil
}

// normalizeInput applies the input stage's normalisation and centring to
// img (h×w, values in [0,1]) and returns the result: img itself when both
// are off, otherwise buf (grown to h·w) holding the result.
//
// Min-max stretching undoes a global contrast change about any point; it
// leaves an image that already spans [0,1] (most clean or noisy images)
// unchanged.
//
// Centring computes the centre of mass (ȳ, x̄) = Σ v·(y, x) / Σ v and moves
// the image by the integer shift round((h−1)/2 − ȳ), round((w−1)/2 − x̄)
// with zero fill — the normalisation used to build MNIST itself (LeCun,
// Bottou, Bengio & Haffner 1998: digits "centered in a 28x28 image by
// computing the center of mass of the pixels"). An image with no mass is
// left where it is.
func normalizeInput(buf, img []float32, h, w int, c InputConfig) []float32 {
	if c.Normalize != NormalizeMinMax && c.Center != CenterMass && c.Center != CenterRobust && c.Center != CenterAttend && c.Denoise != DenoiseMedian3 && c.Denoise != DenoiseAuto && c.Denoise != DenoiseSmooth && c.Denoise != DenoiseAdaptive && c.Deskew != DeskewShear && c.Upright != UprightVertical && c.Deblur != DeblurAuto {
		return img
	}
	n := h * w
	need := 4 * n
	if c.Deblur == DeblurAuto {
		need = 11 * n // edgeBlur's 7·n and Richardson-Lucy's 3·n after the 4·n
	}
	if cap(buf) < need {
		buf = make([]float32, need)
	}
	buf = buf[:need]
	out, tmp := buf[:n], buf[n:2*n]
	noisy := denoiseStage(out, tmp, buf, img, h, w, c)
	if c.Deblur == DeblurAuto {
		if e := deblurExcess(buf[4*n:], tmp, h, w, c.DeblurRef); e > 0 {
			richardsonLucy(out, buf[4*n:], tmp, h, w, e)
			copy(tmp, out)
		}
	}
	if c.Center == CenterAttend {
		attendItem(tmp, h, w)
	}
	if c.Normalize == NormalizeMinMax {
		lo, hi := tmp[0], tmp[0]
		for _, v := range tmp {
			lo, hi = min(lo, v), max(hi, v)
		}
		if hi-lo >= minRange {
			s := 1 / (hi - lo)
			for i, v := range tmp {
				tmp[i] = (v - lo) * s
			}
		}
	}
	if c.Deskew == DeskewShear {
		deskew(out, tmp, h, w)
		copy(tmp, out)
	}
	if c.Center != CenterMass && c.Center != CenterRobust && c.Center != CenterAttend {
		copy(out, tmp)
	} else if c.Center == CenterRobust {
		centerRobust(out, tmp, buf[2*n:3*n], buf[3*n:4*n], h, w)
	} else {
		centerMass(out, tmp, h, w)
	}
	if c.Upright == UprightVertical && !noisy {
		if deg, ok := uprightAngle(out, h, w); ok {
			datasets.Perturbation{Kind: datasets.Rotate, Level: deg}.Apply(tmp, out, h, w, 0)
			copy(out, tmp)
		}
	}
	return out
}

// denoiseStage writes img filtered by c.Denoise into tmp (out and buf, of
// at least 4·h·w, are scratch) and reports whether DenoiseAuto's gate
// found noise.
func denoiseStage(out, tmp, buf, img []float32, h, w int, c InputConfig) bool {
	n := h * w
	noisy := false // DenoiseAuto found noise: the moments of UprightVertical are not to be trusted
	switch c.Denoise {
	case DenoiseMedian3:
		median3(tmp, img[:n], h, w)
	case DenoiseAuto:
		sd := noiseSigma(buf[3*n:4*n], img[:n], h, w)
		noisy = sd >= autoLight
		medianPasses(tmp, img[:n], out, h, w, sd)
	case DenoiseSmooth:
		sd := noiseSigma(buf[3*n:4*n], img[:n], h, w)
		noisy = sd >= autoLight // the upright turn is a yes/no decision: "auto"'s gate
		smoothMedian(tmp, img[:n], out, h, w, sd)
	case DenoiseAdaptive:
		noisy = adaptiveDenoise(tmp, out, buf[2*n:3*n], buf[3*n:4*n], img[:n], h, w)
	default:
		copy(tmp, img[:n])
	}
	return noisy
}

// centerMass writes src moved by the integer shift that puts its centre of
// mass at the image centre into dst (zero fill); see normalizeInput.
func centerMass(dst, src []float32, h, w int) {
	dy, dx, _ := massShift(src, h, w)
	shiftInto(dst, src, h, w, dy, dx)
}

// massShift returns the integer shift round((h−1)/2 − ȳ), round((w−1)/2 − x̄)
// that puts the centre of mass of img at the image centre, and false (and
// no shift) when img has no mass.
func massShift(img []float32, h, w int) (dy, dx int, ok bool) {
	var m, my, mx float64
	for y := 0; y < h; y++ {
		var row float64
		for x, v := range img[y*w : (y+1)*w] {
			row += float64(v)
			mx += float64(v) * float64(x)
		}
		m += row
		my += row * float64(y)
	}
	if m <= 0 {
		return 0, 0, false
	}
	return int(math.Round(float64(h-1)/2 - my/m)), int(math.Round(float64(w-1)/2 - mx/m)), true
}

// shiftInto writes src moved down by dy and right by dx (zero fill) into dst.
func shiftInto(dst, src []float32, h, w, dy, dx int) {
	clear(dst[:h*w])
	for y := 0; y < h; y++ {
		sy := y - dy
		if sy < 0 || sy >= h {
			continue
		}
		x0, x1 := max(0, dx), min(w, w+dx)
		if x0 < x1 {
			copy(dst[y*w+x0:y*w+x1], src[sy*w+x0-dx:sy*w+x1-dx])
		}
	}
}

// Limits of UprightVertical: a shape is turned only when its principal axis
// lies between uprightMinDeg and uprightMaxDeg from vertical and it is
// elongated (minor/major second-moment ratio at most uprightMaxRatio). Below
// the lower limit the tilt is left as natural variation; beyond the upper
// one the axis is nearer horizontal (shoes, bags) or diagonal (an ankle
// boot's L), where turning it upright would be wrong; a round shape has no
// reliable axis. Chosen on Fashion-MNIST validation images (training split):
// of 4,000 clean ones 100 are turned, mostly sandals and ankle boots.
const (
	uprightMinDeg   = 15
	uprightMaxDeg   = 40
	uprightMaxRatio = 0.8
)

// uprightAngle returns the rotation (degrees counter-clockwise as
// displayed, datasets.Rotate's convention) that turns the principal axis of
// img's grey mass to vertical, and whether UprightVertical's limits call for
// it. The principal axis is the major eigenvector of the second central
// moments: its angle from the x axis is φ = ½·atan2(2μ11, μ20 − μ02) (Hu
// 1962; common practice in shape analysis), with y pointing down.
func uprightAngle(img []float32, h, w int) (deg float64, ok bool) {
	mo := momentsOf(img, h, w)
	if mo.m <= 0 {
		return 0, false
	}
	m20, m02, m11 := mo.m20, mo.m02, mo.m11
	a, b := (m20+m02)/2, math.Hypot((m20-m02)/2, m11)
	if a+b <= 0 || (a-b)/(a+b) > uprightMaxRatio {
		return 0, false
	}
	phi := 0.5 * math.Atan2(2*m11, m20-m02)  // (−90°, 90°]
	d := phi - math.Copysign(math.Pi/2, phi) // signed angle from vertical
	if ad := math.Abs(d) * 180 / math.Pi; ad <= uprightMinDeg || ad > uprightMaxDeg {
		return 0, false
	}
	return d * 180 / math.Pi, true
}

// moments are the grey mass of an image, its centre (cy, cx) and its
// second central moments μ20 = Σ v·(x − x̄)², μ02 = Σ v·(y − ȳ)²,
// μ11 = Σ v·(x − x̄)(y − ȳ) (y pointing down), shared by deskew and
// uprightAngle.
type moments struct{ m, cy, cx, m20, m02, m11 float64 }

func momentsOf(img []float32, h, w int) moments {
	var mo moments
	var my, mx float64
	for y := 0; y < h; y++ {
		for x, v := range img[y*w : (y+1)*w] {
			mo.m += float64(v)
			my += float64(v) * float64(y)
			mx += float64(v) * float64(x)
		}
	}
	if mo.m <= 0 {
		return mo
	}
	mo.cy, mo.cx = my/mo.m, mx/mo.m
	for y := 0; y < h; y++ {
		dy := float64(y) - mo.cy
		for x, v := range img[y*w : (y+1)*w] {
			dx := float64(x) - mo.cx
			mo.m20 += float64(v) * dx * dx
			mo.m02 += float64(v) * dy * dy
			mo.m11 += float64(v) * dx * dy
		}
	}
	return mo
}

// maxSkew bounds the shear of DeskewShear (|α| ≤ 1, a slant of 45°), so a
// shape whose mass lies almost on one row is not smeared across the image.
const maxSkew = 1

// deskew writes src (h×w) sheared along x into dst: dst(y, x) = src(y, x +
// α·(y − ȳ)), linearly interpolated along the row with zero fill, where
// α = μ11/μ02 is the slope of the regression of x on y over the grey
// mass (central moments μ11 = Σ v·(x − x̄)(y − ȳ), μ02 = Σ v·(y − ȳ)²),
// clamped to ±maxSkew. The shear removes the slant (μ11 becomes 0) and
// keeps the centre of mass. It is the deskewing of the MNIST benchmarks
// (LeCun et al. 1998 list "deskewed" variants of several classifiers; the
// moment form is common practice). An image with no mass, or with all its
// mass on one row, is copied unchanged.
func deskew(dst, src []float32, h, w int) {
	mo := momentsOf(src, h, w)
	if mo.m <= 0 || mo.m02 <= 1e-12*mo.m {
		copy(dst, src[:h*w])
		return
	}
	cy, m11, m02 := mo.cy, mo.m11, mo.m02
	a := max(-maxSkew, min(maxSkew, m11/m02))
	for y := 0; y < h; y++ {
		row, out := src[y*w:(y+1)*w], dst[y*w:(y+1)*w]
		off := a * (float64(y) - cy)
		for x := range out {
			sx := float64(x) + off
			x0 := math.Floor(sx)
			f := sx - x0
			i := int(x0)
			var v float64
			if i >= 0 && i < w {
				v += (1 - f) * float64(row[i])
			}
			if i+1 >= 0 && i+1 < w {
				v += f * float64(row[i+1])
			}
			out[x] = float32(v)
		}
	}
}

// Noise levels of DenoiseAuto, in the units of noiseSigma's estimate σ̂
// (pixels in [0,1]): below autoLight the image is left alone, from
// autoLight it is median-filtered once, from autoHeavy twice. They were
// chosen on validation images from the training splits, never the test
// splits: pipelines fitted on the first 50,000 training images of MNIST and
// of Fashion-MNIST, scored on training images 50,000-53,999 with Gaussian
// noise σ = 0.1…0.5 added and clipped, under no filter, one, two and three
// 3×3 median passes and a 5×5 median. No filter was best at σ = 0.1 on both
// and at 0.2 on MNIST (σ̂ ≈ 0.12); one pass at 0.2 on Fashion-MNIST
// (σ̂ ≈ 0.14) and at 0.3-0.4 on MNIST (σ̂ ≈ 0.17-0.22); two or three passes
// at 0.3 and above on Fashion-MNIST (σ̂ ≥ 0.2) and at 0.5 on MNIST. Clipping
// makes σ̂ about 0.6 σ on these dark-background images.
//
// After the median passes, grey levels within a = k·σ̂ of black or white
// are set to black or white and the rest stretched linearly (see core),
// with k = autoCoreLight after one pass and autoCoreHeavy after two: what
// the median leaves of clipped noise is a faint haze on the background and
// speckle on the strokes, which the front end's contrast normalisation would
// otherwise amplify. Chosen the same way, on validation images 50,000-53,999
// of both training splits (k from 0.5 to 1.5 after two passes, 0 to 1.5
// after one), first with the default pipeline: MNIST at σ = 0.3 / 0.5 rose
// from 93.2% / 76.8% to 95.3% / 83.8%, Fashion-MNIST at σ = 0.2 / 0.3 from
// 75.7% / 67.5% to 76.9% / 72.2%; then with the presets (digits on MNIST,
// garments on Fashion-MNIST), where k = 1 after one pass rather than 0.5
// gave Fashion-MNIST σ = 0.3 69.95% instead of 68.67% and MNIST σ = 0.3
// 95.47% instead of 94.67%, at σ = 0.5 unchanged.
//
// DenoiseSmooth (smoothStrength) replaces the two steps by the straight
// line through their middles, with no constant of its own.
const (
	autoLight     = 0.13
	autoHeavy     = 0.185
	autoCoreLight = 1.0
	autoCoreHeavy = 0.75
)

// core maps v to clamp((v − a)/(1 − 2a), 0, 1) in place: a grey-level
// coring that sends the a-neighbourhoods of black and white to black and
// white (common practice in image restoration, e.g. the black and white
// points of a levels adjustment). a is capped at 0.25 so the stretch stays
// at most 2×.
func core(v []float32, a float64) {
	a = min(a, 0.25)
	if a <= 0 {
		return
	}
	lo, s := float32(a), float32(1/(1-2*a))
	for i, x := range v {
		v[i] = min(1, max(0, (x-lo)*s))
	}
}

// noiseSigma estimates the standard deviation of additive white noise in
// src (h×w) robustly, as Donoho & Johnstone (1994, Biometrika 81:425-455)
// do from the finest wavelet scale: σ̂ = median|d|/0.6745 over the diagonal
// Haar detail coefficients d = (a − b − c + e)/2 of the non-overlapping 2×2
// blocks [a b; c e] (an orthonormal transform, so white noise keeps its σ
// in d, and smooth image content gives d ≈ 0). scratch holds at least
// (h/2)·(w/2) values.
func noiseSigma(scratch, src []float32, h, w int) float64 {
	d := scratch[:0]
	for y := 0; y+1 < h; y += 2 {
		r0, r1 := src[y*w:(y+1)*w], src[(y+1)*w:(y+2)*w]
		for x := 0; x+1 < w; x += 2 {
			v := (r0[x] - r0[x+1] - r1[x] + r1[x+1]) / 2
			d = append(d, float32(math.Abs(float64(v))))
		}
	}
	if len(d) == 0 {
		return 0
	}
	slices.Sort(d)
	m := len(d) / 2
	med := float64(d[m])
	if len(d)%2 == 0 {
		med = (float64(d[m-1]) + float64(d[m])) / 2
	}
	return med / 0.6745
}

// median3 writes the 3×3 median of src (h×w, border pixels replicated) to
// dst. The median of nine values is found with the 19-exchange network of
// Paeth (Graphics Gems, 1990), "Median finding on a 3×3 grid".
func median3(dst, src []float32, h, w int) {
	var v [9]float32
	for y := 0; y < h; y++ {
		ys := [3]int{max(y-1, 0), y, min(y+1, h-1)}
		for x := 0; x < w; x++ {
			xs := [3]int{max(x-1, 0), x, min(x+1, w-1)}
			k := 0
			for _, yy := range ys {
				row := src[yy*w : yy*w+w]
				for _, xx := range xs {
					v[k] = row[xx]
					k++
				}
			}
			dst[y*w+x] = median9(&v)
		}
	}
}

func median9(p *[9]float32) float32 {
	s := func(i, j int) {
		if p[i] > p[j] {
			p[i], p[j] = p[j], p[i]
		}
	}
	s(1, 2)
	s(4, 5)
	s(7, 8)
	s(0, 1)
	s(3, 4)
	s(6, 7)
	s(1, 2)
	s(4, 5)
	s(7, 8)
	s(0, 3)
	s(5, 8)
	s(4, 7)
	s(3, 6)
	s(1, 4)
	s(2, 5)
	s(4, 7)
	s(4, 2)
	s(6, 4)
	s(4, 2)
	return p[4]
}

// Area thresholds of DenoiseAdaptive at 28×28 (scaled with the image area
// at other sizes; at least 2): bright detail of fewer than areaOpenPx
// pixels and dark detail of fewer than areaClosePx pixels is removed. A
// salt-and-pepper impulse, a speck of shot noise or one dash of a dotted
// line is smaller; a stroke of a digit (a "1" is about 40 pixels) or a
// garment is far larger. Chosen on validation images (training images
// 50,000-51,999 of MNIST and Fashion-MNIST, models fitted on the first
// 10,000) under the whole development suite; the candidates and their
// figures are in TestInputSuiteValidation (input_suite_long_test.go).
const (
	areaOpenPx  = 8
	areaClosePx = 4
)

var areaPool = sync.Pool{New: func() any { return new(areaScratch) }}

// areaPx scales an area threshold given at 28×28 to an h×w image.
func areaPx(px, h, w int) int {
	return max(2, int(math.Round(float64(px)*float64(h*w)/(28*28))))
}

// adaptiveDenoise writes img filtered by DenoiseAdaptive into dst (tmp,
// tmp2: h·w values each; scratch at least (h/2)·(w/2)) and reports whether
// noise was found: a grey-level area opening and closing (areaOpen,
// areaClose) remove bright and dark detail smaller than a few pixels, then
// the 3×3 median passes and coring of DenoiseAuto follow the noise level
// σ̂ estimated on what the area filters left.
func adaptiveDenoise(dst, tmp, tmp2, scratch, img []float32, h, w int) bool {
	s := areaPool.Get().(*areaScratch)
	areaOpen(tmp2, img, h, w, areaPx(areaOpenPx, h, w), false, s)
	areaClose(tmp, tmp2, dst, h, w, areaPx(areaClosePx, h, w), false, s)
	areaPool.Put(s)
	sd := noiseSigma(scratch, tmp, h, w)
	medianPasses(dst, tmp, tmp2, h, w, sd)
	return sd >= autoLight
}

// medianPasses writes src filtered as DenoiseAuto does at the noise level
// sd into dst: no filter below autoLight, one 3×3 median pass and coring by
// autoCoreLight·sd up to autoHeavy, two passes and coring by
// autoCoreHeavy·sd above. tmp holds h·w values; none of the three may alias.
func medianPasses(dst, src, tmp []float32, h, w int, sd float64) {
	switch {
	case sd >= autoHeavy:
		median3(tmp, src, h, w)
		median3(dst, tmp, h, w)
		core(dst, autoCoreHeavy*sd)
	case sd >= autoLight:
		median3(dst, src, h, w)
		core(dst, autoCoreLight*sd)
	default:
		copy(dst, src)
	}
}

// DenoiseSmooth's strength s(σ̂) ∈ [0, 2] counts 3×3 median passes: it is
// the straight line through the middle of each of DenoiseAuto's steps,
// s = (σ̂ − smoothLo)/smoothStep clamped to [0, 2], so that s = 0.5 at
// autoLight and 1.5 at autoHeavy, where "auto" jumps from 0 to 1 and from
// 1 to 2 passes. It has no constant of its own: the ramp starts at
// σ̂ = 0.1025 (no clean MNIST image and under 1% of clean Fashion-MNIST
// ones come near it; see TestAutoDenoiseLeavesCleanImagesAlone), reaches
// one pass at 0.1575 and two at 0.2125, and rises 1/0.055 ≈ 18 passes per
// unit of σ̂, which bounds how much a small error in σ̂ can change.
const (
	smoothStep = autoHeavy - autoLight
	smoothLo   = autoLight - smoothStep/2
)

// smoothStrength returns DenoiseSmooth's strength s(σ̂), a continuous,
// non-decreasing, piecewise linear function of the noise level sd.
func smoothStrength(sd float64) float64 {
	if !(sd > smoothLo) { // also NaN
		return 0
	}
	return min(2, (sd-smoothLo)/smoothStep)
}

// smoothCoreK returns the coring factor k(s) of DenoiseSmooth at strength
// s: the coring width is k·σ̂, with k rising linearly from 0 (no filter) to
// autoCoreLight at one pass and then moving linearly to autoCoreHeavy at
// two, so it too is continuous and matches "auto" at whole passes.
func smoothCoreK(s float64) float64 {
	if s <= 1 {
		return s * autoCoreLight
	}
	return autoCoreLight + (s-1)*(autoCoreHeavy-autoCoreLight)
}

// smoothMedian writes src filtered by DenoiseSmooth at the noise level sd
// into dst: with m0 = src and m_k its k-fold 3×3 median, the image
// m_⌊s⌋ + (s − ⌊s⌋)·(m_⌊s⌋+1 − m_⌊s⌋) between the whole passes on either side
// of the strength s = smoothStrength(sd), then cored by smoothCoreK(s)·sd.
// Every pixel is a continuous function of sd, and at s = 0, 1 and 2 the
// result is exactly DenoiseAuto's with 0, 1 and 2 passes. tmp holds h·w
// values; none of the three may alias.
func smoothMedian(dst, src, tmp []float32, h, w int, sd float64) {
	s := smoothStrength(sd)
	if s <= 0 {
		copy(dst, src[:h*w])
		return
	}
	n := h * w
	median3(tmp, src, h, w) // one pass
	lo, hi := src[:n], tmp[:n]
	f := float32(s)
	if s > 1 {
		median3(dst, tmp, h, w) // two passes
		lo, hi, f = tmp[:n], dst[:n], float32(s-1)
	}
	if f != 1 {
		for i := range dst[:n] {
			dst[i] = lo[i] + f*(hi[i]-lo[i])
		}
	} else if s <= 1 {
		copy(dst, tmp[:n])
	}
	core(dst[:n], smoothCoreK(s)*sd)
}

// centerRobust writes src moved so that the centre of mass of its 3×3 grey
// opening (greyOpen3: lines and specks narrower than 3 px removed) lies at
// the image centre into dst, using tmp and tmp2 (h·w values each); when
// the opening leaves no mass it falls back to the plain centre of mass.
func centerRobust(dst, src, tmp, tmp2 []float32, h, w int) {
	greyOpen3(tmp, src, tmp2, h, w)
	dy, dx, ok := massShift(tmp, h, w)
	if !ok {
		dy, dx, _ = massShift(src, h, w)
	}
	shiftInto(dst, src, h, w, dy, dx)
}
