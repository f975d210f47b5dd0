package datasets

import (
	"image"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestPhotos checks the embedded set against scikit-image's documentation:
// the shapes stated in the docstrings of skimage/data/_fetchers.py (e.g.
// "chelsea : (300, 451, 3) uint8 ndarray"), a source and licence for each,
// and a README entry for each.
func TestPhotos(t *testing.T) {
	ph, err := Photos()
	if err != nil {
		t.Fatal(err)
	}
	want := map[string][2]int{ // (rows, cols) from the skimage docstrings
		"astronaut": {512, 512}, "brick": {512, 512}, "camera": {512, 512}, "chelsea": {300, 451},
		"coffee": {400, 600}, "grass": {512, 512}, "gravel": {512, 512}, "hubble_deep_field": {872, 1000},
		"rocket": {427, 640},
	}
	if len(ph) != len(want) {
		t.Fatalf("%d photos, want %d", len(ph), len(want))
	}
	readme, err := os.ReadFile("photos/README.md")
	if err != nil {
		t.Fatal(err)
	}
	for i, p := range ph {
		hw, ok := want[p.Name]
		if !ok || p.H != hw[0] || p.W != hw[1] || len(p.Pix) != p.H*p.W {
			t.Errorf("%s: %d×%d, want %v", p.Name, p.H, p.W, hw)
		}
		if i > 0 && ph[i-1].Name >= p.Name {
			t.Errorf("photos not in name order at %s", p.Name)
		}
		if p.Source == "" || p.License == "" || !strings.Contains(string(readme), "`"+p.Name+".png`") {
			t.Errorf("%s: source/licence/README entry missing", p.Name)
		}
		lo, hi := float32(1), float32(0)
		for _, v := range p.Pix {
			lo, hi = min(lo, v), max(hi, v)
		}
		if lo < 0 || hi > 1 || hi-lo < 0.5 {
			t.Errorf("%s: pixel range [%v, %v]", p.Name, lo, hi)
		}
	}
	// Fresh copies: changing one call's pixels leaves the next call's alone.
	ph[0].Pix[0] = -7
	again, _ := Photos()
	if again[0].Pix[0] == -7 {
		t.Error("Photos returns shared pixels")
	}
}

// TestPhotosMatchSkimage: the photos that are grey in scikit-image itself are
// embedded byte for byte (compared with Debian's python3-skimage files when
// installed).
func TestPhotosMatchSkimage(t *testing.T) {
	dir := "/usr/lib/python3/dist-packages/skimage/data"
	ph, err := Photos()
	if err != nil {
		t.Fatal(err)
	}
	byName := map[string]Photo{}
	for _, p := range ph {
		byName[p.Name] = p
	}
	for _, name := range []string{"camera", "brick", "grass", "gravel"} {
		f, err := os.Open(filepath.Join(dir, name+".png"))
		if err != nil {
			t.Skipf("python3-skimage not installed: %v", err)
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		g, ok := img.(*image.Gray)
		if !ok {
			t.Fatalf("%s: skimage file is %T", name, img)
		}
		p := byName[name]
		for i, v := range p.Pix {
			if uint8(v*255+0.5) != g.Pix[(i/p.W)*g.Stride+i%p.W] {
				t.Fatalf("%s differs from skimage's at pixel %d", name, i)
			}
		}
	}
}
