package datasets

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// TestWhitenImageMatchesNumPy compares WhitenImage with the same filter done
// by numpy.fft (NumPy 1.24.2) on a 24×32 crop of camera.png
// (testdata/datasets/whiten/onef.json, generator gen_whiten.py). The
// non-square crop catches swapped axes.
func TestWhitenImageMatchesNumPy(t *testing.T) {
	raw, err := os.ReadFile("../testdata/datasets/whiten/onef.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		H, W, Y0, X0 int
		F0           float64
		Output       []float64
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	ph, err := Photos()
	if err != nil {
		t.Fatal(err)
	}
	var cam Photo
	for _, p := range ph {
		if p.Name == "camera" {
			cam = p
		}
	}
	crop := make([]float32, ref.H*ref.W)
	for y := 0; y < ref.H; y++ {
		copy(crop[y*ref.W:(y+1)*ref.W], cam.Pix[(ref.Y0+y)*cam.W+ref.X0:])
	}
	got := WhitenImage(nil, crop, ref.H, ref.W, ref.F0)
	// Tolerance: float32 output of values of order 0.1 (rounding ~1e-8)
	// plus FFT rounding; 1e-6 is far below any formula error (a wrong f0 or
	// frequency grid changes values by 1e-2 or more).
	const tol = 1e-6
	for i := range got {
		if math.Abs(float64(got[i])-ref.Output[i]) > tol {
			t.Fatalf("pixel %d: %v, NumPy %v", i, got[i], ref.Output[i])
		}
	}
	// In place, and the default f0.
	again := WhitenImage(crop, crop, ref.H, ref.W, 0)
	if &again[0] != &crop[0] || math.Abs(float64(again[5])-ref.Output[5]) > tol {
		t.Error("in-place / default f0 result differs")
	}
}

// TestWhitenResponse: R(0) = 0 (zero-mean output), R rises like f at low
// frequency, peaks at f = f0·4^(−1/4) (the zero of dR/df = (1 − 4(f/f0)⁴)e^…),
// and the output of a constant image is zero.
func TestWhitenResponse(t *testing.T) {
	if WhitenResponse(0, 0.4) != 0 {
		t.Error("R(0) ≠ 0")
	}
	if r := WhitenResponse(1e-3, 0.4); math.Abs(r-1e-3) > 1e-12 {
		t.Errorf("R(1e-3) = %g, want ≈ 1e-3", r)
	}
	peak := 0.4 * math.Pow(4, -0.25)
	for _, f := range []float64{peak * 0.98, peak * 1.02} {
		if WhitenResponse(f, 0.4) >= WhitenResponse(peak, 0.4) {
			t.Errorf("R(%g) ≥ R(peak %g)", f, peak)
		}
	}
	flat := make([]float32, 6*10)
	for i := range flat {
		flat[i] = 0.7
	}
	for _, v := range WhitenImage(nil, flat, 6, 10, 0.4) {
		if math.Abs(float64(v)) > 1e-6 {
			t.Fatalf("constant image gave %v", v)
		}
	}
	ph := WhitenPhotos([]Photo{{Name: "f", H: 6, W: 10, Pix: flat}}, 0)
	if ph[0].Pix[0] > 1e-6 || flat[0] != 0.7 {
		t.Error("WhitenPhotos changed its input or missed the filter")
	}
	defer func() {
		if recover() == nil {
			t.Error("size mismatch did not panic")
		}
	}()
	WhitenImage(nil, flat, 7, 10, 0)
}
