package v1layer

import (
	"math/rand/v2"
	"testing"
)

// The band path gives bit for bit the maps of the whole-map path (second
// passes over whole maps, then the fused pooling): heights just around
// band multiples, odd and even, widths on and off the SIMD block sizes,
// both borders, the signed-DoG and rectified-Gabor stage kinds.
func TestBandsMatchWholeMaps(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 18))
	cfgs := []Config{
		{},
		{Border: BorderReflect},
		{DoG: DoGConfig{Signed: true}, Complex: ComplexConfig{Mode: "rectified"}},
	}
	shapes := [][2]int{{31, 40}, {60, 64}, {61, 47}, {91, 256}, {97, 30}}
	for ci, cfg := range cfgs {
		band, err := New(cfg)
		if err != nil {
			t.Fatal(err)
		}
		whole, _ := New(cfg)
		whole.bands = nil
		if band.bands == nil {
			t.Fatalf("config %d: no band path planned", ci)
		}
		for _, hw := range shapes {
			h, w := hw[0], hw[1]
			if !band.banded(h) {
				t.Fatalf("%dx%d: band path not taken", h, w)
			}
			img, _ := randImage(rng, h, w)
			var got, want Maps
			band.Apply(&got, img, h, w)
			whole.Apply(&want, img, h, w)
			if got.C != want.C || got.H != want.H || got.W != want.W {
				t.Fatalf("config %d %dx%d: shape %d×%d×%d, want %d×%d×%d", ci, h, w, got.C, got.H, got.W, want.C, want.H, want.W)
			}
			for i := range want.Pix {
				if got.Pix[i] != want.Pix[i] {
					t.Fatalf("config %d %dx%d: element %d = %g in bands, %g on whole maps", ci, h, w, i, got.Pix[i], want.Pix[i])
				}
			}
		}
	}
	// Configurations that need whole maps do not plan bands.
	for _, cfg := range []Config{
		{Pool: PoolConfig{Scales: true}},
		{Complex: ComplexConfig{EndStop: EndStopConfig{Enabled: true}}},
	} {
		f, err := New(cfg)
		if err != nil {
			t.Fatal(err)
		}
		if f.bands != nil {
			t.Errorf("%+v: band path planned", cfg)
		}
	}
}
