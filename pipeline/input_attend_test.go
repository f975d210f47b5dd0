package pipeline

import (
	"encoding/json"
	"math"
	"os"
	"slices"
	"strings"
	"testing"
)

// attendRef is testdata/pipeline/attend.json, written by gen_attend.py with
// scikit-image 0.19.3 (skimage.filters.threshold_otsu, 256 bins) and SciPy
// 1.10.1 (scipy.ndimage.label, 3×3 structure of ones).
type attendRef struct {
	Cases []struct {
		H, W   int
		In     []float32
		Otsu   float64
		N      int
		Labels []int32
	}
}

// otsuTol: the threshold is a bin centre lo + (i + ½)·(hi − lo)/256, which
// we compute in float64 and round to float32 (scikit-image keeps the
// image's float32 in parts of the sum), so the two differ by a few float32
// ulps at most; the bin chosen must be the same, which the masks check.
const otsuTol = 1e-6

func loadAttendRef(t *testing.T) attendRef {
	t.Helper()
	b, err := os.ReadFile("../testdata/pipeline/attend.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref attendRef
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) == 0 {
		t.Fatal("no cases in attend.json")
	}
	return ref
}

// TestOtsuMatchesScikitImage compares otsuThreshold with
// skimage.filters.threshold_otsu and the ink masks v > t they give, on
// random grey levels, a stroke in eighths (values on bin edges), a
// low-contrast copy of it and MNIST test digits with fragments pasted in.
func TestOtsuMatchesScikitImage(t *testing.T) {
	hist := make([]int64, otsuBins)
	for ci, c := range loadAttendRef(t).Cases {
		got, ok := otsuThreshold(c.In, hist)
		if !ok || math.Abs(float64(got)-c.Otsu) > otsuTol {
			t.Fatalf("case %d: threshold %v (ok %v); scikit-image gives %v", ci, got, ok, c.Otsu)
		}
		for i, v := range c.In {
			if (v > got) != (c.Labels[i] != 0) {
				t.Fatalf("case %d pixel %d (%v): ink %v under %v; scikit-image's threshold %v says %v", ci, i, v, v > got, got, c.Otsu, c.Labels[i] != 0)
			}
		}
	}
	if _, ok := otsuThreshold([]float32{0.3, 0.3, 0.3}, hist); ok {
		t.Error("a flat image has a threshold")
	}
}

// TestLabel8MatchesSciPy compares label8 with scipy.ndimage.label (8-
// connectivity): the same number of components and the same label at every
// pixel (both number components in raster order of their first pixel).
func TestLabel8MatchesSciPy(t *testing.T) {
	for ci, c := range loadAttendRef(t).Cases {
		ink := make([]bool, len(c.In))
		for i, l := range c.Labels {
			ink[i] = l != 0
		}
		lab := make([]int32, len(ink))
		n, _ := label8(lab, ink, c.H, c.W, nil)
		if n != c.N {
			t.Fatalf("case %d: %d components; SciPy finds %d", ci, n, c.N)
		}
		for i := range lab {
			if lab[i] != c.Labels[i] {
				t.Fatalf("case %d pixel %d: label %d; SciPy gives %d", ci, i, lab[i], c.Labels[i])
			}
		}
	}
}

// itemWithStrays returns a 28×28 image holding a thick anti-aliased ring
// (the item, about 150 px of ink) and, when strays is set, a 3×3 speck and
// a short bar away from it, each below half its mass.
func itemWithStrays(strays bool) []float32 {
	img := make([]float32, 28*28)
	for y := range 28 {
		for x := range 28 {
			r := math.Hypot(float64(y)-13, float64(x)-15)
			img[y*28+x] = float32(max(0, min(1, 2.5-math.Abs(r-6))))
		}
	}
	if strays {
		for y := 1; y < 4; y++ {
			for x := 1; x < 4; x++ {
				img[y*28+x] = 1
			}
		}
		for x := 18; x < 26; x++ {
			img[25*28+x], img[26*28+x] = 0.9, 0.6
		}
	}
	return img
}

// TestAttendClearsStrays checks the property CenterAttend rests on: ink
// components separate from the item and below half its mass are cleared,
// and the item is untouched, so the centring of "attend" on the item with
// strays is that of "mass" on the item alone; an image that is one item
// is not changed at all.
func TestAttendClearsStrays(t *testing.T) {
	clean, dirty := itemWithStrays(false), itemWithStrays(true)
	got := append([]float32(nil), dirty...)
	attendItem(got, 28, 28)
	for i := range got {
		if got[i] != clean[i] {
			t.Fatalf("pixel (%d,%d): %v after attend, %v without the strays", i/28, i%28, got[i], clean[i])
		}
	}
	same := append([]float32(nil), clean...)
	attendItem(same, 28, 28)
	for i := range same {
		if same[i] != clean[i] {
			t.Fatalf("a lone item changed at pixel %d: %v → %v", i, clean[i], same[i])
		}
	}
	in := InputConfig{Center: CenterAttend}.withDefaults()
	mass := in
	mass.Center = CenterMass
	a := normalizeInput(nil, dirty, 28, 28, in)
	b := normalizeInput(nil, clean, 28, 28, mass)
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("pixel %d: attend on the item with strays %v, mass on the item alone %v", i, a[i], b[i])
		}
	}
	if c := normalizeInput(nil, dirty, 28, 28, mass); slices.Equal(c, b) {
		t.Error("the strays do not move the mass centre: the test shows nothing")
	}
}

// TestAttendKeepsLargeParts checks that a second component of at least
// attendKeepFrac of the item's mass (the second piece of a broken stroke,
// a shoe's heel) is kept wherever it lies, and that the background grey,
// not black, fills what is cleared on a grey background.
func TestAttendKeepsLargeParts(t *testing.T) {
	img := make([]float32, 28*28)
	for y := 4; y < 24; y++ {
		for x := 5; x < 9; x++ {
			img[y*28+x] = 1 // 80 px
		}
		for x := 18; x < 21; x++ {
			img[y*28+x] = 1 // 60 px, 0.75 of the first
		}
	}
	want := append([]float32(nil), img...)
	attendItem(img, 28, 28)
	if !slices.Equal(img, want) {
		t.Fatal("a part of 0.75 of the item's mass was cleared")
	}
	grey := itemWithStrays(true)
	for i := range grey {
		grey[i] = 0.2 + 0.6*grey[i]
	}
	attendItem(grey, 28, 28)
	if v := grey[2*28+2]; math.Abs(float64(v)-0.2) > 1e-6 {
		t.Errorf("cleared speck on a 0.2 background is %v, want the background's 0.2", v)
	}
}

// TestAttendScalesWithSize checks that the item-and-strays image enlarged
// 2× (pixel replication) is cleared as at 28×28: the same pixels, doubled.
func TestAttendScalesWithSize(t *testing.T) {
	small := itemWithStrays(true)
	big := make([]float32, 56*56)
	for y := range 56 {
		for x := range 56 {
			big[y*56+x] = small[(y/2)*28+x/2]
		}
	}
	attendItem(small, 28, 28)
	attendItem(big, 56, 56)
	for y := range 56 {
		for x := range 56 {
			if big[y*56+x] != small[(y/2)*28+x/2] {
				t.Fatalf("56×56 pixel (%d,%d) %v, 28×28 gives %v", y, x, big[y*56+x], small[(y/2)*28+x/2])
			}
		}
	}
}

// TestCenterAttendValidates checks that "attend" is a valid input.center
// and that the error for a bad one lists it.
func TestCenterAttendValidates(t *testing.T) {
	if err := (InputConfig{Center: CenterAttend}).withDefaults().validate(); err != nil {
		t.Fatal(err)
	}
	err := (InputConfig{Center: "atend"}).withDefaults().validate()
	if err == nil || !strings.Contains(err.Error(), `"attend"`) {
		t.Errorf("bad center: error %v, want one listing \"attend\"", err)
	}
}
