package pipeline

import (
	"encoding/json"
	"os"
	"strings"
	"testing"
)

// morphRef is testdata/pipeline/morph.json, written by gen_morph.py with
// scikit-image 0.19.3 (area opening and closing) and SciPy 1.10.1 (3×3 grey
// opening). The filters only select and copy input values, so the checks
// are exact.
type morphRef struct {
	Area []struct {
		H, W, Lambda int
		Conn8        bool
		In, Open     []float32
		Close        []float32
	}
	Grey []struct {
		H, W              int
		In, Open3, Close3 []float32
	}
}

func loadMorphRef(t *testing.T) morphRef {
	t.Helper()
	b, err := os.ReadFile("../testdata/pipeline/morph.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref morphRef
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	return ref
}

// TestAreaOpenCloseMatchScikitImage compares areaOpen and areaClose with
// skimage.morphology.area_opening and area_closing at area thresholds 2, 4
// and 9, connectivity 4 and 8, on images with ties and on a stroke with
// specks and holes.
func TestAreaOpenCloseMatchScikitImage(t *testing.T) {
	ref := loadMorphRef(t)
	if len(ref.Area) == 0 {
		t.Fatal("no area cases in morph.json")
	}
	var s areaScratch
	for ci, c := range ref.Area {
		n := c.H * c.W
		got, tmp := make([]float32, n), make([]float32, n)
		areaOpen(got, c.In, c.H, c.W, c.Lambda, c.Conn8, &s)
		for i := range got {
			if got[i] != c.Open[i] {
				t.Fatalf("case %d (λ %d, conn8 %v) opening pixel %d: %v; scikit-image gives %v", ci, c.Lambda, c.Conn8, i, got[i], c.Open[i])
			}
		}
		areaClose(got, c.In, tmp, c.H, c.W, c.Lambda, c.Conn8, &s)
		for i := range got {
			// 1 − (1 − v) is exact for the eighths and halves the images hold.
			if got[i] != c.Close[i] {
				t.Fatalf("case %d (λ %d, conn8 %v) closing pixel %d: %v; scikit-image gives %v", ci, c.Lambda, c.Conn8, i, got[i], c.Close[i])
			}
		}
	}
}

// TestGreyOpen3MatchesSciPy compares greyOpen3 and greyClose3 with
// scipy.ndimage.grey_opening and grey_closing (size=3, mode="nearest").
func TestGreyOpen3MatchesSciPy(t *testing.T) {
	ref := loadMorphRef(t)
	for ci, c := range ref.Grey {
		n := c.H * c.W
		got, tmp := make([]float32, n), make([]float32, n)
		greyOpen3(got, c.In, tmp, c.H, c.W)
		for i := range got {
			if got[i] != c.Open3[i] {
				t.Fatalf("case %d pixel %d: %v; SciPy gives %v", ci, i, got[i], c.Open3[i])
			}
		}
		greyClose3(got, c.In, tmp, c.H, c.W)
		for i := range got {
			if got[i] != c.Close3[i] {
				t.Fatalf("closing, case %d pixel %d: %v; SciPy gives %v", ci, i, got[i], c.Close3[i])
			}
		}
	}
}

// TestAreaOpenProperties checks the defining properties of an opening
// (Serra 1982): anti-extensive (never brighter than the input) and
// idempotent (a second pass changes nothing); and that a speck of fewer
// than λ pixels goes while a bar of λ or more stays untouched.
func TestAreaOpenProperties(t *testing.T) {
	const h, w, lam = 12, 12, 5
	img := make([]float32, h*w)
	img[1*w+1], img[1*w+2] = 1, 0.8 // a 2-pixel speck
	for y := 4; y < 10; y++ {       // a 6-pixel bar, 1 px wide
		img[y*w+7] = 0.6
	}
	var s areaScratch
	a, b := make([]float32, h*w), make([]float32, h*w)
	areaOpen(a, img, h, w, lam, false, &s)
	areaOpen(b, a, h, w, lam, false, &s)
	for i := range img {
		if a[i] > img[i] {
			t.Fatalf("pixel %d brightened: %v > %v", i, a[i], img[i])
		}
		if a[i] != b[i] {
			t.Fatalf("not idempotent at pixel %d: %v then %v", i, a[i], b[i])
		}
	}
	if a[1*w+1] != 0 || a[1*w+2] != 0 {
		t.Errorf("the 2-pixel speck survived: %v %v", a[1*w+1], a[1*w+2])
	}
	for y := 4; y < 10; y++ {
		if a[y*w+7] != 0.6 {
			t.Errorf("bar pixel (%d,7) changed to %v", y, a[y*w+7])
		}
	}
}

// TestAdaptiveDenoiseRemovesImpulses checks DenoiseAdaptive on the case the
// area filters are defined for (Vincent 1993): a bar far larger than the
// area thresholds, salt on the background and pepper holes in the bar, no
// pixel of it adjacent to another. Every impulse is a component of one
// pixel, so the opening and closing restore the clean image exactly, its
// noise estimate is then 0 and no median pass follows.
func TestAdaptiveDenoiseRemovesImpulses(t *testing.T) {
	const h, w = 28, 28
	clean := make([]float32, h*w)
	for y := 4; y < 24; y++ {
		for x := 12; x < 16; x++ {
			clean[y*w+x] = 1
		}
	}
	noisy := append([]float32(nil), clean...)
	for _, p := range [][2]int{{2, 2}, {2, 20}, {10, 5}, {20, 22}, {26, 8}} {
		noisy[p[0]*w+p[1]] = 1 // salt
	}
	for _, p := range [][2]int{{6, 13}, {12, 14}, {18, 13}} {
		noisy[p[0]*w+p[1]] = 0 // pepper
	}
	n := h * w
	dst, tmp, tmp2, scratch := make([]float32, n), make([]float32, n), make([]float32, n), make([]float32, n)
	if adaptiveDenoise(dst, tmp, tmp2, scratch, noisy, h, w) {
		t.Error("noise reported after the impulses were removed")
	}
	for i := range dst {
		if dst[i] != clean[i] {
			t.Fatalf("pixel (%d,%d): %v; the clean image has %v", i/w, i%w, dst[i], clean[i])
		}
	}
}

// TestCenterRobustIgnoresLine checks CenterRobust on a 6×6 block with a
// 1-px line across the image 10 rows below it: the plain centre of mass is
// pulled toward the line (its row mean (36·ȳ_block + 28·ȳ_line)/64), while
// the 3×3 opening removes the line, so the block's own centre (an exact
// formula: the mean of its rows and columns) is moved to the image centre.
func TestCenterRobustIgnoresLine(t *testing.T) {
	const h, w = 28, 28
	img := make([]float32, h*w)
	for y := 3; y < 9; y++ { // block rows 3…8, centre 5.5
		for x := 4; x < 10; x++ { // columns 4…9, centre 6.5
			img[y*w+x] = 1
		}
	}
	for x := range w {
		img[18*w+x] = 1
	}
	n := h * w
	dst, tmp, tmp2 := make([]float32, n), make([]float32, n), make([]float32, n)
	centerRobust(dst, img, tmp, tmp2, h, w)
	// round(13.5 − 5.5) = 8 rows down, round(13.5 − 6.5) = 7 columns right.
	if dst[(3+8)*w+4+7] != 1 || dst[(8+8)*w+9+7] != 1 || dst[(3+8)*w+4+6] != 0 {
		t.Errorf("block not moved by (8, 7)")
	}
	if dy, _, _ := massShift(img, h, w); dy == 8 {
		t.Errorf("the plain centre of mass is not pulled by the line (shift %d): the test shows nothing", dy)
	}
}

// TestAdaptiveRobustModesValidate checks that the two modes are accepted and
// that a bad value's error names them among the valid values.
func TestAdaptiveRobustModesValidate(t *testing.T) {
	ok := InputConfig{Denoise: DenoiseAdaptive, Center: CenterRobust}.withDefaults()
	if err := ok.validate(); err != nil {
		t.Fatalf("adaptive/robust rejected: %v", err)
	}
	for _, c := range []InputConfig{{Denoise: "area"}, {Center: "median"}} {
		err := c.withDefaults().validate()
		if err == nil {
			t.Fatalf("%+v accepted", c)
		}
		if want := map[bool]string{true: `"adaptive"`, false: `"robust"`}[c.Denoise != ""]; !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not name %s", err, want)
		}
	}
}
