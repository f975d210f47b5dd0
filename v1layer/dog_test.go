package v1layer

import (
	"math"
	"testing"
)

type scipyRef struct {
	Versions map[string]string
	Images   []struct {
		Name  string
		H, W  int
		PixU8 []int `json:"pix_u8"`
		Gauss []struct {
			Mode   string
			Sigma  float64
			Radius int
			Out    []float64
		}
		DoG []struct {
			Mode   string
			SigmaC float64 `json:"sigma_c"`
			Ratio  float64
			Radius int
			Out    []float64
		}
		LCN []struct {
			Mode     string
			SigmaC   float64 `json:"sigma_c"`
			LCNSigma float64 `json:"lcn_sigma"`
			Epsilon  float64
			Out      []float64
		}
	}
}

func border(mode string) Border {
	if mode == "reflect" {
		return BorderReflect
	}
	return BorderZero // scipy mode "constant" with cval 0
}

func maxAbsDiff(got []float32, want []float64) float64 {
	var w float64
	for i, v := range want {
		w = math.Max(w, math.Abs(float64(got[i])-v))
	}
	return w
}

// Gaussian smoothing, DoG and local contrast normalisation equal SciPy
// 1.10.1's scipy.ndimage.gaussian_filter responses (Debian python3-scipy)
// on the committed images of testdata/v1layer/gauss_scipy.json.gz (a crop
// of skimage's camera.png and a seeded random image), zero ("constant")
// and reflect borders. Tolerance 2e-6: float32 arithmetic on values ≤ 1
// with kernels summing to 1 (Gaussian) or of unit L2 (DoG: responses up
// to ~1.5, sums of 441 products) rounds at ~1e-7..1e-6.
func TestGaussDoGLCNMatchSciPy(t *testing.T) {
	var ref scipyRef
	readGz(t, "gauss_scipy.json.gz", &ref)
	const tol = 2e-6
	for _, im := range ref.Images {
		img := make([]float32, len(im.PixU8))
		for i, v := range im.PixU8 {
			img[i] = float32(v) / 255
		}
		h, w := im.H, im.W
		for _, g := range im.Gauss {
			g64 := Gaussian1D(g.Sigma, g.Radius)
			g32 := make([]float32, len(g64))
			for i, v := range g64 {
				g32[i] = float32(v)
			}
			out := make([]float32, h*w)
			gaussSep(out, img, h, w, g32, border(g.Mode), make([]float32, h*w))
			if d := maxAbsDiff(out, g.Out); d > tol {
				t.Errorf("%s gaussian σ=%g %s: max |Δ| = %.3g vs scipy %s", im.Name, g.Sigma, g.Mode, d, ref.Versions["scipy"])
			}
		}
		for _, d := range im.DoG {
			f, err := New(Config{Gabor: GaborConfig{Disable: true}, Border: border(d.Mode),
				DoG: DoGConfig{Sigmas: []float64{d.SigmaC}, Ratio: d.Ratio, Signed: true}, Pool: PoolConfig{Size: 1}})
			if err != nil {
				t.Fatal(err)
			}
			var out Maps
			f.Apply(&out, img, h, w)
			if diff := maxAbsDiff(out.Pix, d.Out); diff > tol {
				t.Errorf("%s DoG σc=%g %s: max |Δ| = %.3g vs scipy", im.Name, d.SigmaC, d.Mode, diff)
			}
		}
		for _, l := range im.LCN {
			f, err := New(Config{Gabor: GaborConfig{Disable: true}, Border: border(l.Mode), Pool: PoolConfig{Size: 1},
				DoG: DoGConfig{Sigmas: []float64{l.SigmaC}, Signed: true, LCN: LCNConfig{Enabled: true, Sigma: l.LCNSigma, Epsilon: l.Epsilon}}})
			if err != nil {
				t.Fatal(err)
			}
			var out Maps
			f.Apply(&out, img, h, w)
			// LCN divides by ε + local RMS ≥ 0.01: rounding grows by up to 1/ε
			// relative to the DoG's, so the tolerance is 100× larger here.
			if diff := maxAbsDiff(out.Pix, l.Out); diff > 100*tol {
				t.Errorf("%s LCN %s: max |Δ| = %.3g vs scipy", im.Name, l.Mode, diff)
			}
		}
	}
}

// A uniform field gives zero DoG response (the kernel sums to zero: both
// Gaussians are normalised over the same support). With a reflect border
// the field stays uniform up to the edge, so every pixel is checked; with
// a zero border, pixels farther than r from the edge.
func TestDoGConstantIsZero(t *testing.T) {
	for _, b := range []Border{BorderReflect, BorderZero} {
		f, err := New(Config{Gabor: GaborConfig{Disable: true}, Border: b, DoG: DoGConfig{Sigmas: []float64{1, 2, 3.3}, Ratio: 2.2, Signed: true}, Pool: PoolConfig{Size: 1}})
		if err != nil {
			t.Fatal(err)
		}
		h, w := 48, 40
		img := make([]float32, h*w)
		for i := range img {
			img[i] = 0.73
		}
		var out Maps
		f.Apply(&out, img, h, w)
		for c, k := range f.Kernels() {
			r := k.Size / 2
			m := out.Channel(c)
			for y := 0; y < h; y++ {
				for x := 0; x < w; x++ {
					inner := y >= r && y < h-r && x >= r && x < w-r
					if b == BorderZero && !inner {
						continue
					}
					// 1e-6: float32 sum of ~1,000 products of size ~0.05·0.73.
					if v := m[y*w+x]; math.Abs(float64(v)) > 1e-6 {
						t.Fatalf("%s σ=%g: response %.3g at (%d,%d) for a uniform field, want 0", b, k.Meta.Sigma, v, y, x)
					}
				}
			}
		}
	}
	k := DoGKernel(1, 1.6, 3)
	var s, s2 float64
	for _, w := range k.W {
		s += float64(w)
		s2 += float64(w) * float64(w)
	}
	if math.Abs(s) > 1e-6 || math.Abs(s2-1) > 1e-6 || k.Size != 11 {
		t.Errorf("DoGKernel(1,1.6,3): size %d, sum %.2g, sum of squares %.7f; want 11 (filterbank.json), 0, 1", k.Size, s, s2)
	}
}

func TestDoGConfigErrors(t *testing.T) {
	for _, c := range []DoGConfig{{Sigmas: []float64{0.1}}, {Ratio: 0.9}, {Ratio: 1}, {Radius: 7}, {LCN: LCNConfig{Enabled: true, Epsilon: -1}}} {
		if _, err := New(Config{DoG: c}); err == nil {
			t.Errorf("DoG config %+v accepted", c)
		}
	}
}
