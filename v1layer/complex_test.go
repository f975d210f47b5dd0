package v1layer

import (
	"math"
	"math/rand/v2"
	"testing"
)

// grating returns cos(2π(x cosθ + y sinθ)/λ + φ) mapped to [0,1], with
// image y up (row index down), the convention of the kernels.
func grating(h, w int, theta, lambda, phase float64) []float32 {
	img := make([]float32, h*w)
	for r := 0; r < h; r++ {
		for c := 0; c < w; c++ {
			x, y := float64(c), -float64(r)
			img[r*w+c] = float32(0.5 + 0.5*math.Cos(2*math.Pi*(x*math.Cos(theta)+y*math.Sin(theta))/lambda+phase))
		}
	}
	return img
}

func centreMean(m []float32, h, w, margin int) float64 {
	var s float64
	n := 0
	for y := margin; y < h-margin; y++ {
		for x := margin; x < w-margin; x++ {
			s += float64(m[y*w+x])
			n++
		}
	}
	return s / float64(n)
}

// A grating at θ drives the θ energy channel most (the orientation tuning
// of simple and complex cells; Hubel & Wiesel 1962): for each of the 4
// orientations and both wavelengths, the channel matching the grating has
// the largest mean response, by a clear factor.
func TestGratingPeaksAtItsOrientation(t *testing.T) {
	f, err := New(Config{Pool: PoolConfig{Size: 1}})
	if err != nil {
		t.Fatal(err)
	}
	ch := f.Channels()
	h, w := 64, 64
	for _, lambda := range []float64{4, 8} {
		for o := 0; o < 4; o++ {
			theta := float64(o) * math.Pi / 4
			var out Maps
			f.Apply(&out, grating(h, w, theta, lambda, 0.3), h, w)
			best, bestV, second := -1, 0.0, 0.0
			for c, m := range ch {
				if m.Kind != KindEnergy || m.Wavelength != lambda {
					continue
				}
				v := centreMean(out.Channel(c), h, w, 16)
				if v > bestV {
					best, second, bestV = c, bestV, v
				} else if v > second {
					second = v
				}
			}
			if math.Abs(ch[best].Orientation-theta) > 1e-9 || bestV < 2*second {
				t.Errorf("λ=%g θ=%.0f°: strongest channel θ=%.0f° (%.3f, next %.3f); want the grating's, ≥ 2× the next",
					lambda, theta*180/math.Pi, ch[best].Orientation*180/math.Pi, bestV, second)
			}
		}
	}
}

// Rotating the input by 90° permutes the orientation channels: the pixel
// grid maps onto itself, so energy channel θ of the rotated image equals
// channel θ−90° of the original, rotated — exactly up to float32 rounding
// (tolerance 1e-5, the float64-reference tolerance), pooling included (odd
// side so the stride-2 grid maps onto itself). DoG channels are invariant.
func TestRotation90PermutesOrientations(t *testing.T) {
	f, err := New(Config{})
	if err != nil {
		t.Fatal(err)
	}
	const n = 33
	rng := rand.New(rand.NewPCG(5, 6))
	img, _ := randImage(rng, n, n)
	// Counter-clockwise rotation by 90° (y up): new(r, c) = old(c, n−1−r).
	rot := func(src []float32, n int) []float32 {
		out := make([]float32, n*n)
		for r := 0; r < n; r++ {
			for c := 0; c < n; c++ {
				out[r*n+c] = src[c*n+(n-1-r)]
			}
		}
		return out
	}
	var a, b Maps
	f.Apply(&a, img, n, n)
	f.Apply(&b, rot(img, n), n, n)
	ch := f.Channels()
	find := func(m Channel) int {
		for i, c := range ch {
			if c.Kind == m.Kind && c.Scale == m.Scale && c.Polarity == m.Polarity && math.Abs(math.Mod(c.Orientation-m.Orientation+2*math.Pi, math.Pi)) < 1e-9 {
				return i
			}
		}
		return -1
	}
	on := a.H
	for c, m := range ch {
		src := m
		if m.Kind == KindEnergy {
			src.Orientation = math.Mod(m.Orientation-math.Pi/2+math.Pi, math.Pi)
		}
		j := find(src)
		if j < 0 {
			t.Fatalf("no channel for %+v", src)
		}
		want := rot(a.Channel(j), on)
		if d := maxAbsDiff(b.Channel(c), f64s(want)); d > 1e-5 {
			t.Errorf("channel %d (%v θ=%.0f°): rotated input differs from rotated channel %d by %.3g", c, m.Kind, m.Orientation*180/math.Pi, j, d)
		}
	}
}

func f64s(x []float32) []float64 {
	out := make([]float64, len(x))
	for i, v := range x {
		out[i] = float64(v)
	}
	return out
}

// Quadrature energy is phase invariant (Adelson & Bergen 1985): as a
// grating at the preferred orientation and wavelength drifts through a full
// cycle of phase, the energy at the centre varies by less than 2%, while a
// single simple cell (the even kernel's rectified response) swings fully.
func TestEnergyPhaseInvariance(t *testing.T) {
	f, err := New(Config{Pool: PoolConfig{Size: 1}, DoG: DoGConfig{Disable: true}})
	if err != nil {
		t.Fatal(err)
	}
	lin, err := New(Config{Pool: PoolConfig{Size: 1}, DoG: DoGConfig{Disable: true}, Complex: ComplexConfig{Mode: "rectified"}})
	if err != nil {
		t.Fatal(err)
	}
	h, w := 61, 61
	centre := (h/2)*w + w/2
	for _, lambda := range []float64{4, 8} {
		for o := 0; o < 4; o++ {
			theta := float64(o) * math.Pi / 4
			c := -1
			for i, m := range f.Channels() {
				if m.Wavelength == lambda && math.Abs(m.Orientation-theta) < 1e-9 {
					c = i
				}
			}
			lo, hi, slo, shi := math.Inf(1), 0.0, math.Inf(1), 0.0
			for k := 0; k < 16; k++ {
				img := grating(h, w, theta, lambda, 2*math.Pi*float64(k)/16)
				var out, sout Maps
				f.Apply(&out, img, h, w)
				v := float64(out.Channel(c)[centre])
				lo, hi = math.Min(lo, v), math.Max(hi, v)
				lin.Apply(&sout, img, h, w)
				s := float64(sout.Channel(2 * c)[centre]) // even kernel of the same pair
				slo, shi = math.Min(slo, s), math.Max(shi, s)
			}
			if (hi-lo)/hi > 0.02 {
				t.Errorf("λ=%g θ=%.0f°: energy varies %.2f%% with phase, want < 2%%", lambda, theta*180/math.Pi, 100*(hi-lo)/hi)
			}
			if shi == 0 || slo/shi > 0.1 {
				t.Errorf("λ=%g θ=%.0f°: simple cell range [%.3g, %.3g] does not swing with phase", lambda, theta*180/math.Pi, slo, shi)
			}
		}
	}
}

// Max pooling ignores shifts below its stride: an isolated peak at an
// even position (2i, 2j) moved by one pixel in any direction still sets
// the pooled value of cell (i, j) (3×3 window, stride 2: |y − 2i| ≤ 1).
func TestPoolIgnoresSubStrideShift(t *testing.T) {
	h, w := 20, 22
	src := make([]float32, h*w)
	dst := make([]float32, poolOut(h, 2)*poolOut(w, 2))
	tmp := make([]float32, w)
	ow := poolOut(w, 2)
	for _, p := range [][2]int{{6, 8}, {0, 0}, {18, 20}} {
		for dy := -1; dy <= 1; dy++ {
			for dx := -1; dx <= 1; dx++ {
				y, x := p[0]+dy, p[1]+dx
				if y < 0 || x < 0 || y >= h || x >= w {
					continue
				}
				clear(src)
				src[y*w+x] = 0.9
				maxPool(dst, src, h, w, 3, 2, tmp)
				if got := dst[(p[0]/2)*ow+p[1]/2]; got != 0.9 {
					t.Errorf("peak at (%d,%d) shifted by (%d,%d): pooled cell (%d,%d) = %g, want 0.9", p[0], p[1], dy, dx, p[0]/2, p[1]/2, got)
				}
			}
		}
	}
	// And a shift by the full stride moves the peak to the next cell.
	clear(src)
	src[6*w+10] = 0.9
	maxPool(dst, src, h, w, 3, 2, tmp)
	if dst[3*ow+4] != 0 || dst[3*ow+5] != 0.9 {
		t.Errorf("a 2-px shift should move the peak to the next cell")
	}
}

// End-stopped cells respond more to a short bar than a long one (Hubel &
// Wiesel 1965's hypercomplex cells): a bar of the preferred orientation
// centred in the image, length 1λ vs 6λ, measured at the bar centre.
func TestEndStopPrefersShortBars(t *testing.T) {
	f, err := New(Config{DoG: DoGConfig{Disable: true}, Pool: PoolConfig{Size: 1},
		Gabor:   GaborConfig{Scales: 1, Wavelength: 8},
		Complex: ComplexConfig{EndStop: EndStopConfig{Enabled: true}}})
	if err != nil {
		t.Fatal(err)
	}
	h, w := 96, 96
	bar := func(length int) []float32 { // vertical bar: θ = 0 carrier, 3 px wide
		img := make([]float32, h*w)
		for y := h/2 - length/2; y < h/2+length/2; y++ {
			for x := w/2 - 1; x <= w/2+1; x++ {
				img[y*w+x] = 1
			}
		}
		return img
	}
	es := -1
	for i, c := range f.Channels() {
		if c.Kind == KindEndStop && c.Orientation == 0 {
			es = i
		}
	}
	if es < 0 {
		t.Fatal("no end-stopped θ=0 channel")
	}
	resp := func(length int) float64 {
		var out Maps
		f.Apply(&out, bar(length), h, w)
		return float64(out.Channel(es)[(h/2)*w+w/2])
	}
	short, long := resp(8), resp(48)
	if !(short > 2*long) {
		t.Errorf("end-stopped response: short bar %.4f, long bar %.4f; want short > 2× long", short, long)
	}
}

// Length summation along the bar axis: a long bar of the preferred
// orientation gains relative to a dot, since the Gaussian along the axis
// averages a uniform line without loss and a dot with loss.
func TestLengthSummation(t *testing.T) {
	cfg := Config{DoG: DoGConfig{Disable: true}, Pool: PoolConfig{Size: 1}, Gabor: GaborConfig{Scales: 1, Wavelength: 8}}
	plain, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	cfg.Complex.Length = LengthConfig{Enabled: true, Sigma: 1}
	summed, err := New(cfg)
	if err != nil {
		t.Fatal(err)
	}
	h, w := 80, 80
	line := make([]float32, h*w)
	for y := 0; y < h; y++ {
		line[y*w+w/2] = 1
	}
	var a, b Maps
	plain.Apply(&a, line, h, w)
	summed.Apply(&b, line, h, w)
	i := (h/2)*w + w/2 + 1
	// channel 0 is θ = 0 (vertical stripes), the orientation of the line.
	if d := math.Abs(float64(a.Channel(0)[i]-b.Channel(0)[i])) / float64(a.Channel(0)[i]); d > 0.01 {
		t.Errorf("length summation changed a uniform line's response by %.2f%%, want < 1%% (a Gaussian average of a constant)", 100*d)
	}
	dot := make([]float32, h*w)
	dot[(h/2)*w+w/2] = 1
	plain.Apply(&a, dot, h, w)
	summed.Apply(&b, dot, h, w)
	if !(b.Channel(0)[i] < 0.8*a.Channel(0)[i]) {
		t.Errorf("length summation: dot response %.4f vs %.4f; want a drop below 80%%", b.Channel(0)[i], a.Channel(0)[i])
	}
}

// Divisive normalisation (Heeger 1992) makes responses nearly contrast
// invariant when σ is small against the pooled energy, and keeps the
// orientation preference.
func TestDivisiveNormalisation(t *testing.T) {
	f, err := New(Config{DoG: DoGConfig{Disable: true}, Pool: PoolConfig{Size: 1}, Complex: ComplexConfig{Norm: NormConfig{Enabled: true, Sigma: 0.001}}})
	if err != nil {
		t.Fatal(err)
	}
	h, w := 48, 48
	g := grating(h, w, math.Pi/4, 8, 0)
	low := make([]float32, len(g))
	for i, v := range g {
		low[i] = 0.5 + 0.25*(v-0.5) // half contrast
	}
	var a, b Maps
	f.Apply(&a, g, h, w)
	f.Apply(&b, low, h, w)
	i := (h/2)*w + w/2
	for c, m := range f.Channels() {
		ra, rb := float64(a.Channel(c)[i]), float64(b.Channel(c)[i])
		if m.Wavelength == 8 && math.Abs(m.Orientation-math.Pi/4) < 1e-9 {
			if math.Abs(ra-rb)/ra > 0.01 {
				t.Errorf("channel %d: normalised response %.4f at full, %.4f at half contrast; want within 1%%", c, ra, rb)
			}
			// mean over 4 channels of N² is 1 (σ→0), so the preferred one is > 1.
			if ra < 1.2 {
				t.Errorf("preferred channel normalised response %.3f, want > 1.2", ra)
			}
		}
	}
}
