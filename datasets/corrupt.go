package datasets

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
)

// CorruptionKind names one of the 15 corruptions of MNIST-C (Mu & Gilmer
// 2019, "MNIST-C: A Robustness Benchmark for Computer Vision",
// arXiv:1906.02337), written from the paper's definitions and the parameters
// of its public release. Each kind has five severities; severity 3
// (PublishedSeverity) is the published parameter, the others are spaced
// around it (our choice). Images are h×w with values x in [0,1]; rows r,
// columns c, centre ((h−1)/2, (w−1)/2). Pixel constants are scaled to the
// image: f = min(h, w)/28 for lengths and widths, h/28 and w/28 for row and
// column extents, so a 56×56 image gets twice the pixel constants of a 28×28
// one. ũ is bilinear interpolation, zero outside the pixel-centre grid (as in
// Perturbation); G_σ is the Gaussian blur of the package ("Perturbations" in
// the package documentation), with edge-replicated borders ("nearest") where
// noted.
//
//	kind           definition                                            severities 1…5 (3 = published)
//	shot_noise     y = Poisson(λx)/λ per pixel                           λ = 12, 6, 3, 1.5, 0.75
//	impulse_noise  each pixel with probability p set to 0 or 1            p = 0.05, 0.10, 0.17, 0.25, 0.35
//	               (equal odds)
//	glass_blur     x ← G_σ x (nearest); iters passes over rows h−δ…δ+1,  (σ, δ, iters) = (0.5,1,1), (0.6,1,2),
//	               columns w−δ…δ+1 (both downwards): with probability ½    (0.7,1,2), (0.85,2,2), (1.0,2,3);
//	               swap the pixel with the one at an offset drawn          σ·f, δ·f
//	               uniformly from [−δ, δ) per axis; y = G_σ x (nearest)
//	motion_blur    y(p) = Σ_{j=0..R} k_j x(p + round(j·(sin φ, cos φ))),   (R, s) = (10,1), (10,2), (10,3), (12,4),
//	               k_j ∝ exp(−j²/2s²), φ ~ U[−45°, 45°] (0 = along a row,  (15,5); R·f, s·f
//	               positive down), edges replicated
//	shear          y(q) = ũ(c + [[1, 0], [±k, 1]]·(q − c)), sign random    k = 0.2, 0.3, 0.4, 0.5, 0.6
//	scale          y(q) = ũ(c + (q − c)/z)  (z < 1 shrinks the item)        z = 0.9, 0.8, 0.7, 0.6, 0.5
//	rotate         y(q) = ũ(c + R(±θ)·(q − c)), sign random, as Rotate    θ = 0.2, 0.3, 0.4, 0.55, 0.7 rad
//	brightness     y = min(x + b, 1) (the HSV value channel of a grey)    b = 0.2, 0.35, 0.5, 0.65, 0.8
//	translate      shift by (±round(d·h/28), ±round(d·w/28)) px,          d = 1, 2, 3, 4, 5
//	               independent random signs, zero fill
//	stripe         y = 1 − x in the n leftmost and n rightmost columns    n = 3, 5, 7, 9, 11 (·w/28)
//	fog            y = (x + a·F)·m/(m + a), m = max(x), F the top-left    a = 1.5, 2.25, 3, 4, 5; w = 1.4
//	               h×w of a plasma fractal (see below), decay w
//	spatter        L ~ N(μ, (s·f)²) per pixel; L ← G_σ1 L (nearest);       μ = 0.57, 0.61, 0.65, 0.69, 0.73;
//	               m = G_σ2 1[L > t] (nearest), m ← 0 where m < 0.8;         s = 0.3, σ1 = 1·f, t = 0.65,
//	               y = x·(1 − m) + (63/255)·m                              σ2 = 1.5·f
//	dotted_line    n lines from (r0, 0) to (r1, w−1), r0, r1 ~ U{0…h−2};  (n, ρ) = (1,1.5), (1,1.9), (1,2.3),
//	               intensity I(d) = 1 + ln(1 − d/ρ) at distance d < ρ      (2,2.3), (3,2.3); ρ·f
//	               (clipped to [0,1]), columns in odd runs of
//	               round(2·w/28) blanked; y = min(x + max I, 1)
//	zigzag         n zig-zag polylines from column c0 = round(2·w/28) to   (n, ρ) as dotted_line; a = b = 2·f
//	               w−1−c0, start row r0 ~ U{t…h−1}, t = round(b), end row
//	               r0 + round(U{−5…4}·h/28) (clipped to t…h−1), vertices
//	               every a px along that direction, every second one
//	               lifted by b px across it; each segment drawn with I(d),
//	               unbroken; y = min(x + max I, 1)
//	canny_edges    y = Canny edge map of x (1 on edges, 0 elsewhere),      σ = 0.5, 0.75, 1, 1.5, 2 (·f)
//	               Gaussian σ, hysteresis thresholds 0.1 and 0.2 on the
//	               Sobel gradient magnitude (scikit-image feature.canny's
//	               defaults)
//
// The published set fixes one severity per corruption; for dotted_line and
// zigzag, which have no parameter there, the published form is one line of
// reach ρ = 2.3 px. Every output is clipped to [0,1] and quantised to the
// nearest grey level k/255, as the published set is stored in bytes.
//
// The plasma fractal is the diamond-square construction (Fournier, Fussell
// & Carpenter 1982) on an M×M torus (M = 256 at 28×28, scaled by powers of
// two with the image side): the corner starts at 0; each halving of the step
// sets square centres to the mean of their four corners and then diamond
// points to the mean of their four neighbours, each plus a uniform draw in
// ±A_k, with A_{k+1} = A_k/w² (from memory of the public generator, which
// multiplies a uniform draw in ±a by a and divides a by w per level); the
// map is then shifted and scaled to [0,1].
//
// Canny (Canny 1986) follows scikit-image 0.19's feature.canny with
// mode='constant': Gaussian smoothing zero outside, divided by the smoothed
// all-ones image; Sobel derivatives with mirrored borders; non-maximum
// suppression interpolating between the two neighbours on each side along
// the gradient; border pixels never edges; hysteresis by 8-connected
// components of the low-threshold points that hold a high-threshold point.
type CorruptionKind int

// The 15 MNIST-C corruptions, in the paper's order.
const (
	CorruptShotNoise CorruptionKind = iota + 1
	CorruptImpulseNoise
	CorruptGlassBlur
	CorruptMotionBlur
	CorruptShear
	CorruptScale
	CorruptRotate
	CorruptBrightness
	CorruptTranslate
	CorruptStripe
	CorruptFog
	CorruptSpatter
	CorruptDottedLine
	CorruptZigzag
	CorruptCannyEdges
)

// corruptionNames are the names of the kinds (MNIST-C's folder names),
// index kind−1.
var corruptionNames = []string{"shot_noise", "impulse_noise", "glass_blur", "motion_blur", "shear", "scale", "rotate",
	"brightness", "translate", "stripe", "fog", "spatter", "dotted_line", "zigzag", "canny_edges"}

// CorruptionKinds returns the 15 kinds in the paper's order.
func CorruptionKinds() []CorruptionKind {
	out := make([]CorruptionKind, len(corruptionNames))
	for i := range out {
		out[i] = CorruptionKind(i + 1)
	}
	return out
}

// String returns the kind's name ("shot_noise", …, "canny_edges").
func (k CorruptionKind) String() string {
	if k >= 1 && int(k) <= len(corruptionNames) {
		return corruptionNames[k-1]
	}
	return fmt.Sprintf("CorruptionKind(%d)", int(k))
}

// validCorruptions lists the names for error messages.
func validCorruptions() string { return strings.Join(corruptionNames, ", ") }

// ParseCorruptionKind returns the kind with the given name.
func ParseCorruptionKind(name string) (CorruptionKind, error) {
	for i, n := range corruptionNames {
		if n == name {
			return CorruptionKind(i + 1), nil
		}
	}
	return 0, fmt.Errorf("datasets: unknown corruption %q; valid corruptions are %s", name, validCorruptions())
}

// Severity limits; PublishedSeverity is the severity holding the parameter
// of the published MNIST-C set.
const (
	MinSeverity       = 1
	MaxSeverity       = 5
	PublishedSeverity = 3
)

// Corruption is one MNIST-C corruption at one severity (a value type).
// Severity 0 means PublishedSeverity.
type Corruption struct {
	Kind     CorruptionKind
	Severity int // 1…5; 0 means PublishedSeverity
}

// severity returns the resolved severity.
func (c Corruption) severity() int {
	if c.Severity == 0 {
		return PublishedSeverity
	}
	return c.Severity
}

// Validate checks the kind and the severity.
func (c Corruption) Validate() error {
	if c.Kind < 1 || int(c.Kind) > len(corruptionNames) {
		return fmt.Errorf("datasets: unknown corruption kind %d; valid corruptions are %s", int(c.Kind), validCorruptions())
	}
	if c.Severity < 0 || c.Severity > MaxSeverity {
		return fmt.Errorf("datasets: corruption %v severity %d outside %d…%d (0 means the published severity %d)",
			c.Kind, c.Severity, MinSeverity, MaxSeverity, PublishedSeverity)
	}
	return nil
}

// String names the corruption as NAME-SEVERITY ("shot_noise-3"), the
// severity resolved; ParseCorruption reads it back.
func (c Corruption) String() string {
	return c.Kind.String() + "-" + strconv.Itoa(c.severity())
}

// ParseCorruption parses NAME or NAME-SEVERITY ("fog", "fog-5"); a bare name
// means PublishedSeverity.
func ParseCorruption(s string) (Corruption, error) {
	name, sev, hasSev := strings.Cut(s, "-")
	k, err := ParseCorruptionKind(name)
	if err != nil {
		return Corruption{}, fmt.Errorf("datasets: corruption %q: unknown name %q; valid names are %s, optionally followed by -%d…%d, the severity",
			s, name, validCorruptions(), MinSeverity, MaxSeverity)
	}
	c := Corruption{Kind: k, Severity: PublishedSeverity}
	if hasSev {
		n, err := strconv.Atoi(sev)
		if err != nil || n < MinSeverity || n > MaxSeverity {
			return Corruption{}, fmt.Errorf("datasets: corruption %q: severity %q is not a whole number in %d…%d", s, sev, MinSeverity, MaxSeverity)
		}
		c.Severity = n
	}
	return c, nil
}

// Severity tables, index severity−1 (see CorruptionKind).
var (
	shotLambda  = [5]float64{12, 6, 3, 1.5, 0.75}
	impulseP    = [5]float64{0.05, 0.10, 0.17, 0.25, 0.35}
	glassParams = [5]struct {
		sigma        float64
		delta, iters int
	}{{0.5, 1, 1}, {0.6, 1, 2}, {0.7, 1, 2}, {0.85, 2, 2}, {1.0, 2, 3}}
	motionParams = [5][2]float64{{10, 1}, {10, 2}, {10, 3}, {12, 4}, {15, 5}} // radius R, spread s (px)
	shearK       = [5]float64{0.2, 0.3, 0.4, 0.5, 0.6}
	scaleZ       = [5]float64{0.9, 0.8, 0.7, 0.6, 0.5}
	rotateTheta  = [5]float64{0.2, 0.3, 0.4, 0.55, 0.7}
	brightnessB  = [5]float64{0.2, 0.35, 0.5, 0.65, 0.8}
	translateD   = [5]float64{1, 2, 3, 4, 5}
	stripeCols   = [5]float64{3, 5, 7, 9, 11}
	fogA         = [5]float64{1.5, 2.25, 3, 4, 5}
	spatterMu    = [5]float64{0.57, 0.61, 0.65, 0.69, 0.73}
	lineParams   = [5]struct{ n, rho float64 }{{1, 1.5}, {1, 1.9}, {1, 2.3}, {2, 2.3}, {3, 2.3}}
	cannySigma   = [5]float64{0.5, 0.75, 1, 1.5, 2}
)

// Fixed constants of the published definitions.
const (
	fogDecay       = 1.4  // plasma fractal decay w
	spatterSD      = 0.3  // liquid layer spread s (scaled by f)
	spatterSigma1  = 1.0  // px, scaled by f
	spatterThresh  = 0.65 // t
	spatterSigma2  = 1.5  // px, scaled by f
	spatterMaskMin = 0.8  // mask values below are set to 0
	spatterColour  = 63.0 / 255
	cannyLow       = 0.1  // scikit-image feature.canny default low threshold (float images)
	cannyHigh      = 0.2  // and high threshold
	motionMaxAngle = 45.0 // degrees
	zigzagTooth    = 2.0  // a = b, px, scaled by f
	tagCorrupt     = uint64(0xC0) << 8
)

// Apply writes the corrupted h×w row-major image src into dst[:h*w]:
// src values are clipped to [0,1], the corruption applied with its
// randomness drawn from seed only, and the result clipped to [0,1] and
// quantised to k/255. dst may be src itself. It panics if the corruption is
// invalid (see Validate), len(src) != h*w or len(dst) < h*w.
func (c Corruption) Apply(dst, src []float32, h, w int, seed uint64) {
	if err := c.Validate(); err != nil {
		panic(err.Error())
	}
	if h < 0 || w < 0 || len(src) != h*w || len(dst) < h*w {
		panic(fmt.Sprintf("datasets: corrupt %d×%d: src has %d values, dst %d", h, w, len(src), len(dst)))
	}
	if h*w == 0 {
		return
	}
	y := make([]float64, h*w)
	c.render(y, src, h, w, corruptRand(seed, c.Kind))
	for i, v := range y {
		dst[i] = quantise(v)
	}
}

// corruptRand returns the stream of kind k for seed. The seed goes through
// ImageSeed's mixing first: PCG's first outputs for nearby seeds share their
// top bits, which the random signs use.
func corruptRand(seed uint64, k CorruptionKind) *rand.Rand {
	return newRand(ImageSeed(seed, int(k)), tagCorrupt)
}

// quantise clips v to [0,1] and rounds it to the nearest k/255, computed as
// Set.Float does (float32(k)/255), so a Set made from the result reads back
// the same values.
func quantise(v float64) float32 {
	return float32(math.Round(255*math.Min(1, math.Max(0, v)))) / 255
}

// render writes the unclipped, unquantised corrupted image into y.
func (c Corruption) render(y []float64, src []float32, h, w int, r *rand.Rand) {
	s := c.severity() - 1
	f := float64(min(h, w)) / 28
	fy, fx := float64(h)/28, float64(w)/28
	x := make([]float64, len(src))
	for i, v := range src {
		x[i] = math.Min(1, math.Max(0, float64(v)))
	}
	sign := func() float64 {
		if r.Uint64()>>63 == 0 {
			return -1
		}
		return 1
	}
	switch c.Kind {
	case CorruptShotNoise:
		l := shotLambda[s]
		for i, v := range x {
			y[i] = float64(poisson(r, l*v)) / l
		}
	case CorruptImpulseNoise:
		p := impulseP[s]
		for i, v := range x {
			y[i] = v
			if r.Float64() < p {
				y[i] = float64(r.Uint64() >> 63)
			}
		}
	case CorruptGlassBlur:
		g := glassParams[s]
		glassBlur(y, x, h, w, g.sigma*f, max(1, int(math.Round(float64(g.delta)*f))), g.iters, r)
	case CorruptMotionBlur:
		m := motionParams[s]
		phi := (2*r.Float64() - 1) * motionMaxAngle * math.Pi / 180
		motionBlur(y, x, h, w, int(math.Round(m[0]*f)), m[1]*f, phi)
	case CorruptShear:
		k := shearK[s] * sign()
		warpTo(y, src, h, w, 1, 0, k, 1)
	case CorruptScale:
		z := 1 / scaleZ[s]
		warpTo(y, src, h, w, z, 0, 0, z)
	case CorruptRotate:
		t := rotateTheta[s] * sign()
		co, si := math.Cos(t), math.Sin(t)
		warpTo(y, src, h, w, co, si, -si, co)
	case CorruptBrightness:
		for i, v := range x {
			y[i] = v + brightnessB[s]
		}
	case CorruptTranslate:
		dy := sign() * math.Round(translateD[s]*fy)
		dx := sign() * math.Round(translateD[s]*fx)
		tmp := make([]float32, h*w)
		shiftImage(tmp, src, h, w, int(dx), int(dy))
		for i, v := range tmp {
			y[i] = float64(v)
		}
	case CorruptStripe:
		n := int(math.Round(stripeCols[s] * fx))
		for i, v := range x {
			if col := i % w; col < n || col >= w-n {
				v = 1 - v
			}
			y[i] = v
		}
	case CorruptFog:
		fog(y, x, h, w, fogA[s], r)
	case CorruptSpatter:
		m := spatterMask(h, w, spatterMu[s], f, r)
		for i, v := range x {
			y[i] = v*(1-m[i]) + spatterColour*m[i]
		}
	case CorruptDottedLine, CorruptZigzag:
		p := lineParams[s]
		lines := make([]float64, h*w)
		for range int(p.n) {
			if c.Kind == CorruptDottedLine {
				dottedLine(lines, h, w, p.rho*f, r)
			} else {
				zigzag(lines, h, w, p.rho*f, r)
			}
		}
		for i, v := range x {
			y[i] = v + lines[i]
		}
	case CorruptCannyEdges:
		e := cannyEdges(x, h, w, cannySigma[s]*f, cannyLow, cannyHigh)
		for i, on := range e {
			y[i] = 0
			if on {
				y[i] = 1
			}
		}
	}
}

// poisson draws from the Poisson distribution of mean mu ≥ 0 by Knuth's
// product-of-uniforms method (TAOCP vol. 2, §3.4.1), exact and fast for the
// means used here (at most 12).
func poisson(r *rand.Rand, mu float64) int {
	if mu <= 0 {
		return 0
	}
	limit := math.Exp(-mu)
	p := 1.0
	for k := 0; ; k++ {
		p *= r.Float64()
		if p <= limit {
			return k
		}
	}
}

// warpTo is warp (perturb.go) into a float64 destination.
func warpTo(y []float64, src []float32, h, w int, ayy, ayx, axy, axx float64) {
	tmp := make([]float32, h*w)
	warp(tmp, src, h, w, ayy, ayx, axy, axx)
	for i, v := range tmp {
		y[i] = float64(v)
	}
}

// blurNearest is blur with edge-replicated borders (scipy.ndimage's
// mode='nearest'): the image is padded by the kernel radius with copies of
// its edge pixels and blurred zero-outside, and the interior kept.
func blurNearest(dst, src []float64, h, w int, sigma float64) {
	r := int(BlurTruncate*sigma + 0.5)
	ph, pw := h+2*r, w+2*r
	pad := make([]float64, ph*pw)
	for y := range ph {
		sy := min(max(y-r, 0), h-1)
		for x := range pw {
			pad[y*pw+x] = src[sy*w+min(max(x-r, 0), w-1)]
		}
	}
	blur(pad, pad, ph, pw, sigma)
	for y := range h {
		copy(dst[y*w:(y+1)*w], pad[(y+r)*pw+r:(y+r)*pw+r+w])
	}
}

// glassBlur is MNIST-C's glass blur: blur, local random swaps, blur.
func glassBlur(y, x []float64, h, w int, sigma float64, delta, iters int, r *rand.Rand) {
	t := make([]float64, h*w)
	blurNearest(t, x, h, w, sigma)
	for range iters {
		for row := h - delta; row > delta; row-- {
			for col := w - delta; col > delta; col-- {
				if r.Uint64()>>63 == 0 {
					continue
				}
				dx := r.IntN(2*delta) - delta
				dy := r.IntN(2*delta) - delta
				a, b := row*w+col, (row+dy)*w+col+dx
				t[a], t[b] = t[b], t[a]
			}
		}
	}
	blurNearest(y, t, h, w, sigma)
}

// motionBlur smears x along direction phi (radians, 0 along a row, positive
// turning down) with the one-sided Gaussian streak of radius R and spread s.
func motionBlur(y, x []float64, h, w, radius int, s, phi float64) {
	k := make([]float64, radius+1)
	oy, ox := make([]int, radius+1), make([]int, radius+1)
	var sum float64
	for j := range k {
		k[j] = math.Exp(-float64(j*j) / (2 * s * s))
		sum += k[j]
		oy[j] = int(math.Round(float64(j) * math.Sin(phi)))
		ox[j] = int(math.Round(float64(j) * math.Cos(phi)))
	}
	for row := range h {
		for col := range w {
			var v float64
			for j, kj := range k {
				sy := min(max(row+oy[j], 0), h-1)
				sx := min(max(col+ox[j], 0), w-1)
				v += kj * x[sy*w+sx]
			}
			y[row*w+col] = v / sum
		}
	}
}

// fog adds a plasma fractal of weight a and rescales by m/(m+a).
func fog(y, x []float64, h, w int, a float64, r *rand.Rand) {
	n := plasmaSize(h, w)
	p := make([]float64, n*n)
	plasmaFractal(p, n, fogDecay, r)
	var m float64
	for _, v := range x {
		m = math.Max(m, v)
	}
	for row := range h {
		for col := range w {
			i := row*w + col
			y[i] = (x[i] + a*p[row*n+col]) * m / (m + a)
		}
	}
}

// spatterMask returns spatter's mask m (values 0 or in [0.8, 1]).
func spatterMask(h, w int, mu, f float64, r *rand.Rand) []float64 {
	l := make([]float64, h*w)
	for i := range l {
		l[i] = mu + spatterSD*f*r.NormFloat64()
	}
	blurNearest(l, l, h, w, spatterSigma1*f)
	for i, v := range l {
		l[i] = 0
		if v > spatterThresh {
			l[i] = 1
		}
	}
	m := make([]float64, h*w)
	blurNearest(m, l, h, w, spatterSigma2*f)
	for i, v := range m {
		if v < spatterMaskMin {
			m[i] = 0
		}
	}
	return m
}
