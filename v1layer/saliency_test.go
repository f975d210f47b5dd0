package v1layer

import (
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"
	"time"
)

// drawBar adds a bar of length l and width wd (px) centred on (cx, cy),
// its long axis at angle th (radians, image y up, counter-clockwise from
// +x), at grey value v, with 4×4 supersampled edges.
func drawBar(img []float32, h, w int, cx, cy, l, wd, th float64, v float32) {
	c, s := math.Cos(th), math.Sin(th)
	r := int(math.Ceil(l/2+wd/2)) + 1
	for y := int(cy) - r; y <= int(cy)+r; y++ {
		for x := int(cx) - r; x <= int(cx)+r; x++ {
			if y < 0 || y >= h || x < 0 || x >= w {
				continue
			}
			hits := 0
			for sy := 0; sy < 4; sy++ {
				for sx := 0; sx < 4; sx++ {
					dx := float64(x) + (float64(sx)+0.5)/4 - 0.5 - cx
					dy := -(float64(y) + (float64(sy)+0.5)/4 - 0.5 - cy)
					a := dx*c + dy*s
					b := -dx*s + dy*c
					if math.Abs(a) <= l/2 && math.Abs(b) <= wd/2 {
						hits++
					}
				}
			}
			if hits > 0 {
				img[y*w+x] = max(img[y*w+x], v*float32(hits)/16)
			}
		}
	}
}

// The pyramid's reduce and expand steps equal SciPy 1.10.1's
// scipy.ndimage.correlate1d (binomial [1 5 10 10 5 1]/32, mode "reflect",
// origin −1, every second sample) and map_coordinates (order 1, mode
// "nearest") on seeded random maps: testdata/v1layer/saliency_scipy.json.gz,
// made by gen_saliency.py there. Tolerance 1e-6: float32 sums of at most
// 12 products of values ≤ 1 with weights summing to 1 round at ~2e-7.
func TestSaliencyPyramidMatchesSciPy(t *testing.T) {
	ref := loadSalRef(t)
	const tol = 1e-6
	for _, c := range ref.Reduce {
		in := f32s64(c.In)
		out := make([]float32, halve(c.H)*halve(c.W))
		pyrReduce(out, in, c.H, c.W, make([]float32, c.H*halve(c.W)))
		if d := maxAbsDiff(out, c.Out); d > tol {
			t.Errorf("reduce %d×%d: max |Δ| = %.3g vs scipy %s, want ≤ %g", c.H, c.W, d, ref.Versions["scipy"], tol)
		}
	}
	for _, c := range ref.Expand {
		in := f32s64(c.In)
		out := make([]float32, c.H*c.W)
		side := max(c.H, c.W)
		wk := &salWork{tmp: make([]float32, c.SH*c.W), idx: make([]int32, side), wt: make([]float32, side)}
		pyrExpand(out, c.H, c.W, in, c.SH, c.SW, c.D, wk)
		if d := maxAbsDiff(out, c.Out); d > tol {
			t.Errorf("expand %d×%d by %d levels to %d×%d: max |Δ| = %.3g vs scipy, want ≤ %g", c.SH, c.SW, c.D, c.H, c.W, d, tol)
		}
	}
}

type salRef struct {
	Versions map[string]string `json:"versions"`
	Reduce   []struct {
		H, W    int
		In, Out []float64
	} `json:"reduce"`
	Expand []struct {
		SH, SW, D, H, W int
		In, Out         []float64
	} `json:"expand"`
	Norm []struct {
		H, W    int
		MinPeak float64 `json:"min_peak"`
		Peaks   int
		In, Out []float64
	} `json:"norm"`
}

func loadSalRef(t *testing.T) *salRef {
	var ref salRef
	readGz(t, "saliency_scipy.json.gz", &ref)
	if len(ref.Reduce) == 0 || len(ref.Expand) == 0 || len(ref.Norm) == 0 {
		t.Fatal("saliency_scipy.json.gz: empty reference")
	}
	return &ref
}

func f32s64(x []float64) []float32 {
	out := make([]float32, len(x))
	for i, v := range x {
		out[i] = float32(v)
	}
	return out
}

// N(·) on small maps, values worked by hand from the operator of Itti,
// Koch & Niebur (1998): scale to [0, M] (M = 1), m̄ = mean of the
// local maxima other than the global one (those ≥ MinPeak·M), multiply by
// (M − m̄)². One isolated peak keeps the whole range; equal peaks cancel.
func TestSaliencyNormHandWorked(t *testing.T) {
	type pt struct {
		y, x int
		v    float32
	}
	cases := []struct {
		name    string
		h, w    int
		in, out []pt // out lists every non-zero output value
	}{
		{"one peak keeps its range", 5, 5, []pt{{2, 2, 4}}, []pt{{2, 2, 1}}},
		// M = 4 → values 1 and 0.5; m̄ = 0.5; (1 − 0.5)² = 0.25.
		{"peaks 4 and 2", 5, 5, []pt{{1, 1, 4}, {3, 3, 2}}, []pt{{1, 1, 0.25}, {3, 3, 0.125}}},
		// m̄ = 1: (1 − 1)² = 0, both vanish.
		{"two equal peaks", 5, 7, []pt{{1, 1, 3}, {3, 5, 3}}, nil},
		// M = 10 → 1, 0.5, 0.3 and 0.05; 0.05 < MinPeak 0.1 does not count:
		// m̄ = (0.5+0.3)/2 = 0.4, (1 − 0.4)² = 0.36.
		{"three peaks and a ripple", 7, 7, []pt{{0, 0, 10}, {0, 6, 5}, {6, 0, 3}, {6, 6, 0.5}},
			[]pt{{0, 0, 0.36}, {0, 6, 0.18}, {6, 0, 0.108}, {6, 6, 0.018}}},
		// An equal adjacent pair is one maximum (plateau), not two.
		{"plateau pair", 5, 6, []pt{{2, 2, 8}, {2, 3, 8}, {0, 5, 2}}, []pt{{2, 2, 0.5625}, {2, 3, 0.5625}, {0, 5, 0.140625}}},
		// A peak's shoulder is not a maximum: 4 with neighbour 3, and 2 far off:
		// m̄ = 0.5 as in "peaks 4 and 2".
		{"shoulder", 5, 7, []pt{{1, 1, 4}, {1, 2, 3}, {3, 5, 2}}, []pt{{1, 1, 0.25}, {1, 2, 0.1875}, {3, 5, 0.125}}},
		// A constant map has its maximum everywhere: m̄ = M, all vanish.
		{"constant", 3, 4, []pt{{0, 0, 2}, {0, 1, 2}, {0, 2, 2}, {0, 3, 2}, {1, 0, 2}, {1, 1, 2}, {1, 2, 2}, {1, 3, 2}, {2, 0, 2}, {2, 1, 2}, {2, 2, 2}, {2, 3, 2}}, nil},
		// Rounding-sized maps are cleared, not stretched.
		{"below the floor", 4, 4, []pt{{1, 1, 1e-7}}, nil},
	}
	// Tolerance 1e-7: one float64 product rounded to float32 (≤ 6e-8 for values ≤ 1).
	const tol = 1e-7
	for _, c := range cases {
		m := make([]float32, c.h*c.w)
		for _, p := range c.in {
			m[p.y*c.w+p.x] = p.v
		}
		salNorm(m, c.h, c.w, 0.1, salFeatureFloor)
		want := make([]float32, c.h*c.w)
		for _, p := range c.out {
			want[p.y*c.w+p.x] = p.v
		}
		for i := range m {
			if math.Abs(float64(m[i]-want[i])) > tol {
				t.Errorf("%s: N at (%d,%d) = %g, want %g", c.name, i/c.w, i%c.w, m[i], want[i])
			}
		}
	}
}

// N(·) equals an independent NumPy/SciPy implementation (local maxima from
// scipy.ndimage.maximum_filter) on smoothed random maps with no ties,
// testdata/v1layer/saliency_scipy.json.gz. Tolerance 2e-7: the output is
// one float64 product per value rounded to float32, values ≤ 1.
func TestSaliencyNormMatchesSciPy(t *testing.T) {
	ref := loadSalRef(t)
	const tol = 2e-7
	for i, c := range ref.Norm {
		m := f32s64(c.In)
		salNorm(m, c.H, c.W, c.MinPeak, salFeatureFloor)
		if d := maxAbsDiff(m, c.Out); d > tol {
			t.Errorf("norm case %d (%d×%d, %d peaks): max |Δ| = %.3g vs scipy, want ≤ %g", i, c.H, c.W, c.Peaks, d, tol)
		}
	}
}

// argmaxFrame returns the frame position (x, y) of the centre of the
// saliency map's largest value (the first, in row-major order).
func argmaxFrame(s *Saliency, m *Maps) (x, y float64) {
	best := 0
	for i, v := range m.Pix {
		if v > m.Pix[best] {
			best = i
		}
	}
	sc := float64(s.Scale())
	return (float64(best%m.W)+0.5)*sc - 0.5, (float64(best/m.W)+0.5)*sc - 0.5
}

// A single bar of odd orientation among many pops out: the map's maximum
// lies on it (Itti, Koch & Niebur 1998: an orientation singleton is
// found first whatever the number of distractors). Bars of
// 20×5 px on a jittered grid (seeded), the odd one at several places and
// in several frame sizes; "on it" means within the bar's half-length plus
// one map cell (half a cell of quantisation each side) of its centre.
func TestSaliencyOddBarPopsOut(t *testing.T) {
	s, err := NewSaliency(SaliencyConfig{})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(11, 1))
	cases := []struct {
		h, w, n, mx int     // frame, grid n×mx bars
		bg, odd     float64 // orientations
		l, wd       float64
	}{
		{256, 256, 6, 6, 0, math.Pi / 2, 20, 5},
		{256, 256, 6, 6, math.Pi / 2, 0, 20, 5},
		{256, 256, 6, 6, math.Pi / 4, 3 * math.Pi / 4, 20, 5},
		{480, 640, 8, 10, 0, math.Pi / 2, 24, 6},
		{100, 100, 3, 3, math.Pi / 2, 0, 14, 4},
	}
	var m Maps
	for ci, c := range cases {
		for trial := 0; trial < 3; trial++ {
			img := make([]float32, c.h*c.w)
			oi, oj := rng.IntN(c.n), rng.IntN(c.mx)
			dy, dx := float64(c.h)/float64(c.n), float64(c.w)/float64(c.mx)
			var ox, oy float64
			for i := 0; i < c.n; i++ {
				for j := 0; j < c.mx; j++ {
					cx := (float64(j)+0.5)*dx + (rng.Float64()-0.5)*dx/5
					cy := (float64(i)+0.5)*dy + (rng.Float64()-0.5)*dy/5
					th := c.bg
					if i == oi && j == oj {
						th, ox, oy = c.odd, cx, cy
					}
					drawBar(img, c.h, c.w, cx, cy, c.l, c.wd, th, 1)
				}
			}
			if err := s.Map(&m, img, c.h, c.w, 1); err != nil {
				t.Fatal(err)
			}
			x, y := argmaxFrame(s, &m)
			if d := math.Hypot(x-ox, y-oy); d > c.l/2+float64(s.Scale()) {
				t.Errorf("case %d trial %d (%d×%d): maximum at (%.0f,%.0f), %.1f px from the odd bar at (%.0f,%.0f); want ≤ %.0f",
					ci, trial, c.w, c.h, x, y, d, ox, oy, c.l/2+float64(s.Scale()))
			}
		}
	}
}

type texture struct {
	name string
	f    func(x, y int) float32
}

// seamlessTextures are periodic textures that continue without a seam
// across a half-sample reflection at every frame edge (each is mirror
// symmetric about x = −0.5 and y = −0.5, and its period divides the
// sides used): under the front end's reflect border they fill an
// unbounded plane.
func seamlessTextures() []texture {
	cosAt := func(i int, lam float64) float64 { return math.Cos(2 * math.Pi * (float64(i) + 0.5) / lam) }
	grating := func(lam float64, vertical bool) func(x, y int) float32 {
		return func(x, y int) float32 {
			i := y
			if vertical {
				i = x
			}
			return float32(0.5 + 0.5*cosAt(i, lam))
		}
	}
	return []texture{
		{"vertical grating λ=4", grating(4, true)},
		{"vertical grating λ=8", grating(8, true)},
		{"vertical grating λ=16", grating(16, true)},
		{"horizontal grating λ=8", grating(8, false)},
		{"plaid λ=8", func(x, y int) float32 { return float32(0.5 + 0.25*cosAt(x, 8) + 0.25*cosAt(y, 8)) }},
		{"checkerboard 8 px", func(x, y int) float32 { return float32(((x+4)/8 + (y+4)/8) % 2) }},
		{"dot lattice 16 px", func(x, y int) float32 {
			if x%16 >= 6 && x%16 < 10 && y%16 >= 6 && y%16 < 10 {
				return 1
			}
			return 0.2
		}},
	}
}

// A uniform texture gives a flat map (Itti, Koch & Niebur 1998: N(·)
// suppresses maps with many comparable peaks, as a texture has). For a seamless periodic texture
// (seamlessTextures) every map of the model is, in exact arithmetic,
// periodic or constant: N(·) sends a periodic map to zero (its other
// maxima equal M) and a constant one to zero (its maximum is everywhere),
// so S is the zero map and only float32 rounding remains. Bound: S ≤
// flatPeak = 1e-4 everywhere, against peaks of 0.1–1 for one salient item
// (S lies in [0, 1]); and where rounding leaves a non-zero map it must be
// level, max/mean ≤ 1.01. The same texture with one patch of it turned by
// 90° must peak on the patch, so the zero map is not a dead pipeline.
func TestSaliencyUniformTextureFlat(t *testing.T) {
	const flatPeak, flatRatio = 1e-4, 1.01
	s, err := NewSaliency(SaliencyConfig{})
	if err != nil {
		t.Fatal(err)
	}
	var m Maps
	for _, hw := range [][2]int{{256, 256}, {480, 640}, {128, 192}} {
		h, w := hw[0], hw[1]
		img := make([]float32, h*w)
		for _, tex := range seamlessTextures() {
			for y := 0; y < h; y++ {
				for x := 0; x < w; x++ {
					img[y*w+x] = tex.f(x, y)
				}
			}
			if err := s.Map(&m, img, h, w, 1); err != nil {
				t.Fatal(err)
			}
			var top, sum float64
			for _, v := range m.Pix {
				if math.IsNaN(float64(v)) || v < 0 {
					t.Fatalf("%d×%d %s: map value %g", w, h, tex.name, v)
				}
				top = max(top, float64(v))
				sum += float64(v)
			}
			if top > flatPeak {
				t.Errorf("%d×%d %s: peak %.3g, want ≤ %g (a flat map)", w, h, tex.name, top, flatPeak)
			}
			if mean := sum / float64(len(m.Pix)); top > 0 && top/mean > flatRatio {
				t.Errorf("%d×%d %s: max/mean %.4f, want ≤ %g", w, h, tex.name, top/mean, flatRatio)
			}
		}
		// One 32×32 patch of the λ=8 vertical grating turned horizontal.
		px, py := w/3, h/2
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				i := x
				if x >= px && x < px+32 && y >= py && y < py+32 {
					i = y
				}
				img[y*w+x] = float32(0.5 + 0.5*math.Cos(2*math.Pi*(float64(i)+0.5)/8))
			}
		}
		if err := s.Map(&m, img, h, w, 1); err != nil {
			t.Fatal(err)
		}
		x, y := argmaxFrame(s, &m)
		if x < float64(px-s.Scale()) || x > float64(px+32+s.Scale()) || y < float64(py-s.Scale()) || y > float64(py+32+s.Scale()) {
			t.Errorf("%d×%d grating with a turned patch at (%d,%d)+32: maximum at (%.0f,%.0f), want on the patch", w, h, px, py, x, y)
		}
	}
}

// itemShares returns, for each item centre, the fraction of the map's
// total saliency within radius r (frame px) of it, and the map's peak.
func itemShares(s *Saliency, m *Maps, centres [][2]float64, r float64) (shares []float64, peak float64) {
	var tot float64
	for _, v := range m.Pix {
		tot += float64(v)
		peak = max(peak, float64(v))
	}
	sc := float64(s.Scale())
	for _, c := range centres {
		var sum float64
		for y := 0; y < m.H; y++ {
			for x := 0; x < m.W; x++ {
				px, py := (float64(x)+0.5)*sc-0.5, (float64(y)+0.5)*sc-0.5
				if math.Hypot(px-c[0], py-c[1]) <= r {
					sum += float64(m.Pix[y*m.W+x])
				}
			}
		}
		shares = append(shares, sum/tot)
	}
	return shares, peak
}

// Equally salient items share the map: with k identical items each holds
// 1/k of the items' saliency, so doubling k halves each one's share; and
// N(·)'s (M − m̄)² factor keeps the range of a map with one isolated peak
// while many near-equal peaks suppress it (Itti, Koch & Niebur 1998). Items: 14×14 bright squares at fixed, unevenly spread
// places at least 80 px apart in a 256×256 frame; an item's share is the
// saliency within 32 px of its centre over the total. Bounds:
//   - each share within ±shareTol·(T/k) of T/k, T the items' total share:
//     items at different places relative to the pyramid's grid and the
//     frame's edges differ by a few per cent (measured ≤ 6%);
//   - mean share at 2k over mean share at k in [0.5 ± halfTol]: T itself
//     moves with k (measured 0.51 at k = 1, 2, 0.53 at 4, 0.61 at 8) as
//     more of the frame lies near an item;
//   - one item's peak ≥ suppress × the peak with 2, 4 or 8 items
//     (measured 0.90 against 0.28, 0.36 and 0.21).
func TestSaliencyEqualItemsShare(t *testing.T) {
	const shareTol, halfTol, suppress = 0.2, 0.1, 2
	s, err := NewSaliency(SaliencyConfig{})
	if err != nil {
		t.Fatal(err)
	}
	h, w := 256, 256
	pos := [][2]float64{{50, 60}, {190, 170}, {180, 55}, {70, 200}, {125, 120}, {30, 130}, {220, 110}, {130, 30}}
	var m Maps
	var prevMean, onePeak float64
	for _, k := range []int{1, 2, 4, 8} {
		img := make([]float32, h*w)
		for _, p := range pos[:k] {
			drawBar(img, h, w, p[0], p[1], 14, 14, 0, 1)
		}
		if err := s.Map(&m, img, h, w, 1); err != nil {
			t.Fatal(err)
		}
		shares, peak := itemShares(s, &m, pos[:k], 32)
		var total float64
		for _, v := range shares {
			total += v
		}
		mean := total / float64(k)
		for i, v := range shares {
			if math.Abs(v-mean) > shareTol*mean {
				t.Errorf("k=%d: item %d has share %.3f, want %.3f ± %.0f%% (shares %.3f)", k, i, v, mean, 100*shareTol, shares)
			}
		}
		if k == 1 {
			onePeak = peak
		} else {
			if r := mean / prevMean; math.Abs(r-0.5) > halfTol {
				t.Errorf("k=%d: mean share %.3f is %.2f× the share at k=%d (%.3f), want 0.5 ± %g", k, mean, r, k/2, prevMean, halfTol)
			}
			if onePeak < suppress*peak {
				t.Errorf("k=%d: peak %.3g, want ≤ 1/%g of one item's peak %.3g", k, peak, float64(suppress), onePeak)
			}
		}
		prevMean = mean
	}
}

// busyFrame is a seeded test frame: bars of random orientation, size and
// contrast on a noisy background.
func busyFrame(rng *rand.Rand, h, w int) []float32 {
	img := make([]float32, h*w)
	for i := range img {
		img[i] = 0.3 + 0.1*rng.Float32()
	}
	for n := h * w / 2000; n > 0; n-- {
		drawBar(img, h, w, rng.Float64()*float64(w), rng.Float64()*float64(h), 6+20*rng.Float64(), 2+6*rng.Float64(), rng.Float64()*math.Pi, 0.5+0.5*rng.Float32())
	}
	return img
}

// Any number of workers gives the same map, bit for bit: every job writes
// its own buffer and the sums run in a fixed order.
func TestSaliencyWorkersBitIdentical(t *testing.T) {
	s, err := NewSaliency(SaliencyConfig{})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(5, 6))
	for _, hw := range [][2]int{{256, 256}, {480, 640}, {177, 301}, {60, 60}} {
		h, w := hw[0], hw[1]
		img := busyFrame(rng, h, w)
		var want Maps
		if err := s.Map(&want, img, h, w, 1); err != nil {
			t.Fatal(err)
		}
		var peak float32
		for _, v := range want.Pix {
			peak = max(peak, v)
		}
		if !(peak > 0) {
			t.Fatalf("%d×%d: busy frame gives an empty map", w, h)
		}
		for _, workers := range []int{0, 2, 3, 8, 64} {
			var got Maps
			if err := s.Map(&got, img, h, w, workers); err != nil {
				t.Fatal(err)
			}
			if got.C != want.C || got.H != want.H || got.W != want.W {
				t.Fatalf("%d×%d workers=%d: shape %d×%d×%d, want %d×%d×%d", w, h, workers, got.C, got.H, got.W, want.C, want.H, want.W)
			}
			for i := range want.Pix {
				if math.Float32bits(got.Pix[i]) != math.Float32bits(want.Pix[i]) {
					t.Fatalf("%d×%d workers=%d: value %d is %g, want %g (1 worker)", w, h, workers, i, got.Pix[i], want.Pix[i])
				}
			}
		}
	}
}

// A blank frame — black, grey or white — gives the zero map, with no NaN:
// every feature is zero up to rounding, below the floors of N(·).
func TestSaliencyBlankFrameIsZero(t *testing.T) {
	s, err := NewSaliency(SaliencyConfig{})
	if err != nil {
		t.Fatal(err)
	}
	var m Maps
	for _, hw := range [][2]int{{256, 256}, {61, 90}} {
		h, w := hw[0], hw[1]
		for _, v := range []float32{0, 0.5, 1} {
			img := make([]float32, h*w)
			for i := range img {
				img[i] = v
			}
			if err := s.Map(&m, img, h, w, 2); err != nil {
				t.Fatal(err)
			}
			for i, x := range m.Pix {
				if x != 0 {
					t.Fatalf("%d×%d frame of %g: map value %d is %g, want 0", w, h, v, i, x)
				}
			}
		}
	}
}

// Frames too small or too large, short pixel slices and NaN or infinite
// pixels give errors that name the limit or the pixel and the fix, and leave the destination alone; bad
// configurations give errors naming the field.
func TestSaliencyBadInput(t *testing.T) {
	s, err := NewSaliency(SaliencyConfig{})
	if err != nil {
		t.Fatal(err)
	}
	// Default: the level-3 image must hold the 15-px Gabor (MinSide 8):
	// ceil(n/8) ≥ 8 ⇔ n ≥ 57.
	if got := s.MinSide(); got != 57 {
		t.Errorf("MinSide = %d, want 57", got)
	}
	if _, _, err := s.MapShape(57, 57); err != nil {
		t.Errorf("57×57: %v", err)
	}
	dst := Maps{C: 7}
	for _, c := range []struct {
		h, w, n int
		want    string
	}{
		{56, 100, 5600, "smaller than 57×57"},
		{100, 28, 2800, "lower SaliencyConfig.Centres"},
		{MaxSide + 1, 64, 0, "MaxSide"},
		{64, 64, 64*64 - 1, "4095 pixels"},
		{64, 64, -1, "(row 3, column 5) is NaN"},
		{64, 64, -2, "(row 3, column 5) is +Inf"},
	} {
		img := make([]float32, max(c.n, 0))
		if c.n < 0 {
			img = make([]float32, c.h*c.w)
			img[3*c.w+5] = float32(math.NaN())
			if c.n == -2 {
				img[3*c.w+5] = float32(math.Inf(1))
			}
		}
		err := s.Map(&dst, img, c.h, c.w, 1)
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), "v1layer: ") {
			t.Errorf("%d×%d with %d pixels: error %v, want one containing %q", c.h, c.w, c.n, err, c.want)
		}
		if dst.C != 7 {
			t.Errorf("%d×%d: destination changed on error", c.h, c.w)
		}
	}
	for _, c := range []struct {
		cfg  SaliencyConfig
		want string
	}{
		{SaliencyConfig{Centres: []int{3, 2}}, "Centres"},
		{SaliencyConfig{Centres: []int{1, 2, 3, 4, 5}}, "Centres"},
		{SaliencyConfig{Centres: []int{7}}, "Centres"},
		{SaliencyConfig{Deltas: []int{0}}, "Deltas"},
		{SaliencyConfig{Deltas: []int{2, 2}}, "Deltas"},
		{SaliencyConfig{Level: 9}, "Level"},
		{SaliencyConfig{Level: -1}, "Level"},
		{SaliencyConfig{DoGSigma: 0.2}, "DoGSigma"},
		{SaliencyConfig{Orientations: 17}, "Orientations"},
		{SaliencyConfig{Wavelength: 1.5}, "Nyquist"},
		{SaliencyConfig{MinPeak: 1}, "MinPeak"},
		{SaliencyConfig{MinPeak: math.NaN()}, "MinPeak"},
	} {
		_, err := NewSaliency(c.cfg)
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), "v1layer: ") {
			t.Errorf("%+v: error %v, want one naming %q", c.cfg, err, c.want)
		}
	}
}

// Each zero field means its own default, whatever else is set.
func TestSaliencyConfigDefaultsPerField(t *testing.T) {
	s, err := NewSaliency(SaliencyConfig{Deltas: []int{2}, Orientations: 2})
	if err != nil {
		t.Fatal(err)
	}
	got := s.Config()
	want := SaliencyConfig{Centres: []int{1, 2, 3}, Deltas: []int{2}, Level: 3, DoGSigma: 1, Orientations: 2, Wavelength: 4, MinPeak: 0.1}
	if !reflect.DeepEqual(got, want) {
		t.Errorf("Config() = %+v, want %+v", got, want)
	}
	s, err = NewSaliency(SaliencyConfig{Centres: []int{2, 4}})
	if err != nil {
		t.Fatal(err)
	}
	if got := s.Config().Level; got != 4 {
		t.Errorf("Centres [2 4]: Level %d, want 4 (the coarsest centre)", got)
	}
	if got := s.Scale(); got != 16 {
		t.Errorf("Centres [2 4]: Scale %d, want 16", got)
	}
	mh, mw, err := s.MapShape(480, 640)
	if err != nil || mh != 30 || mw != 40 {
		t.Errorf("Centres [2 4], 640×480: map %d×%d (%v), want 40×30", mw, mh, err)
	}
}

// Once scratch for a frame size exists, Map allocates nothing.
func TestSaliencyAllocatesNothing(t *testing.T) {
	if raceOn {
		t.Skip("the race detector drops pooled scratch at random")
	}
	s, err := NewSaliency(SaliencyConfig{})
	if err != nil {
		t.Fatal(err)
	}
	img := busyFrame(rand.New(rand.NewPCG(7, 8)), 256, 256)
	var m Maps
	if err := s.Map(&m, img, 256, 256, 1); err != nil {
		t.Fatal(err)
	}
	if n := testing.AllocsPerRun(5, func() { _ = s.Map(&m, img, 256, 256, 1) }); n != 0 {
		t.Errorf("Map allocates %.0f times per frame, want 0", n)
	}
}

// BenchmarkSaliency times Map with the default configuration on one
// worker, on seeded busy frames (content does not change the work):
//
//	GOEXPERIMENT=simd go test -run XXX -bench Saliency ./v1layer
func BenchmarkSaliency(b *testing.B) {
	s, err := NewSaliency(SaliencyConfig{})
	if err != nil {
		b.Fatal(err)
	}
	for _, hw := range [][2]int{{256, 256}, {480, 640}} {
		h, w := hw[0], hw[1]
		img := busyFrame(rand.New(rand.NewPCG(9, 10)), h, w)
		b.Run(fmt.Sprintf("%dx%d", w, h), func(b *testing.B) {
			b.ReportAllocs()
			var m Maps
			if err := s.Map(&m, img, h, w, 1); err != nil {
				b.Fatal(err)
			}
			b.ResetTimer()
			start := time.Now()
			for i := 0; i < b.N; i++ {
				_ = s.Map(&m, img, h, w, 1)
			}
			b.ReportMetric(float64(time.Since(start).Microseconds())/1000/float64(b.N), "ms/frame")
			sinkMaps = m
		})
	}
}

// Other pyramid layouts run the same way: a map level finer than every
// centre (interpolated up), coarser than every centre, centres from the
// frame itself, and the model's own centres [2 3 4] (on a frame and bars
// twice as large: at level 2 a 5-px bar is barely a pixel wide); the odd
// bar still pops out and workers still agree.
func TestSaliencyOtherLevels(t *testing.T) {
	for _, c := range []struct {
		cfg SaliencyConfig
		f   float64 // frame and bar scale
	}{
		{SaliencyConfig{Level: 1}, 1},
		{SaliencyConfig{Level: 5}, 1},
		{SaliencyConfig{Centres: []int{0, 2}, Deltas: []int{2, 3, 4}}, 1},
		{SaliencyConfig{Centres: []int{2, 3, 4}}, 2},
	} {
		h, w := int(256*c.f), int(256*c.f)
		img := make([]float32, h*w)
		var ox, oy float64
		for i := 0; i < 6; i++ {
			for j := 0; j < 6; j++ {
				cx, cy := (21+42*float64(j))*c.f, (21+42*float64(i))*c.f
				th := 0.0
				if i == 4 && j == 1 {
					th, ox, oy = math.Pi/2, cx, cy
				}
				drawBar(img, h, w, cx, cy, 20*c.f, 5*c.f, th, 1)
			}
		}
		s, err := NewSaliency(c.cfg)
		if err != nil {
			t.Fatal(err)
		}
		var one, two Maps
		if err := s.Map(&one, img, h, w, 1); err != nil {
			t.Fatal(err)
		}
		if err := s.Map(&two, img, h, w, 2); err != nil {
			t.Fatal(err)
		}
		mh, mw, _ := s.MapShape(h, w)
		if one.H != mh || one.W != mw {
			t.Errorf("%+v: map %d×%d, want %d×%d", c.cfg, one.W, one.H, mw, mh)
		}
		for i := range one.Pix {
			if math.Float32bits(one.Pix[i]) != math.Float32bits(two.Pix[i]) {
				t.Fatalf("%+v: workers 1 and 2 differ at %d: %g vs %g", c.cfg, i, one.Pix[i], two.Pix[i])
			}
		}
		x, y := argmaxFrame(s, &one)
		if d := math.Hypot(x-ox, y-oy); d > 10*c.f+float64(s.Scale()) {
			t.Errorf("%+v: maximum at (%.0f,%.0f), %.1f px from the odd bar at (%.0f,%.0f)", c.cfg, x, y, d, ox, oy)
		}
	}
}
