package datasets

import (
	"bytes"
	"fmt"
	"image"
	"image/jpeg"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"

	"github.com/striate/striate/internal/raster"
)

// HeldOutKind names one corruption of the held-out suite: kinds that are
// neither among the 15 MNIST-C corruptions nor among the six perturbation
// kinds of the development grid (noise, blur, rotation, shift, scale,
// contrast). The held-out suite exists to check, after the fact, that
// robustness won on the development suite carries over to conditions nobody
// looked at while choosing settings: it is never used to choose a setting,
// a threshold or a preset, and nothing in the library reads it except the
// scoring code.
//
// Five kinds are those of ImageNet-C (Hendrycks & Dietterich 2019,
// "Benchmarking Neural Network Robustness to Common Corruptions and
// Perturbations", ICLR), written from the paper's definitions; gamma is the
// power-law tone curve (Poynton 2003, "Digital Video and HDTV: Algorithms and
// Interfaces", ch. 23) and occlusion is Cutout's square patch (DeVries &
// Taylor 2017, "Improved Regularization of Convolutional Neural Networks with
// Cutout", arXiv:1708.04552). Each kind has severities 1…5. Severities whose
// source is ImageNet-C's public release are marked "(ImageNet-C, from
// memory)"; the others are our own spacing for 28×28 images. Pixel constants
// scale with the image as for CorruptionKind: f = min(h, w)/28. Images are
// h×w with values x in [0,1]; ũ is bilinear interpolation, zero off the
// pixel-centre grid (scipy.ndimage's order=1, mode='constant').
//
//	kind               definition                                        severities 1…5
//	speckle_noise      y = x + x·n, n ~ N(0, c²) per pixel                c = 0.15, 0.2, 0.35, 0.45, 0.6
//	                                                                     (ImageNet-C, from memory)
//	elastic_transform  Simard, Steinkraus & Platt 2003: u, v ~ U(−1, 1)   α = 16, 25, 34, 45, 60 (·f),
//	                   per pixel, each blurred by G_σ (zero outside);    σ = 4·f; 34 and 4 are Simard's
//	                   y(r, c) = ũ(r + α·v(r, c), c + α·u(r, c))          MNIST values (from memory)
//	pixelate           box-filter resize to ⌊w·c⌋×⌊h·c⌋ and back to w×h    c = 0.6, 0.5, 0.4, 0.3, 0.25
//	                   (ImageNet-C's PIL BOX resizes; see below)         (ImageNet-C, from memory)
//	jpeg_compression   baseline JPEG encode of round(255·x) at quality q  q = 25, 18, 15, 10, 7
//	                   and decode (Go's image/jpeg)                      (ImageNet-C, from memory)
//	defocus_blur       y = K ⋆ x, borders mirrored (d c b | a b c d);    r = 1, 1.5, 2, 2.5, 3 (·f);
//	                   K = the disc 1[i² + j² ≤ r²] normalised to sum 1,  σa = 0.5 (ImageNet-C's alias
//	                   smoothed by a 3-tap Gaussian of σa per axis        blur, from memory)
//	gamma              y = x^γ                                           γ = 1.5, 2, 3, 4, 5
//	occlusion          Cutout: centre (r0, c0) uniform over the pixels,   s = 6, 8, 10, 12, 14 (·f, even)
//	                   y = 0 on rows r0−s/2 … r0+s/2−1 × columns
//	                   c0−s/2 … c0+s/2−1 (clipped to the image), y = x
//	                   elsewhere
//
// The box resize follows the resampling of Pillow's Image.resize with the
// BOX filter: for output pixel j of n from m input pixels, the scale is
// s = m/n, the support is ½·max(s, 1) about the centre (j + ½)·s, and input
// pixel i gets weight 1 when (i + ½ − centre)/max(s, 1) lies in (−½, ½],
// weights normalised to sum 1; rows are resized first, then columns.
// Shrinking averages the input pixels whose centres fall in each output
// pixel's span, enlarging repeats the nearest one. The image is rounded to
// grey levels round(255·x) first and each pass rounds half up to a whole
// level, as Pillow's resize of an 8-bit image does.
//
// Every output is clipped to [0,1] and quantised to k/255 as for
// Corruption.
type HeldOutKind int

// The held-out kinds.
const (
	HeldSpeckleNoise HeldOutKind = iota + 1
	HeldElastic
	HeldPixelate
	HeldJPEG
	HeldDefocusBlur
	HeldGamma
	HeldOcclusion
)

var heldOutNames = []string{"speckle_noise", "elastic_transform", "pixelate", "jpeg_compression", "defocus_blur", "gamma", "occlusion"}

// HeldOutKinds returns the held-out kinds in the order of HeldOutKind.
func HeldOutKinds() []HeldOutKind {
	out := make([]HeldOutKind, len(heldOutNames))
	for i := range out {
		out[i] = HeldOutKind(i + 1)
	}
	return out
}

// String returns the kind's name ("speckle_noise", …, "occlusion").
func (k HeldOutKind) String() string {
	if k >= 1 && int(k) <= len(heldOutNames) {
		return heldOutNames[k-1]
	}
	return fmt.Sprintf("HeldOutKind(%d)", int(k))
}

// ParseHeldOutKind returns the held-out kind with the given name.
func ParseHeldOutKind(name string) (HeldOutKind, error) {
	for i, n := range heldOutNames {
		if n == name {
			return HeldOutKind(i + 1), nil
		}
	}
	return 0, fmt.Errorf("datasets: unknown held-out corruption %q; valid held-out corruptions are %s", name, strings.Join(heldOutNames, ", "))
}

// HeldOutDefaultSeverity is the severity a HeldOut of Severity 0 gets.
const HeldOutDefaultSeverity = 3

// HeldOut is one held-out corruption at one severity (a value type).
type HeldOut struct {
	Kind     HeldOutKind
	Severity int // 1…5; 0 means HeldOutDefaultSeverity
}

func (c HeldOut) severity() int {
	if c.Severity == 0 {
		return HeldOutDefaultSeverity
	}
	return c.Severity
}

// Validate checks the kind and the severity.
func (c HeldOut) Validate() error {
	if c.Kind < 1 || int(c.Kind) > len(heldOutNames) {
		return fmt.Errorf("datasets: unknown held-out corruption kind %d; valid held-out corruptions are %s", int(c.Kind), strings.Join(heldOutNames, ", "))
	}
	if c.Severity < 0 || c.Severity > MaxSeverity {
		return fmt.Errorf("datasets: held-out corruption %v severity %d outside %d…%d (0 means %d)",
			c.Kind, c.Severity, MinSeverity, MaxSeverity, HeldOutDefaultSeverity)
	}
	return nil
}

// String names the corruption as NAME-SEVERITY ("pixelate-4"), the severity
// resolved; ParseHeldOut reads it back.
func (c HeldOut) String() string { return c.Kind.String() + "-" + strconv.Itoa(c.severity()) }

// ParseHeldOut parses NAME or NAME-SEVERITY ("gamma", "gamma-5"); a bare
// name means HeldOutDefaultSeverity.
func ParseHeldOut(s string) (HeldOut, error) {
	name, sev, hasSev := strings.Cut(s, "-")
	k, err := ParseHeldOutKind(name)
	if err != nil {
		return HeldOut{}, fmt.Errorf("datasets: held-out corruption %q: unknown name %q; valid names are %s, optionally followed by -%d…%d, the severity",
			s, name, strings.Join(heldOutNames, ", "), MinSeverity, MaxSeverity)
	}
	c := HeldOut{Kind: k, Severity: HeldOutDefaultSeverity}
	if hasSev {
		n, err := strconv.Atoi(sev)
		if err != nil || n < MinSeverity || n > MaxSeverity {
			return HeldOut{}, fmt.Errorf("datasets: held-out corruption %q: severity %q is not a whole number in %d…%d", s, sev, MinSeverity, MaxSeverity)
		}
		c.Severity = n
	}
	return c, nil
}

// Severity tables, index severity−1 (see HeldOutKind).
var (
	speckleC     = [5]float64{0.15, 0.2, 0.35, 0.45, 0.6}
	elasticAlpha = [5]float64{16, 25, 34, 45, 60}
	pixelateC    = [5]float64{0.6, 0.5, 0.4, 0.3, 0.25}
	jpegQuality  = [5]int{25, 18, 15, 10, 7}
	defocusR     = [5]float64{1, 1.5, 2, 2.5, 3}
	gammaG       = [5]float64{1.5, 2, 3, 4, 5}
	occlusionS   = [5]float64{6, 8, 10, 12, 14}
)

const (
	elasticSigma = 4.0 // px, scaled by f
	defocusAlias = 0.5 // σa of the 3-tap smoothing of the disc
	tagHeldOut   = uint64(0xC1) << 8
)

// Apply writes the corrupted h×w row-major image src into dst[:h*w]: src
// clipped to [0,1], the corruption applied with its randomness drawn from
// seed only, the result clipped and quantised to k/255. dst may be src
// itself. It panics if the corruption is invalid (see Validate),
// len(src) != h*w or len(dst) < h*w.
func (c HeldOut) Apply(dst, src []float32, h, w int, seed uint64) {
	if err := c.Validate(); err != nil {
		panic(err.Error())
	}
	if h < 0 || w < 0 || len(src) != h*w || len(dst) < h*w {
		panic(fmt.Sprintf("datasets: held-out corrupt %d×%d: src has %d values, dst %d", h, w, len(src), len(dst)))
	}
	if h*w == 0 {
		return
	}
	x := make([]float64, h*w)
	for i, v := range src {
		x[i] = math.Min(1, math.Max(0, float64(v)))
	}
	y := make([]float64, h*w)
	c.render(y, x, h, w, newRand(ImageSeed(seed, int(c.Kind)), tagHeldOut))
	for i, v := range y {
		dst[i] = quantise(v)
	}
}

func (c HeldOut) render(y, x []float64, h, w int, r *rand.Rand) {
	s := c.severity() - 1
	f := float64(min(h, w)) / 28
	switch c.Kind {
	case HeldSpeckleNoise:
		for i, v := range x {
			y[i] = v + v*speckleC[s]*r.NormFloat64()
		}
	case HeldElastic:
		u, v := make([]float64, h*w), make([]float64, h*w)
		for i := range u {
			u[i] = 2*r.Float64() - 1
		}
		for i := range v {
			v[i] = 2*r.Float64() - 1
		}
		elastic(y, x, h, w, u, v, elasticAlpha[s]*f, elasticSigma*f)
	case HeldPixelate:
		c := pixelateC[s]
		sh, sw := max(1, int(float64(h)*c)), max(1, int(float64(w)*c))
		g, small := make([]int, h*w), make([]int, sh*sw)
		for i, v := range x {
			g[i] = int(math.Round(255 * v))
		}
		boxResize(small, sh, sw, g, h, w)
		boxResize(g, h, w, small, sh, sw)
		for i, v := range g {
			y[i] = float64(v) / 255
		}
	case HeldJPEG:
		jpegRoundTrip(y, x, h, w, jpegQuality[s])
	case HeldDefocusBlur:
		k := defocusKernel(defocusR[s]*f, defocusAlias)
		correlateMirror(y, x, h, w, k)
	case HeldGamma:
		for i, v := range x {
			y[i] = math.Pow(v, gammaG[s])
		}
	case HeldOcclusion:
		side := 2 * max(1, int(math.Round(occlusionS[s]*f/2)))
		r0, c0 := r.IntN(h), r.IntN(w)
		copy(y, x)
		for row := max(0, r0-side/2); row < min(h, r0+side/2); row++ {
			clear(y[row*w+max(0, c0-side/2) : row*w+min(w, c0+side/2)])
		}
	}
}

// elastic resamples x at (r + α·v, c + α·u) with u and v blurred by G_σ
// (zero outside); u and v are overwritten.
func elastic(y, x []float64, h, w int, u, v []float64, alpha, sigma float64) {
	blur(u, u, h, w, sigma)
	blur(v, v, h, w, sigma)
	for row := range h {
		for col := range w {
			i := row*w + col
			y[i] = raster.BilinearInside(x, h, w, float64(row)+alpha*v[i], float64(col)+alpha*u[i])
		}
	}
}

// boxSpans returns, for resizing m samples to n with the box filter (see
// HeldOutKind), the inputs [lo[j], hi[j]) of weight 1 for each output j:
// those with (i + ½ − centre)/max(s, 1) in (−½, ½], a run of neighbours.
func boxSpans(n, m int) (lo, hi []int) {
	scale := float64(m) / float64(n)
	fs := math.Max(scale, 1)
	support := 0.5 * fs
	lo, hi = make([]int, n), make([]int, n)
	for j := range n {
		centre := (float64(j) + 0.5) * scale
		lo[j], hi[j] = min(m, max(0, int(centre-support+0.5))), min(m, int(centre+support+0.5))
		for lo[j] < hi[j] && !((float64(lo[j])+0.5-centre)/fs > -0.5) {
			lo[j]++
		}
		for hi[j] > lo[j] && !((float64(hi[j]-1)+0.5-centre)/fs <= 0.5) {
			hi[j]--
		}
	}
	return lo, hi
}

// boxResize resizes the sh×sw grey-level image src (whole numbers 0…255)
// to dh×dw into dst: rows first, then columns, each output the mean of its
// span rounded half up to a whole grey level (exactly, in integers).
func boxResize(dst []int, dh, dw int, src []int, sh, sw int) {
	tmp := make([]int, sh*dw)
	lo, hi := boxSpans(dw, sw)
	boxPass(tmp, src, sh, lo, hi, sw, 1, dw, 1) // each row: sw → dw
	lo, hi = boxSpans(dh, sh)
	boxPass(dst, tmp, dw, lo, hi, 1, dw, 1, dw) // each column: sh → dh
}

// boxPass resizes lines of src into dst along one axis: output j of line l
// is the rounded mean of src[l·srcLine + i·srcStep] for i in [lo[j], hi[j]),
// stored at dst[l·dstLine + j·dstStep].
func boxPass(dst, src []int, lines int, lo, hi []int, srcLine, srcStep, dstLine, dstStep int) {
	for l := range lines {
		for j := range lo {
			sum, n := 0, hi[j]-lo[j]
			for i := lo[j]; i < hi[j]; i++ {
				sum += src[l*srcLine+i*srcStep]
			}
			v := 0
			if n > 0 {
				v = (2*sum + n) / (2 * n)
			}
			dst[l*dstLine+j*dstStep] = v
		}
	}
}

// jpegRoundTrip encodes round(255·x) as a baseline greyscale JPEG of the
// given quality with Go's image/jpeg and decodes it into y.
func jpegRoundTrip(y, x []float64, h, w, quality int) {
	g := image.NewGray(image.Rect(0, 0, w, h))
	for i, v := range x {
		g.Pix[i] = uint8(math.Round(255 * v))
	}
	var buf bytes.Buffer
	if err := jpeg.Encode(&buf, g, &jpeg.Options{Quality: quality}); err != nil {
		panic("datasets: jpeg_compression: encode: " + err.Error()) // writing to memory cannot fail
	}
	img, err := jpeg.Decode(&buf)
	if err != nil {
		panic("datasets: jpeg_compression: decode of our own stream: " + err.Error())
	}
	d, ok := img.(*image.Gray)
	if !ok {
		panic(fmt.Sprintf("datasets: jpeg_compression: decoded a %T, want *image.Gray", img))
	}
	for row := range h {
		for col := range w {
			y[row*w+col] = float64(d.Pix[row*d.Stride+col]) / 255
		}
	}
}

// defocusKernel returns the (2L+1)×(2L+1) kernel of defocus_blur, L =
// ⌈r⌉ + 2, as rows: the disc of radius r normalised to sum 1, smoothed along
// each axis by the 3-tap Gaussian of σa. The two outer rings are 0, so the
// mirrored border of the smoothing adds nothing and the sum stays 1, as on
// ImageNet-C's 17×17 grid.
func defocusKernel(r, sigmaA float64) [][]float64 {
	l := int(math.Ceil(r)) + 2
	n := 2*l + 1
	d := make([]float64, n*n)
	var sum float64
	for i := -l; i <= l; i++ {
		for j := -l; j <= l; j++ {
			if float64(i*i+j*j) <= r*r {
				d[(i+l)*n+j+l] = 1
				sum++
			}
		}
	}
	for i := range d {
		d[i] /= sum
	}
	g := raster.Gaussian(sigmaA, 1)
	smooth := make([]float64, n*n)
	correlateMirror(smooth, d, n, n, [][]float64{g})
	out := make([]float64, n*n)
	col := [][]float64{{g[0]}, {g[1]}, {g[2]}}
	correlateMirror(out, smooth, n, n, col)
	k := make([][]float64, n)
	for i := range k {
		k[i] = out[i*n : (i+1)*n]
	}
	return k
}

// mirror maps index i into [0, n) by whole-sample reflection (d c b | a b c
// d | c b a; scipy.ndimage's mode='mirror', OpenCV's BORDER_REFLECT_101).
func mirror(i, n int) int {
	if n == 1 {
		return 0
	}
	p := 2 * (n - 1)
	i %= p
	if i < 0 {
		i += p
	}
	if i >= n {
		i = p - i
	}
	return i
}

// correlateMirror sets y = k ⋆ x (correlation, kernel centred, odd sides)
// with mirrored borders.
func correlateMirror(y, x []float64, h, w int, k [][]float64) {
	kh, kw := len(k), len(k[0])
	oy, ox := kh/2, kw/2
	for row := range h {
		for col := range w {
			var s float64
			for a, kr := range k {
				sr := mirror(row+a-oy, h) * w
				for b, kv := range kr {
					s += kv * x[sr+mirror(col+b-ox, w)]
				}
			}
			y[row*w+col] = s
		}
	}
}
