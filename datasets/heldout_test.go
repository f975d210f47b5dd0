package datasets

import (
	"bytes"
	"encoding/json"
	"image"
	"image/jpeg"
	"math"
	"os"
	"slices"
	"strings"
	"testing"
)

// heldOutRef is testdata/datasets/heldout/reference.json, written by
// testdata/datasets/gen_heldout.py with Pillow 9.4.0, SciPy 1.10.1,
// scikit-image 0.19.3 and NumPy 1.24.2 (Debian 12 packages) from the input
// images of testdata/datasets/corrupt/reference.json.
type heldOutRef struct {
	Generator string
	Images    map[string]struct {
		H, W       int
		Outputs    map[string][]float64
		JPEGTables map[string][]int
	}
}

// heldOutInputs loads both reference files: the inputs (as [0,1] floats)
// and the held-out outputs.
func heldOutInputs(t *testing.T) (map[string][]float64, heldOutRef) {
	t.Helper()
	in := loadCorruptRef(t)
	raw, err := os.ReadFile("../testdata/datasets/heldout/reference.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref heldOutRef
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Images) != len(in.Images) {
		t.Fatalf("%d held-out reference images, %d inputs", len(ref.Images), len(in.Images))
	}
	x := map[string][]float64{}
	for name, im := range in.Images {
		if r := ref.Images[name]; r.H != im.H || r.W != im.W {
			t.Fatalf("%s: reference %d×%d, input %d×%d", name, r.H, r.W, im.H, im.W)
		}
		x[name] = bytesToFloat64(im.U8)
	}
	return x, ref
}

// TestPixelateMatchesPillow compares pixelate at every severity with
// Pillow 9.4.0's Image.resize(BOX) down and back up on the 8-bit image.
// Both round each pass half up to grey levels (Pillow with 22-bit
// fixed-point weights, striate in integers; a box mean is a tie only
// exactly, which both round up), so every pixel must be equal.
func TestPixelateMatchesPillow(t *testing.T) {
	x, ref := heldOutInputs(t)
	checked := 0
	for name, im := range ref.Images {
		for sev := 1; sev <= 5; sev++ {
			want := im.Outputs["pixelate-"+string(rune('0'+sev))]
			got := make([]float32, im.H*im.W)
			HeldOut{Kind: HeldPixelate, Severity: sev}.Apply(got, float64To32(x[name]), im.H, im.W, 1)
			for i := range got {
				// float32(k)/255·255 is k within 1e-5.
				if d := math.Abs(float64(got[i])*255 - want[i]); d > 1e-3 {
					t.Fatalf("%s pixelate-%d pixel (%d,%d): %v, Pillow %v", name, sev, i/im.W, i%im.W, float64(got[i])*255, want[i])
				}
			}
			checked++
		}
	}
	if checked != 25 {
		t.Errorf("checked %d, want 25", checked)
	}
}

// TestJPEGMatchesLibjpeg checks jpeg_compression against Pillow 9.4.0's
// libjpeg at the same quality: the luminance quantisation table Go writes
// (zig-zag order in the stream, natural order from Pillow) must equal
// libjpeg's (both scale the table of ITU-T T.81 Annex K by the
// IJG quality formula), and the decoded images may differ only by the
// codecs' integer DCT and rounding: at most 1 grey level at 95% of the
// pixels and 0.25 on average. (A coefficient next to a rounding tie may fall
// into the neighbouring quantisation step in one codec and move a whole 8×8
// block by several levels: measured, Go and libjpeg differ by more than one
// level at 21 of the 3,850 pixels of the five images at quality 18 and
// nowhere else, and by 0.02 levels on average.)
func TestJPEGMatchesLibjpeg(t *testing.T) {
	x, ref := heldOutInputs(t)
	for name, im := range ref.Images {
		for sev := 1; sev <= 5; sev++ {
			key := "jpeg-" + string(rune('0'+sev))
			g := image.NewGray(image.Rect(0, 0, im.W, im.H))
			for i, v := range x[name] {
				g.Pix[i] = uint8(math.Round(255 * v))
			}
			var buf bytes.Buffer
			if err := jpeg.Encode(&buf, g, &jpeg.Options{Quality: jpegQuality[sev-1]}); err != nil {
				t.Fatal(err)
			}
			zz, nat := dqtZigzag(t, buf.Bytes()), make([]int, 64)
			for k, v := range zz {
				nat[zigzagNatural[k]] = v
			}
			if got, want := nat, im.JPEGTables[key]; !slices.Equal(got, want) {
				t.Fatalf("%s %s: Go's table %v, libjpeg's %v", name, key, got, want)
			}
			got := make([]float32, im.H*im.W)
			HeldOut{Kind: HeldJPEG, Severity: sev}.Apply(got, float64To32(x[name]), im.H, im.W, 1)
			var sum float64
			far := 0
			want := im.Outputs[key]
			for i := range got {
				d := math.Abs(float64(got[i])*255 - want[i])
				if d > 1+1e-3 {
					far++
				}
				sum += d
			}
			if m := sum / float64(len(got)); m > 0.25 || far > len(got)/20 {
				t.Errorf("%s %s: mean difference %.3f grey levels from libjpeg (want ≤ 0.25), %d pixels more than 1 level apart (want ≤ 5%%)", name, key, m, far)
			}
		}
	}
}

// zigzagNatural[k] is the row-major index of the k-th coefficient in the
// zig-zag order of ITU-T T.81 figure A.6.
var zigzagNatural = func() [64]int {
	var z [64]int
	k := 0
	for d := 0; d < 15; d++ { // anti-diagonals row+col = d, alternating direction
		for i := 0; i <= d; i++ {
			r := i
			if d%2 == 0 {
				r = d - i
			}
			if c := d - r; r < 8 && c < 8 {
				z[k] = r*8 + c
				k++
			}
		}
	}
	return z
}()

// dqtZigzag returns the first quantisation table of a JPEG stream, in the
// zig-zag order it is stored in.
func dqtZigzag(t *testing.T, b []byte) []int {
	t.Helper()
	for i := 2; i+4 < len(b); {
		if b[i] != 0xFF {
			t.Fatalf("JPEG marker expected at byte %d", i)
		}
		n := int(b[i+2])<<8 | int(b[i+3])
		if b[i+1] == 0xDB {
			if b[i+4]>>4 != 0 {
				t.Fatal("16-bit quantisation table")
			}
			out := make([]int, 64)
			for j := range out {
				out[j] = int(b[i+5+j])
			}
			return out
		}
		i += 2 + n
	}
	t.Fatal("no DQT segment")
	return nil
}

// TestDefocusMatchesSciPy compares defocus_blur with
// scipy.ndimage.correlate(mode='mirror') (SciPy 1.10.1) of the disc kernel
// smoothed by the 3-tap Gaussian, built in the reference script from
// ImageNet-C's definition. The Go result is quantised to k/255, so it may
// differ by half a grey level plus float rounding.
func TestDefocusMatchesSciPy(t *testing.T) {
	x, ref := heldOutInputs(t)
	for name, im := range ref.Images {
		for sev := 1; sev <= 5; sev++ {
			key := "defocus-" + string(rune('0'+sev))
			got := make([]float32, im.H*im.W)
			HeldOut{Kind: HeldDefocusBlur, Severity: sev}.Apply(got, float64To32(x[name]), im.H, im.W, 1)
			// The unquantised values agree to the reference's 1e-10 rounding.
			f := float64(min(im.H, im.W)) / 28
			raw := make([]float64, im.H*im.W)
			correlateMirror(raw, x[name], im.H, im.W, defocusKernel(defocusR[sev-1]*f, defocusAlias))
			for i, w := range im.Outputs[key] {
				if d := math.Abs(raw[i] - w); d > 1e-9 {
					t.Fatalf("%s %s pixel (%d,%d): %.12f, SciPy %.12f", name, key, i/im.W, i%im.W, raw[i], w)
				}
				if d := math.Abs(float64(got[i]) - math.Min(1, math.Max(0, w))); d > 0.5/255+1e-6 {
					t.Fatalf("%s %s pixel %d: quantised %v, SciPy %v", name, key, i, got[i], w)
				}
			}
		}
	}
}

// TestElasticMatchesSciPy drives the elastic transform with the reference
// script's fixed displacement fields and compares it with SciPy 1.10.1's
// gaussian_filter(mode='constant', truncate=4) and map_coordinates(order=1,
// mode='constant'), the operations of Simard et al. 2003's definition.
func TestElasticMatchesSciPy(t *testing.T) {
	// Tolerance: the reference is rounded to 1e-10; the sums agree to ~1e-15.
	const tol = 1e-9
	x, ref := heldOutInputs(t)
	for name, im := range ref.Images {
		n := im.H * im.W
		f := float64(min(im.H, im.W)) / 28
		for sev := 1; sev <= 5; sev++ {
			u, v := make([]float64, n), make([]float64, n)
			for i := range n {
				u[i] = float64((7919*i+13)%2001)/1000 - 1
				v[i] = float64((104729*i+71)%2001)/1000 - 1
			}
			got := make([]float64, n)
			elastic(got, x[name], im.H, im.W, u, v, elasticAlpha[sev-1]*f, elasticSigma*f)
			key := "elastic-" + string(rune('0'+sev))
			var moved float64
			for i, w := range im.Outputs[key] {
				if d := math.Abs(got[i] - w); d > tol {
					t.Fatalf("%s %s pixel (%d,%d): %.12f, SciPy %.12f", name, key, i/im.W, i%im.W, got[i], w)
				}
				moved += math.Abs(w - x[name][i])
			}
			if moved == 0 {
				t.Errorf("%s %s: the reference did not move the image", name, key)
			}
		}
	}
}

// TestGammaMatchesScikitImage compares gamma with
// skimage.exposure.adjust_gamma (scikit-image 0.19.3) at every severity:
// quantised to k/255, so within half a grey level.
func TestGammaMatchesScikitImage(t *testing.T) {
	x, ref := heldOutInputs(t)
	for name, im := range ref.Images {
		for sev := 1; sev <= 5; sev++ {
			key := "gamma-" + string(rune('0'+sev))
			got := make([]float32, im.H*im.W)
			HeldOut{Kind: HeldGamma, Severity: sev}.Apply(got, float64To32(x[name]), im.H, im.W, 1)
			for i, w := range im.Outputs[key] {
				if d := math.Abs(float64(got[i]) - w); d > 0.5/255+1e-6 {
					t.Fatalf("%s %s pixel %d: %v, scikit-image %v", name, key, i, got[i], w)
				}
			}
		}
	}
}

// TestSpeckleFollowsDefinition checks speckle_noise against its
// definition y = x + x·n, n ~ N(0, c²): on a flat image of grey x0 the
// stored grey levels k must follow P(k' ≤ k) = Φ(((k + ½)/255 − x0)/(x0·c))
// (rounding to the nearest level; clipping moves mass only to 0 and 255).
// The largest gap between that CDF and the empirical one over N pixels must
// stay below the Kolmogorov–Smirnov 1% critical value 1.63/√N (Massey 1951,
// table 1; conservative for a discrete law). Black pixels must stay black.
func TestSpeckleFollowsDefinition(t *testing.T) {
	const h, w = 64, 64
	x0 := 100.0 / 255
	src := make([]float32, h*w)
	for i := range src {
		src[i] = float32(x0)
	}
	src[0] = 0
	for sev := 1; sev <= 5; sev++ {
		c := speckleC[sev-1]
		got := make([]float32, h*w)
		HeldOut{Kind: HeldSpeckleNoise, Severity: sev}.Apply(got, src, h, w, uint64(40+sev))
		if got[0] != 0 {
			t.Errorf("speckle-%d: a black pixel became %v", sev, got[0])
		}
		var count [256]int
		for _, v := range got[1:] {
			count[int(math.Round(float64(v)*255))]++
		}
		n := float64(h*w - 1)
		var cum, gap float64
		for k := range 255 {
			cum += float64(count[k])
			want := 0.5 * math.Erfc(-((float64(k)+0.5)/255-x0)/(x0*c)/math.Sqrt2)
			gap = math.Max(gap, math.Abs(cum/n-want))
		}
		if crit := 1.63 / math.Sqrt(n); gap > crit {
			t.Errorf("speckle-%d: CDF gap %.4f > %.4f", sev, gap, crit)
		}
	}
	// The same test must reject the wrong spread.
	got := make([]float32, h*w)
	HeldOut{Kind: HeldSpeckleNoise, Severity: 3}.Apply(got, src, h, w, 7)
	var cum, gap float64
	var count [256]int
	for _, v := range got[1:] {
		count[int(math.Round(float64(v)*255))]++
	}
	for k := range 255 {
		cum += float64(count[k])
		want := 0.5 * math.Erfc(-((float64(k)+0.5)/255-x0)/(x0*speckleC[1])/math.Sqrt2)
		gap = math.Max(gap, math.Abs(cum/float64(h*w-1)-want))
	}
	if gap < 1.63/math.Sqrt(float64(h*w-1)) {
		t.Errorf("severity 3's noise passes as severity 2's (gap %.4f)", gap)
	}
}

// TestOcclusionFollowsDefinition checks Cutout's definition: on an all-white
// image the black pixels form exactly the rows r0−s/2 … r0+s/2−1 × columns
// c0−s/2 … c0+s/2−1 clipped to the image, for a centre inside it, and the
// centres are uniform: over 1,000 seeds every row occurs and the mean row is
// (h−1)/2 within 4 standard errors (σ of a uniform on 0…h−1 is
// √((h²−1)/12)).
func TestOcclusionFollowsDefinition(t *testing.T) {
	const h, w, seeds = 28, 28, 1000
	src := make([]float32, h*w)
	for i := range src {
		src[i] = 1
	}
	got := make([]float32, h*w)
	// centre recovers r0 from the black run [lo, hi] of one axis: the run
	// ends at r0+s/2−1 unless clipped there, else starts at r0−s/2.
	centre := func(lo, hi, n, side int) (int, bool) {
		if hi < n-1 {
			return hi + 1 - side/2, hi-lo+1 == side || lo == 0 && hi-lo+1 < side
		}
		return lo + side/2, lo == 0 || hi-lo+1 <= side
	}
	for sev := 1; sev <= 5; sev++ {
		side := int(occlusionS[sev-1])
		rows := map[int]bool{}
		var sum float64
		for seed := range uint64(seeds) {
			HeldOut{Kind: HeldOcclusion, Severity: sev}.Apply(got, src, h, w, seed)
			r0, r1, c0, c1, black := h, -1, w, -1, 0
			for i, v := range got {
				if v != 0 && v != 1 {
					t.Fatalf("occlusion-%d seed %d: pixel %d = %v, want 0 or 1", sev, seed, i, v)
				}
				if v == 0 {
					black++
					r0, r1, c0, c1 = min(r0, i/w), max(r1, i/w), min(c0, i%w), max(c1, i%w)
				}
			}
			cr, okr := centre(r0, r1, h, side)
			cc, okc := centre(c0, c1, w, side)
			if black == 0 || black != (r1-r0+1)*(c1-c0+1) || !okr || !okc || cr < 0 || cr >= h || cc < 0 || cc >= w {
				t.Fatalf("occlusion-%d seed %d: black pixels rows %d…%d, columns %d…%d (%d); not a clipped %d×%d square about a pixel",
					sev, seed, r0, r1, c0, c1, black, side, side)
			}
			rows[cr] = true
			sum += float64(cr)
		}
		se := math.Sqrt(float64(h*h-1)/12) / math.Sqrt(seeds)
		if len(rows) != h || math.Abs(sum/seeds-float64(h-1)/2) > 4*se {
			t.Errorf("occlusion-%d: %d of %d rows used, mean row %.2f", sev, len(rows), h, sum/seeds)
		}
	}
}

// TestHeldOutSuiteListing checks the held-out suite: 7 kinds × 5
// severities, none sharing a name with an MNIST-C corruption or a grid kind,
// names parsing back, bad names and severities refused with the valid
// values.
func TestHeldOutSuiteListing(t *testing.T) {
	all, err := HeldOutSuite()
	if err != nil || len(all) != 35 {
		t.Fatalf("%d conditions, %v", len(all), err)
	}
	dev := map[string]bool{}
	for _, c := range DevelopmentSuite() {
		dev[c.Kind] = true
	}
	for _, k := range []string{"noise", "blur", "rotate", "shift", "scale", "contrast"} {
		dev[k] = true
	}
	for _, c := range all {
		if dev[c.Kind] || c.Group != GroupHeldOut {
			t.Errorf("%s: kind %q group %q overlaps the development suite", c.Name, c.Kind, c.Group)
		}
		got, err := ParseHeldOut(c.Name)
		if err != nil || got != c.Op || float64(got.Severity) != c.Level {
			t.Errorf("%s: parsed %v, %v", c.Name, got, err)
		}
	}
	for _, bad := range []string{"frost-2", "pixelate-6", "pixelate-x", "shot_noise"} {
		if _, err := ParseHeldOut(bad); err == nil || !strings.Contains(err.Error(), "occlusion") && !strings.Contains(err.Error(), "1…5") {
			t.Errorf("%q: %v", bad, err)
		}
	}
	if _, err := HeldOutSuite(6); err == nil || !strings.Contains(err.Error(), "1…5") {
		t.Errorf("severity 6: %v", err)
	}
	if err := (HeldOut{Kind: 99}).Validate(); err == nil || !strings.Contains(err.Error(), "speckle_noise") {
		t.Errorf("kind 99: %v", err)
	}
	if _, err := testSet(3).Perturbed(HeldOut{Kind: HeldGamma, Severity: 7}, 0, 0); err == nil {
		t.Error("severity 7 accepted by Perturbed")
	}
	// Seeded and worker-free: the same bytes twice, other seeds differ.
	s := testSet(9)
	for _, k := range HeldOutKinds() {
		op := HeldOut{Kind: k, Severity: 4}
		a, _ := s.Perturbed(op, 3, 1)
		b, _ := s.Perturbed(op, 3, 3)
		if !slices.Equal(a.Pix, b.Pix) {
			t.Errorf("%v: 1 and 3 workers differ", op)
		}
		if c, _ := s.Perturbed(op, 4, 2); slices.Equal(a.Pix, c.Pix) == (k == HeldSpeckleNoise || k == HeldElastic || k == HeldOcclusion) {
			t.Errorf("%v: seeds 3 and 4 equal: %v (random kinds must differ, fixed ones not)", op, slices.Equal(a.Pix, c.Pix))
		}
	}
}

func float64To32(x []float64) []float32 {
	out := make([]float32, len(x))
	for i, v := range x {
		out[i] = float32(v)
	}
	return out
}
