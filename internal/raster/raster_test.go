package raster

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// ref is testdata/raster/raster_ref.json, written by make_raster_ref.py
// from SciPy 1.10.1 and NumPy 1.24.2 (Debian): map_coordinates (order 1)
// in modes "grid-constant", "nearest" and "constant", numpy.pad "symmetric" and
// scipy.ndimage's Gaussian weights.
type ref struct {
	Source       string               `json:"source"`
	H            int                  `json:"h"`
	W            int                  `json:"w"`
	Image        []float32            `json:"image"`
	Points       [][2]float64         `json:"points"`
	GridConstant []float64            `json:"grid_constant"`
	Constant     []float64            `json:"constant"`
	Nearest      []float64            `json:"nearest"`
	ReflectN     int                  `json:"reflect_n"`
	ReflectIdx   []int                `json:"reflect_idx"`
	Reflect      []int                `json:"reflect"`
	Gaussian     map[string][]float64 `json:"gaussian"`
}

func loadRef(t *testing.T) ref {
	b, err := os.ReadFile("../../testdata/raster/raster_ref.json")
	if err != nil {
		t.Fatal(err)
	}
	var r ref
	if err := json.Unmarshal(b, &r); err != nil {
		t.Fatal(err)
	}
	if len(r.Image) != r.H*r.W {
		t.Fatalf("reference image of %d values for %d×%d", len(r.Image), r.H, r.W)
	}
	return r
}

// TestBilinearAgainstSciPy: the three samplers equal map_coordinates (order 1)
// in the matching mode at random points in and around a 5×7 image, the
// borders included (source: the reference file).
func TestBilinearAgainstSciPy(t *testing.T) {
	r := loadRef(t)
	img64 := make([]float64, len(r.Image))
	for i, v := range r.Image {
		img64[i] = float64(v)
	}
	for i, p := range r.Points {
		if got := Bilinear(img64, r.H, r.W, p[0], p[1]); math.Abs(got-r.GridConstant[i]) > 1e-12 {
			t.Errorf("Bilinear at (%g, %g) = %.15g, %s grid-constant %.15g", p[0], p[1], got, r.Source, r.GridConstant[i])
		}
		if got := float64(Bilinear(r.Image, r.H, r.W, p[0], p[1])); math.Abs(got-r.GridConstant[i]) > 1e-6 {
			t.Errorf("float32 Bilinear at (%g, %g) = %.8g, want %.8g", p[0], p[1], got, r.GridConstant[i])
		}
		if got := BilinearEdge(r.Image, r.H, r.W, p[0], p[1]); math.Abs(got-r.Nearest[i]) > 1e-12 {
			t.Errorf("BilinearEdge at (%g, %g) = %.15g, %s nearest %.15g", p[0], p[1], got, r.Source, r.Nearest[i])
		}
		if got := BilinearInside(r.Image, r.H, r.W, p[0], p[1]); math.Abs(got-r.Constant[i]) > 1e-12 {
			t.Errorf("BilinearInside at (%g, %g) = %.15g, %s constant %.15g", p[0], p[1], got, r.Source, r.Constant[i])
		}
	}
}

// TestReflectAgainstNumPy: Reflect equals numpy.pad's "symmetric" mode for
// indices up to four periods out, both sides.
func TestReflectAgainstNumPy(t *testing.T) {
	r := loadRef(t)
	for k, i := range r.ReflectIdx {
		if got := Reflect(i, r.ReflectN); got != r.Reflect[k] {
			t.Errorf("Reflect(%d, %d) = %d, numpy symmetric %d", i, r.ReflectN, got, r.Reflect[k])
		}
	}
}

// TestGaussianAgainstSciPy: the weights equal scipy.ndimage's 1-D Gaussian
// kernel of the same σ and radius.
func TestGaussianAgainstSciPy(t *testing.T) {
	r := loadRef(t)
	cases := map[string][2]float64{"0.7/3": {0.7, 3}, "1/4": {1, 4}, "2.5/10": {2.5, 10}}
	for key, c := range cases {
		want := r.Gaussian[key]
		got := Gaussian(c[0], int(c[1]))
		if len(got) != len(want) {
			t.Fatalf("σ %g r %g: %d weights, SciPy %d", c[0], c[1], len(got), len(want))
		}
		for i := range got {
			if math.Abs(got[i]-want[i]) > 1e-15 {
				t.Errorf("σ %g r %g weight %d: %.17g, SciPy %.17g", c[0], c[1], i, got[i], want[i])
			}
		}
	}
}
