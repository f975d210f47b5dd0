package datasets

import (
	"image"
	"image/color"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// greyLevel is one step of an 8-bit grey scale, the unit of the decoder and
// perturbation tolerances.
const greyLevel = 1.0 / 255

// quant16 is the quantisation step of ToGray's 16-bit intermediate image.
const quant16 = 1.0 / 65535

func uniform(c color.Color, w, h int) image.Image {
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	for i := 0; i < w*h; i++ {
		img.Set(i%w, i/w, c)
	}
	return img
}

// TestToGrayBT601KnownColours: the luma of the primaries is the BT.601
// coefficient itself (ITU-R BT.601-7, section 2.5.1), white is 1, and the
// result agrees with the standard library's color.GrayModel, which uses the
// same weights in 16-bit fixed point (19595, 38470, 7471)/65536.
func TestToGrayBT601KnownColours(t *testing.T) {
	cases := []struct {
		c    color.RGBA
		want float64
	}{
		{color.RGBA{255, 0, 0, 255}, 0.299},
		{color.RGBA{0, 255, 0, 255}, 0.587},
		{color.RGBA{0, 0, 255, 255}, 0.114},
		{color.RGBA{255, 255, 255, 255}, 1},
		{color.RGBA{0, 0, 0, 255}, 0},
		{color.RGBA{255, 255, 0, 255}, 0.886},
		{color.RGBA{128, 128, 128, 255}, 128.0 / 255},
		{color.RGBA{0, 0, 0, 0}, 0},                     // transparent counts as black
		{color.RGBA{128, 0, 0, 128}, 0.299 * 128 / 255}, // premultiplied half-transparent red over black
	}
	for _, c := range cases {
		got := ToGray(nil, uniform(c.c, 3, 2), 0, 0)
		if len(got) != 6 {
			t.Fatalf("len %d", len(got))
		}
		// Tolerance: half a 16-bit step of the intermediate, plus float32 rounding.
		if math.Abs(float64(got[0])-c.want) > quant16 {
			t.Errorf("%v: luma %.6f, want %.6f (BT.601)", c.c, got[0], c.want)
		}
		std := color.GrayModel.Convert(c.c).(color.Gray).Y
		if c.c.A == 255 && math.Abs(float64(got[0])*255-float64(std)) > 0.5+1e-3 {
			t.Errorf("%v: luma %.3f grey levels, image/color.GrayModel %d", c.c, got[0]*255, std)
		}
	}
	// A Gray image takes the fast path and is reproduced exactly.
	g := image.NewGray(image.Rect(2, 3, 5, 4))
	copy(g.Pix, []byte{0, 77, 255})
	if got := ToGray(nil, g, 0, 0); got[1] != 77.0/255 || got[2] != 1 {
		t.Errorf("Gray fast path: %v", got)
	}
}

// TestToGrayResize: a constant image stays constant at any size, and
// shrinking averages (a 4×4 checkerboard of 0/1 shrunk to 1×1 is 0.5),
// which is what x/image/draw's kernel scaler does when it widens its support.
func TestToGrayResize(t *testing.T) {
	c := uniform(color.RGBA{51, 51, 51, 255}, 17, 9)
	for _, sz := range [][2]int{{28, 28}, {4, 3}, {9, 17}} {
		got := ToGray(make([]float32, 1), c, sz[0], sz[1])
		if len(got) != sz[0]*sz[1] {
			t.Fatalf("%v: len %d", sz, len(got))
		}
		for _, v := range got {
			if math.Abs(float64(v)-0.2) > quant16 {
				t.Fatalf("%v: constant 0.2 became %v", sz, v)
			}
		}
	}
	cb := image.NewGray(image.Rect(0, 0, 4, 4))
	for i := range cb.Pix {
		if (i%4+i/4)%2 == 0 {
			cb.Pix[i] = 255
		}
	}
	if got := ToGray(nil, cb, 1, 1); math.Abs(float64(got[0])-0.5) > 2*quant16 {
		t.Errorf("checkerboard mean %v, want 0.5", got[0])
	}
	defer func() {
		if recover() == nil {
			t.Error("empty image did not panic")
		}
	}()
	ToGray(nil, image.NewGray(image.Rect(0, 0, 0, 5)), 2, 2)
}

// xImageTestdata returns the testdata folder of the golang.org/x/image module.
func xImageTestdata(t *testing.T) string {
	out, err := exec.Command("go", "list", "-m", "-f", "{{.Dir}}", "golang.org/x/image").Output()
	dir := filepath.Join(strings.TrimSpace(string(out)), "testdata")
	if err != nil {
		t.Skipf("cannot locate golang.org/x/image: %v", err)
	}
	if _, err := os.Stat(dir); err != nil {
		t.Skipf("x/image testdata absent: %v", err)
	}
	return dir
}

func decodeT(t *testing.T, p string) image.Image {
	t.Helper()
	img, reason := decodeFile(p)
	if reason != "" {
		t.Fatalf("%s: %s", p, reason)
	}
	return img
}

// TestDecoderTwins decodes the standard library's and x/image's own test
// images (the same picture stored in several formats) and compares their
// luma. Lossless twins must agree exactly; lossy ones within the tolerance
// their format allows.
func TestDecoderTwins(t *testing.T) {
	std := filepath.Join(os.Getenv("GOROOT"), "src", "image", "testdata")
	if os.Getenv("GOROOT") == "" {
		out, _ := exec.Command("go", "env", "GOROOT").Output()
		std = filepath.Join(strings.TrimSpace(string(out)), "src", "image", "testdata")
	}
	if _, err := os.Stat(std); err != nil {
		t.Skipf("standard library test images absent: %v", err)
	}
	x := xImageTestdata(t)
	cases := []struct {
		a, b          string
		maxGL, meanGL float64 // tolerances in grey levels
		why           string
	}{
		{filepath.Join(std, "video-001.png"), filepath.Join(x, "video-001.bmp"), 0, 0, "BMP is lossless"},
		{filepath.Join(std, "video-001.png"), filepath.Join(x, "video-001.tiff"), 0, 0, "TIFF is lossless"},
		{filepath.Join(x, "bmp_8bpp.png"), filepath.Join(x, "bmp_8bpp.bmp"), 0, 0, "paletted BMP is lossless"},
		{filepath.Join(x, "bw-gopher.png"), filepath.Join(x, "bw-gopher_ccittGroup4.tiff"), 0, 0, "CCITT G4 is lossless"},
		{filepath.Join(x, "blue-purple-pink.png"), filepath.Join(x, "blue-purple-pink.lossless.webp"), 0, 0, "lossless WebP"},
		// x/image's grey TIFF of the same frame, converted by its authors'
		// tool: agreeing within one level of rounding confirms the BT.601
		// weights on real pixels.
		{filepath.Join(std, "video-001.png"), filepath.Join(x, "video-001-gray.tiff"), 1, 0.5, "independent grey conversion, rounded to 8 bits"},
		// JPEG: the PNG is the decoded JPEG frame; IDCT rounding differs by a
		// level or two (measured 1.55 max, 0.31 mean).
		{filepath.Join(std, "video-001.png"), filepath.Join(std, "video-001.jpeg"), 2, 0.5, "JPEG decoder rounding"},
		// GIF holds at most 256 colours; palette quantisation moves the luma
		// by up to tens of levels at single pixels (measured 33 max, 2.46 mean).
		{filepath.Join(std, "video-001.png"), filepath.Join(std, "video-001.gif"), 40, 3, "256-colour palette"},
		{filepath.Join(std, "video-005.gray.png"), filepath.Join(std, "video-005.gray.gif"), 5, 1, "palette of a grey picture"},
	}
	for _, c := range cases {
		a := ToGray(nil, decodeT(t, c.a), 0, 0)
		b := ToGray(nil, decodeT(t, c.b), 0, 0)
		if len(a) != len(b) {
			t.Errorf("%s vs %s: %d vs %d pixels", filepath.Base(c.a), filepath.Base(c.b), len(a), len(b))
			continue
		}
		var mx, sum float64
		for i := range a {
			d := math.Abs(float64(a[i]-b[i])) / greyLevel
			mx, sum = math.Max(mx, d), sum+d
		}
		mean := sum / float64(len(a))
		if mx > c.maxGL+1e-3 || mean > c.meanGL+1e-3 {
			t.Errorf("%s vs %s (%s): max %.2f mean %.3f grey levels, want ≤ %.0f and ≤ %.1f", filepath.Base(c.a), filepath.Base(c.b), c.why, mx, mean, c.maxGL, c.meanGL)
		}
	}
}
