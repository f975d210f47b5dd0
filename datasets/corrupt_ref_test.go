package datasets

import (
	"encoding/json"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

// corruptRef is testdata/datasets/corrupt/reference.json, written by
// testdata/datasets/gen_corrupt.py with SciPy 1.10.1, scikit-image 0.19.3 and
// NumPy 1.24.2 (Debian 12 packages).
type corruptRef struct {
	Generator string
	Images    map[string]struct {
		H, W    int
		U8      []uint8
		Outputs map[string][]float64
	}
}

func loadCorruptRef(t *testing.T) corruptRef {
	t.Helper()
	raw, err := os.ReadFile("../testdata/datasets/corrupt/reference.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref corruptRef
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Images) != 5 {
		t.Fatalf("%d reference images, want 5", len(ref.Images))
	}
	return ref
}

// refKey splits "shear-0.4" into "shear" and 0.4.
func refKey(t *testing.T, key string) (string, float64) {
	name, num, _ := strings.Cut(key, "-")
	v, err := strconv.ParseFloat(num, 64)
	if err != nil {
		t.Fatalf("reference key %q: %v", key, err)
	}
	return name, v
}

// TestBlurNearestMatchesSciPy compares the edge-replicated blur of glass
// blur and spatter with scipy.ndimage.gaussian_filter(mode='nearest',
// truncate=4.0) (SciPy 1.10.1).
func TestBlurNearestMatchesSciPy(t *testing.T) {
	// Tolerance: the reference values are rounded to 1e-10 (the sums
	// themselves agree to ~1e-16), so 1e-9 is ten times that rounding.
	const tol = 1e-9
	n := 0
	eachRef(t, "blur_nearest", func(name string, h, w int, u8 []uint8, key string, s float64, want []float64) {
		x := bytesToFloat64(u8)
		got := make([]float64, len(x))
		blurNearest(got, x, h, w, s)
		for i := range got {
			if d := math.Abs(got[i] - want[i]); d > tol {
				t.Fatalf("%s %s: pixel (%d,%d) = %.12f, SciPy %.12f", name, key, i/w, i%w, got[i], want[i])
			}
		}
		n++
	})
	if n != 15 {
		t.Errorf("checked %d blurs, want 15", n)
	}
}

// TestWarpCorruptionsMatchSciPy renders shear, scale and rotate at every
// severity and compares them with scipy.ndimage.affine_transform(order=1,
// mode='constant') (SciPy 1.10.1) for the matrix of the definition; shear
// and rotate draw a random sign, so the output must match the reference of
// one sign, and over the seeds both signs must occur.
func TestWarpCorruptionsMatchSciPy(t *testing.T) {
	// Tolerance: the warp interpolates in float64 and stores float32
	// (rounding ≤ 6e-8 on values ≤ 1); 1e-6 is far inside one grey level.
	const tol = 1e-6
	ref := loadCorruptRef(t)
	kinds := map[CorruptionKind]string{CorruptShear: "shear", CorruptScale: "scale", CorruptRotate: "rotate"}
	tables := map[CorruptionKind][5]float64{CorruptShear: shearK, CorruptScale: scaleZ, CorruptRotate: rotateTheta}
	checked := 0
	for name, im := range ref.Images {
		src := bytesToFloat32(im.U8)
		for k, prefix := range kinds {
			for s := 1; s <= 5; s++ {
				c := Corruption{Kind: k, Severity: s}
				level := tables[k][s-1]
				signs := map[float64]bool{}
				for seed := uint64(0); seed < 8; seed++ {
					y := make([]float64, len(src))
					c.render(y, src, im.H, im.W, corruptRand(seed, k))
					matched := false
					for _, sg := range []float64{1, -1} {
						if k == CorruptScale && sg < 0 {
							continue
						}
						want, ok := im.Outputs[prefix+"-"+strconv.FormatFloat(sg*level, 'g', -1, 64)]
						if !ok {
							t.Fatalf("no reference %s-%g", prefix, sg*level)
						}
						if warpDiff(y, want, im.H, im.W, warpMatrix(k, sg*level)) <= tol {
							matched, signs[sg] = true, true
						}
					}
					if !matched {
						t.Fatalf("%s %v seed %d matches neither sign of the SciPy warp", name, c, seed)
					}
					checked++
				}
				if k != CorruptScale && len(signs) != 2 {
					t.Errorf("%s %v: 8 seeds drew only the signs %v", name, c, signs)
				}
			}
		}
	}
	if checked != 5*3*5*8 {
		t.Errorf("checked %d warps", checked)
	}
}

// TestCannyMatchesSkimage compares the edge map with
// skimage.feature.canny(x, sigma) at its default thresholds (scikit-image
// 0.19.3) on three MNIST digits and two photo crops, at the five severities'
// σ.
func TestCannyMatchesSkimage(t *testing.T) {
	// Tolerance: the edge map is binary; both sides compute in float64 and
	// may differ only where a magnitude ties with a threshold or with an
	// interpolated neighbour to the last bits, which these images do not
	// hit: no pixel may differ.
	const maxDiffering = 0
	checked, withEdges := 0, 0
	eachRef(t, "canny", func(name string, h, w int, u8 []uint8, key string, s float64, want []float64) {
		got := cannyEdges(bytesToFloat64(u8), h, w, s, cannyLow, cannyHigh)
		var differ, edges int
		for i, g := range got {
			if g != (want[i] == 1) {
				differ++
			}
			if g {
				edges++
			}
		}
		if differ > maxDiffering {
			t.Errorf("%s %s: %d of %d pixels differ from scikit-image (%d edge pixels)", name, key, differ, len(got), edges)
		}
		if edges > 0 {
			withEdges++
		}
		checked++
	})
	if checked != 25 || withEdges < 20 {
		t.Errorf("checked %d edge maps (want 25), %d with edges (want ≥ 20)", checked, withEdges)
	}
}

// eachRef calls f for every reference output named kind-LEVEL.
func eachRef(t *testing.T, kind string, f func(name string, h, w int, u8 []uint8, key string, level float64, want []float64)) {
	t.Helper()
	for name, im := range loadCorruptRef(t).Images {
		for key, want := range im.Outputs {
			if k, level := refKey(t, key); k == kind {
				f(name, im.H, im.W, im.U8, key, level, want)
			}
		}
	}
}

func bytesToFloat64(b []uint8) []float64 {
	x := make([]float64, len(b))
	for i, v := range b {
		x[i] = float64(v) / 255
	}
	return x
}

func bytesToFloat32(b []uint8) []float32 {
	x := make([]float32, len(b))
	for i, v := range b {
		x[i] = float32(v) / 255
	}
	return x
}

// warpMatrix is the (y, x) matrix A of a warp corruption at a signed level.
func warpMatrix(k CorruptionKind, level float64) [4]float64 {
	switch k {
	case CorruptShear:
		return [4]float64{1, 0, level, 1}
	case CorruptScale:
		return [4]float64{1 / level, 0, 0, 1 / level}
	}
	c, s := math.Cos(level), math.Sin(level)
	return [4]float64{c, s, -s, c}
}

// warpDiff is the largest difference between two warps of an h×w image by
// A, leaving out pixels whose source point c + A(q − c) lies within 1e-9 px
// of the edge of the pixel-centre grid: there scipy.ndimage decides inside
// or outside by its own rounding (scale 0.7 of 21 rows maps row 3 to
// source row −10/0.7·0.7 = 0 up to 1e-15), while Perturbation counts such
// points as on the edge (raster.EdgeSlack).
func warpDiff(a, b []float64, h, w int, m [4]float64) float64 {
	cy, cx := float64(h-1)/2, float64(w-1)/2
	near := func(v, hi float64) bool { return math.Abs(v) < 1e-9 || math.Abs(v-hi) < 1e-9 }
	var d float64
	for i := range a {
		ty, tx := float64(i/w)-cy, float64(i%w)-cx
		sy, sx := cy+m[0]*ty+m[1]*tx, cx+m[2]*ty+m[3]*tx
		if near(sy, float64(h-1)) || near(sx, float64(w-1)) {
			continue
		}
		d = math.Max(d, math.Abs(a[i]-b[i]))
	}
	return d
}
