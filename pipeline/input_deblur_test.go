package pipeline

import (
	"encoding/json"
	"math"
	"os"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// TestDeblurMatchesSciPy compares the Gaussian of Deblur "auto" with
// scipy.ndimage.gaussian_filter (mode "nearest", truncate 3: border pixels
// replicated, radius int(3σ + 0.5)) and its Richardson-Lucy deconvolution
// with 12 iterations of the published update u ← u·G(d / G(u)) written in
// NumPy on that filter (NumPy 1.24.2, SciPy 1.10.1;
// testdata/pipeline/gen_deblur.py, values in deblur.json).
//
// blurTol: Go sums in float32 (SciPy in float64): at most 2·17 roundings of
// 6e-8 on values ≤ 1 for the 17 taps of σ 2.4, under 3e-6, so 5e-6. rlTol: each of the 12
// iterations multiplies by a ratio of two such blurs, each float32-rounded;
// relative errors of a few 1e-7 per step compound to well under 1e-4 of the
// value (the deconvolved values stay below about 3).
func TestDeblurMatchesSciPy(t *testing.T) {
	b, err := os.ReadFile("../testdata/pipeline/deblur.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			H, W         int
			Sigma        float64
			In, Blur, RL []float32
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) == 0 {
		t.Fatal("deblur.json holds no cases")
	}
	const blurTol, rlTol = 5e-6, 1e-4
	for ci, c := range ref.Cases {
		n := c.H * c.W
		got, tmp := make([]float32, n), make([]float32, n)
		gaussBlurClamp(got, tmp, c.In, c.H, c.W, gaussKernel(c.Sigma))
		for i := range got {
			if d := math.Abs(float64(got[i] - c.Blur[i])); d > blurTol {
				t.Fatalf("case %d (σ %.1f): blurred pixel %d = %.7f; SciPy gives %.7f", ci, c.Sigma, i, got[i], c.Blur[i])
			}
		}
		richardsonLucy(got, make([]float32, 3*n), c.In, c.H, c.W, c.Sigma)
		for i := range got {
			if d := math.Abs(float64(got[i] - c.RL[i])); d > rlTol*max(1, math.Abs(float64(c.RL[i]))) {
				t.Fatalf("case %d (σ %.1f): deconvolved pixel %d = %.6f; NumPy/SciPy give %.6f", ci, c.Sigma, i, got[i], c.RL[i])
			}
		}
	}
}

// stepEdge is a w×w image of a vertical step of height a at column x0
// (lo on the left), blurred by a Gaussian of sigma: v(x) = lo +
// a·Φ((x − x0)/σ), Φ the standard normal CDF.
func stepEdge(w int, x0, lo, a, sigma float64) []float32 {
	img := make([]float32, w*w)
	for y := range w {
		for x := range w {
			img[y*w+x] = float32(lo + a*0.5*(1+math.Erf((float64(x)-x0)/(sigma*math.Sqrt2))))
		}
	}
	return img
}

// TestEdgeBlurOfAStep checks the re-blur gradient ratio on the step edge it
// is derived for (Zhuo & Sim 2011): a step f(x) = lo + a·Φ((x − x0)/σ) (Φ
// the standard normal CDF), its central difference (f(p+1) − f(p−1))/2 at
// the pixel p nearest the edge, the same after the re-blur by the sampled
// Gaussian of σ₀ = 1 (radius 3, weights summing to 1), and σ̂ = σ₀/√(R²−1)
// from their ratio R, all written here from those definitions with
// math.Erf. Seen through the central difference, a box of width 2 and
// variance 1/3, σ̂ is close to √(σ² + 1/3) (the box variance w²/12 is common
// practice). σ̂ does not depend on the step's height or grey level.
func TestEdgeBlurOfAStep(t *testing.T) {
	const w = 48
	sc := make([]float32, 7*w*w)
	phi := func(z float64) float64 { return 0.5 * (1 + math.Erf(z/math.Sqrt2)) }
	var k [7]float64
	var ks float64
	for i := range k {
		k[i] = math.Exp(-float64((i-3)*(i-3)) / 2)
		ks += k[i]
	}
	expected := func(x0, sigma float64) float64 {
		p := math.Round(x0)
		f := func(x float64) float64 { return phi((x - x0) / sigma) }
		g := (f(p+1) - f(p-1)) / 2
		var g1 float64
		for i, kv := range k {
			tt := float64(i - 3)
			g1 += kv / ks * (f(p+1+tt) - f(p-1+tt)) / 2
		}
		r := g / g1
		return 1 / math.Sqrt(r*r-1)
	}
	for _, sigma := range []float64{0.8, 1, 1.5, 2, 3} {
		var first float64
		for j, c := range []struct{ x0, lo, a float64 }{{24, 0, 1}, {24, 0.2, 0.3}, {24.2, 0.5, 0.5}, {23.9, 0.1, 0.7}} {
			got, _, ok := edgeBlur(sc, stepEdge(w, c.x0, c.lo, c.a, sigma), w, w)
			if !ok {
				t.Fatalf("σ %.1f, step %+v: no estimate", sigma, c)
			}
			want := expected(c.x0, sigma)
			if math.Abs(got-want) > 1e-3*want {
				t.Errorf("σ %.1f, step %+v: estimate %.4f; the ratio's definition gives %.4f", sigma, c, got, want)
			}
			if approx := math.Sqrt(sigma*sigma + 1.0/3); math.Abs(got-approx) > 0.06*approx {
				t.Errorf("σ %.1f, step %+v: estimate %.3f, more than 6%% from √(σ²+1/3) = %.3f", sigma, c, got, approx)
			}
			if j == 0 {
				first = got
			} else if c.x0 == 24 && math.Abs(got-first) > 1e-5*first {
				t.Errorf("σ %.1f: estimate %.6f for a step of %.1f on %.1f, %.6f for a step of 1 on 0", sigma, got, c.a, c.lo, first)
			}
		}
	}
	// A flat image has no edges, hence no estimate.
	if _, _, ok := edgeBlur(sc, make([]float32, w*w), w, w); ok {
		t.Error("flat image: an estimate; want none")
	}
}

// strokeImage is a sharp digit-like pattern: a vertical bar, a crossbar and a
// diagonal, on a dark ground (the images of gen_deblur.py).
func strokeImage(h, w int) []float32 {
	img := make([]float32, h*w)
	for y := 4; y < h-4; y++ {
		for x := w/2 - 1; x < w/2+2; x++ {
			img[y*w+x] = 1
		}
	}
	for y := h/2 - 1; y < h/2+1; y++ {
		for x := 3; x < w-5; x++ {
			img[y*w+x] = 0.85
		}
	}
	for k := 0; k < min(h, w)-8; k++ {
		img[(4+k)*w+4+k/2] = 0.9
	}
	return img
}

// TestDeblurLeavesSharpAndRestoresBlurred: with the reference set to a sharp
// image's own estimate, Deblur "auto" leaves that image exactly as it is and
// brings a blurred copy closer to it (a smaller squared error), at every
// blur of the suite's grid that the estimate resolves.
func TestDeblurLeavesSharpAndRestoresBlurred(t *testing.T) {
	const h, w = 28, 28
	sharp := strokeImage(h, w)
	ref, _, ok := edgeBlur(make([]float32, 7*h*w), sharp, h, w)
	if !ok {
		t.Fatal("sharp image: no estimate")
	}
	on := InputConfig{Height: h, Width: w, Deblur: DeblurAuto, DeblurRef: ref, Normalize: NormalizeNone, Center: CenterNone, Denoise: DenoiseNone}.withDefaults()
	off := on
	off.Deblur = DeblurNone
	a := normalizeInput(nil, sharp, h, w, on)
	bb := normalizeInput(nil, sharp, h, w, off)
	for i := range a {
		if a[i] != bb[i] {
			t.Fatalf("sharp image: pixel %d changed from %v to %v", i, bb[i], a[i])
		}
	}
	sq := func(x []float32) float64 {
		var s float64
		for i, v := range x {
			d := float64(v - sharp[i])
			s += d * d
		}
		return s
	}
	blurred := make([]float32, h*w)
	for _, sigma := range []float64{1, 1.5, 2, 2.5} {
		datasets.Perturbation{Kind: datasets.Blur, Level: sigma}.Apply(blurred, sharp, h, w, 0)
		before := sq(blurred)
		after := sq(normalizeInput(nil, blurred, h, w, on))
		if !(after < 0.8*before) {
			t.Errorf("blur σ %.1f: squared error %.3f after deblurring, %.3f before; want at least 20%% less", sigma, after, before)
		}
	}
}

// TestDeblurConfigErrors: bad deblur settings are rejected with the field
// and the valid values named.
func TestDeblurConfigErrors(t *testing.T) {
	for _, c := range []struct {
		in   InputConfig
		want string
	}{
		{InputConfig{Deblur: "sharpen"}, `input.deblur "sharpen"; want "none" (default) or "auto"`},
		{InputConfig{Deblur: DeblurAuto, DeblurRef: -1}, "input.deblur_ref -1 px outside [0, 4]"},
		{InputConfig{Deblur: DeblurAuto, DeblurRef: math.NaN()}, "input.deblur_ref NaN px outside [0, 4]"},
	} {
		err := c.in.withDefaults().validate()
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v; want one containing %q", c.in, err, c.want)
		}
	}
}

// TestDeblurRefDeterministic: Fit's measured reference is the same whatever
// the worker count, lies in the range of clean digits' estimates, and Fit
// stores it in the model's configuration.
func TestDeblurRefDeterministic(t *testing.T) {
	train, _ := mnist(t)
	set := train.First(300)
	cfg, err := Preset("digits")
	if err != nil {
		t.Fatal(err)
	}
	cfg.Input.Deblur = DeblurAuto
	p, err := NewPlan(cfg)
	if err != nil {
		t.Fatal(err)
	}
	r1, r2 := measureDeblurRef(p, set, 1), measureDeblurRef(p, set, 3)
	if r1 != r2 {
		t.Fatalf("reference %v with 1 worker, %v with 3", r1, r2)
	}
	// Clean MNIST digits' edges read 0.47-0.74 px from the 10th to the 99th
	// percentile (measured here on training images 50,000-50,499; their
	// anti-aliased strokes are 2-3 px wide), so the 0.9 quantile lies
	// within (0.4, 1).
	if !(r1 > 0.4 && r1 < 1) {
		t.Errorf("reference %.3f px; want within (0.4, 1) for clean MNIST digits", r1)
	}
	cfg.Head.Epochs, cfg.HeadMinSteps, cfg.Unlabeled = 1, -1, 300
	m, err := Fit(cfg, set, FitOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if got := m.Config().Input.DeblurRef; got != r1 {
		t.Errorf("the fitted model's input.deblur_ref is %v; want the measured %v", got, r1)
	}
}
