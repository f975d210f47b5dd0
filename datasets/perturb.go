package datasets

import (
	"github.com/striate/striate/internal/raster"

	"fmt"
	"math"
	"strconv"
	"strings"
)

// PerturbKind selects a perturbation; the formulas are in the package
// documentation (doc.go, "Perturbations").
type PerturbKind int

const (
	None     PerturbKind = iota // identity
	Noise                       // additive Gaussian noise, Level = σ in [0,1] pixel units, clipped to [0,1]
	Shift                       // integer shift with zero fill, Level = pixels, Dir = direction 0..7
	Rotate                      // rotation about the centre, Level = degrees counter-clockwise as displayed
	Scale                       // scaling about the centre, Level = factor (> 1 enlarges)
	Blur                        // Gaussian blur, Level = σ in pixels
	Contrast                    // contrast scaling about the image mean, Level = factor, clipped to [0,1]
)

var kindNames = []string{"none", "noise", "shift", "rot", "scale", "blur", "contrast"}

// String returns the short name used in Perturbation.String.
func (k PerturbKind) String() string {
	if k >= 0 && int(k) < len(kindNames) {
		return kindNames[k]
	}
	return fmt.Sprintf("PerturbKind(%d)", int(k))
}

// ShiftDirs are the unit steps (dx, dy) of the eight shift directions, with x
// to the right and y down, counter-clockwise from east: Dir 0 E, 1 NE, 2 N,
// 3 NW, 4 W, 5 SW, 6 S, 7 SE. A diagonal shift by L moves L pixels along
// each axis.
var ShiftDirs = [8][2]int{{1, 0}, {1, -1}, {0, -1}, {-1, -1}, {-1, 0}, {-1, 1}, {0, 1}, {1, 1}}

var dirNames = []string{"e", "ne", "n", "nw", "w", "sw", "s", "se"}

// Perturbation is one deterministic image perturbation (a value type; the
// zero value is the identity).
type Perturbation struct {
	Kind  PerturbKind
	Level float64
	Dir   int // Shift only: 0..7, see ShiftDirs
}

// MaxShift bounds Shift levels (a shift beyond any image size is pointless,
// and the bound keeps the integer conversion exact).
const MaxShift = 1 << 20

// Validate checks the level range of the kind.
func (p Perturbation) Validate() error {
	l := p.Level
	if math.IsNaN(l) || math.IsInf(l, 0) {
		return fmt.Errorf("datasets: perturbation %v level %v is not finite", p.Kind, l)
	}
	switch p.Kind {
	case None:
	case Noise:
		if l < 0 || l > 1 {
			return fmt.Errorf("datasets: noise σ %g outside [0,1] (pixel units)", l)
		}
	case Shift:
		if l < 0 || l > MaxShift || l != math.Trunc(l) {
			return fmt.Errorf("datasets: shift %g must be a whole number of pixels in 0..%d", l, MaxShift)
		}
		if p.Dir < 0 || p.Dir > 7 {
			return fmt.Errorf("datasets: shift direction %d outside 0..7 (E, NE, N, NW, W, SW, S, SE)", p.Dir)
		}
	case Rotate:
	case Scale:
		if l <= 0 {
			return fmt.Errorf("datasets: scale factor %g must be > 0 (1 is the identity)", l)
		}
	case Blur:
		if l < 0 {
			return fmt.Errorf("datasets: blur σ %g must be ≥ 0 pixels", l)
		}
	case Contrast:
		if l < 0 {
			return fmt.Errorf("datasets: contrast factor %g must be ≥ 0 (1 is the identity)", l)
		}
	default:
		return fmt.Errorf("datasets: unknown perturbation kind %d", int(p.Kind))
	}
	return nil
}

// String names the perturbation: "none", "noise-0.3", "shift-4-ne",
// "rot-30", "scale-1.2", "blur-1.5", "contrast-0.5". ParsePerturbation reads
// it back.
func (p Perturbation) String() string {
	if p.Kind == None {
		return "none"
	}
	s := p.Kind.String() + "-" + strconv.FormatFloat(p.Level, 'g', -1, 64)
	if p.Kind == Shift {
		if p.Dir >= 0 && p.Dir < 8 {
			s += "-" + dirNames[p.Dir]
		} else {
			s += "-dir" + strconv.Itoa(p.Dir)
		}
	}
	return s
}

// ParsePerturbation parses the form written by String (a shift without a
// direction means east) and validates it.
func ParsePerturbation(s string) (Perturbation, error) {
	if s == "none" || s == "" {
		return Perturbation{}, nil
	}
	parts := strings.Split(s, "-")
	// A negative level ("rot--30") leaves an empty part before the number.
	if len(parts) >= 3 && parts[1] == "" {
		parts = append([]string{parts[0], "-" + parts[2]}, parts[3:]...)
	}
	bad := fmt.Errorf("datasets: perturbation %q not of the form none, noise-S, shift-N[-e|ne|n|nw|w|sw|s|se], rot-DEG, scale-F, blur-S, contrast-F", s)
	if len(parts) < 2 {
		return Perturbation{}, bad
	}
	var p Perturbation
	k := -1
	for i, n := range kindNames {
		if n == parts[0] {
			k = i
		}
	}
	if k <= 0 {
		return Perturbation{}, bad
	}
	p.Kind = PerturbKind(k)
	l, err := strconv.ParseFloat(parts[1], 64)
	if err != nil {
		return Perturbation{}, bad
	}
	p.Level = l
	switch {
	case len(parts) == 3 && p.Kind == Shift:
		p.Dir = -1
		for i, n := range dirNames {
			if n == parts[2] {
				p.Dir = i
			}
		}
		if p.Dir < 0 {
			return Perturbation{}, bad
		}
	case len(parts) != 2:
		return Perturbation{}, bad
	}
	return p, p.Validate()
}

// Apply writes the perturbed h×w row-major image src into dst[:h*w]. seed
// drives the random draws (Noise only), so equal arguments give equal
// output. dst may be src itself, but must not overlap it otherwise. It panics
// if the perturbation is invalid (see Validate), len(src) != h*w or
// len(dst) < h*w.
func (p Perturbation) Apply(dst, src []float32, h, w int, seed uint64) {
	if err := p.Validate(); err != nil {
		panic(err.Error())
	}
	if h < 0 || w < 0 || len(src) != h*w || len(dst) < h*w {
		panic(fmt.Sprintf("datasets: perturb %d×%d: src has %d values, dst %d", h, w, len(src), len(dst)))
	}
	if h*w == 0 {
		return
	}
	dst = dst[:h*w]
	if &dst[0] == &src[0] && p.Kind != None && p.Kind != Noise && p.Kind != Contrast {
		src = append([]float32(nil), src...)
	}
	switch p.Kind {
	case None:
		copy(dst, src)
	case Noise:
		r := newRand(seed, tagNoise)
		for i, v := range src {
			dst[i] = clip01(float64(v) + p.Level*r.NormFloat64())
		}
	case Shift:
		d := ShiftDirs[p.Dir]
		shiftImage(dst, src, h, w, d[0]*int(p.Level), d[1]*int(p.Level))
	case Rotate:
		t := p.Level * math.Pi / 180
		c, s := math.Cos(t), math.Sin(t)
		// source = centre + [[c, s], [−s, c]] · (target − centre), as (y, x)
		warp(dst, src, h, w, c, s, -s, c)
	case Scale:
		k := 1 / p.Level
		warp(dst, src, h, w, k, 0, 0, k)
	case Blur:
		blur(dst, src, h, w, p.Level)
	case Contrast:
		var m float64
		for _, v := range src {
			m += float64(v)
		}
		m /= float64(len(src))
		for i, v := range src {
			dst[i] = clip01(m + p.Level*(float64(v)-m))
		}
	}
}

func clip01(v float64) float32 {
	return float32(math.Min(1, math.Max(0, v)))
}

// shiftImage moves the content by (dx, dy) pixels, filling with zeros.
func shiftImage(dst, src []float32, h, w, dx, dy int) {
	for y := 0; y < h; y++ {
		row := dst[y*w : (y+1)*w]
		sy := y - dy
		if sy < 0 || sy >= h {
			clear(row)
			continue
		}
		for x := range row {
			sx := x - dx
			if sx < 0 || sx >= w {
				row[x] = 0
			} else {
				row[x] = src[sy*w+sx]
			}
		}
	}
}

// warp sets dst(q) = bilinear src at c + A·(q − c) with A = [[ayy, ayx],
// [axy, axx]] acting on (y, x) and c = ((h−1)/2, (w−1)/2); source points
// outside [0, h−1]×[0, w−1] (beyond raster.EdgeSlack) give 0, as in scipy.ndimage's
// mode='constant'.
func warp(dst, src []float32, h, w int, ayy, ayx, axy, axx float64) {
	cy, cx := float64(h-1)/2, float64(w-1)/2
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			ty, tx := float64(y)-cy, float64(x)-cx
			sy := cy + ayy*ty + ayx*tx
			sx := cx + axy*ty + axx*tx
			dst[y*w+x] = float32(raster.BilinearInside(src, h, w, sy, sx))
		}
	}
}

// BlurTruncate is the kernel reach of Blur in standard deviations (the
// radius is int(BlurTruncate·σ + 0.5) pixels, as scipy.ndimage.gaussian_filter
// with truncate=4.0).
const BlurTruncate = 4.0

// blur convolves with a separable Gaussian of σ pixels, zero outside (float32
// for the perturbations, float64 for the corruptions' intermediate layers).
func blur[T float32 | float64](dst, src []T, h, w int, sigma float64) {
	if sigma == 0 {
		copy(dst, src)
		return
	}
	k := raster.Gaussian(sigma, int(BlurTruncate*sigma+0.5))
	r := len(k) / 2
	tmp := make([]float64, h*w)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var s float64
			for j := max(0, x-r); j <= min(w-1, x+r); j++ {
				s += k[j-x+r] * float64(src[y*w+j])
			}
			tmp[y*w+x] = s
		}
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var s float64
			for i := max(0, y-r); i <= min(h-1, y+r); i++ {
				s += k[i-y+r] * tmp[i*w+x]
			}
			dst[y*w+x] = T(s)
		}
	}
}
