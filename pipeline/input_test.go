package pipeline

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// TestCenterMatchesSciPy checks the centring shift against the centre of
// mass computed by scipy.ndimage.center_of_mass (SciPy 1.10.1; see
// testdata/pipeline/gen_center.py), and that the centred image is the input
// moved by exactly that shift with zero fill.
func TestCenterMatchesSciPy(t *testing.T) {
	b, err := os.ReadFile("../testdata/pipeline/center.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			H, W   int
			Pix    []float32
			DY, DX int
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	cfg := InputConfig{Normalize: NormalizeNone, Center: CenterMass}
	for ci, c := range ref.Cases {
		out := normalizeInput(nil, c.Pix, c.H, c.W, cfg)
		for y := 0; y < c.H; y++ {
			for x := 0; x < c.W; x++ {
				sy, sx := y-c.DY, x-c.DX
				var want float32
				if sy >= 0 && sy < c.H && sx >= 0 && sx < c.W {
					want = c.Pix[sy*c.W+sx]
				}
				if out[y*c.W+x] != want {
					t.Fatalf("case %d (%d×%d): pixel (%d,%d) = %v; want %v (SciPy shift %d,%d)", ci, c.H, c.W, y, x, out[y*c.W+x], want, c.DY, c.DX)
				}
			}
		}
	}
}

// TestInputUndoesShiftAndContrast: a contrast change ×0.25 about the mean
// is undone exactly by the input stage, and a 2 or 4 px shift of an MNIST
// digit is undone unless the shift pushed part of the digit out of the frame
// (MNIST digits are size-normalised to 20×20 but placed by their centre of
// mass, LeCun et al. 1998, so many reach within 4 px of an edge) or the
// centre of mass lands on a rounding tie.
func TestInputUndoesShiftAndContrast(t *testing.T) {
	_, test := mnist(t)
	cfg := InputConfig{Normalize: NormalizeMinMax, Center: CenterMass}
	// tol: min-max stretching of a ×0.25 image divides by a range 4× smaller,
	// so float32 rounding of the perturbation (~6e-8) grows to ~1e-6.
	const tol = 1e-5
	same := map[datasets.PerturbKind]int{}
	shift4 := 0
	const n = 200
	for i := 0; i < n; i++ {
		img := test.Float(nil, i)
		ref := append([]float32(nil), normalizeInput(nil, img, 28, 28, cfg)...)
		for _, p := range []datasets.Perturbation{
			{Kind: datasets.Shift, Level: 2, Dir: i % 8},
			{Kind: datasets.Shift, Level: 4, Dir: (i + 3) % 8},
			{Kind: datasets.Contrast, Level: 0.25},
		} {
			pert := make([]float32, 28*28)
			p.Apply(pert, img, 28, 28, 1)
			got := normalizeInput(nil, pert, 28, 28, cfg)
			ok := true
			for j := range got {
				if math.Abs(float64(got[j]-ref[j])) > tol {
					ok = false
					break
				}
			}
			if ok && p.Kind == datasets.Shift && p.Level == 4 {
				shift4++
			} else if ok {
				same[p.Kind]++
			}
		}
	}
	// Floors from a measurement on the first 300 test digits (contrast 300,
	// shift-2 288, shift-4 219 of 300), rounded down to leave room for the
	// sample: contrast must be exact for every digit.
	if same[datasets.Contrast] != n {
		t.Errorf("%d of %d digits at contrast ×0.25 normalise back; want all", same[datasets.Contrast], n)
	}
	if same[datasets.Shift] < n*90/100 {
		t.Errorf("%d of %d digits shifted 2 px normalise back; want ≥ 90%%", same[datasets.Shift], n)
	}
	if shift4 < n*65/100 {
		t.Errorf("%d of %d digits shifted 4 px normalise back; want ≥ 65%%", shift4, n)
	}
	flat := make([]float32, 64)
	for i := range flat {
		flat[i] = 0.3
	}
	if got := normalizeInput(nil, flat, 8, 8, cfg); got[0] != 0.3 || got[63] != 0.3 {
		t.Errorf("a flat image changed: %v", got[:4])
	}
	if got := normalizeInput(nil, make([]float32, 64), 8, 8, cfg); got[0] != 0 {
		t.Errorf("a black image changed")
	}
	off := InputConfig{Normalize: NormalizeNone, Center: CenterNone}
	if got := normalizeInput(nil, flat, 8, 8, off); &got[0] != &flat[0] {
		t.Error("with both stages off the image should pass through untouched")
	}
}

// TestMedian3MatchesSciPy compares the 3×3 median with
// scipy.ndimage.median_filter(size=3, mode="nearest") (SciPy 1.10.1, values
// in testdata/pipeline/median.json from gen_center.py); exact, since a median
// selects one of the inputs.
func TestMedian3MatchesSciPy(t *testing.T) {
	b, err := os.ReadFile("../testdata/pipeline/median.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		H, W     int
		In, Want []float32
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	got := make([]float32, ref.H*ref.W)
	median3(got, ref.In, ref.H, ref.W)
	for i := range got {
		if got[i] != ref.Want[i] {
			t.Fatalf("pixel %d: %v; SciPy gives %v", i, got[i], ref.Want[i])
		}
	}
}

// TestNoiseSigmaEstimates checks the wavelet MAD noise estimate on its
// defining cases (Donoho & Johnstone 1994): on a linear ramp every diagonal
// Haar coefficient is exactly 0, so σ̂ = 0; on a constant grey image with
// unclipped Gaussian noise of σ it is consistent, σ̂ → σ. sigmaTol: the
// median of 16,384 |d| has a relative standard error of about
// 1/(2·φ(0.6745)·0.6745·sqrt(n)) ≈ 1.2%, so 5% is four standard errors.
func TestNoiseSigmaEstimates(t *testing.T) {
	const h, w = 256, 256
	ramp := make([]float32, h*w)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			ramp[y*w+x] = float32(0.1 + 0.002*float64(y) + 0.001*float64(x))
		}
	}
	scratch := make([]float32, h*w/4)
	if s := noiseSigma(scratch, ramp, h, w); s > 1e-6 {
		t.Errorf("σ̂ of a noise-free ramp = %g, want 0", s)
	}
	rng := rand.New(rand.NewPCG(3, 9))
	for _, sigma := range []float64{0.05, 0.2} {
		img := make([]float32, h*w)
		for i := range img {
			img[i] = float32(0.5 + sigma*rng.NormFloat64())
		}
		const sigmaTol = 0.05
		if s := noiseSigma(scratch, img, h, w); math.Abs(s-sigma) > sigmaTol*sigma {
			t.Errorf("σ̂ = %.4f for white noise of σ = %g; want within %.0f%%", s, sigma, 100*sigmaTol)
		}
	}
}

// TestAutoDenoiseLeavesCleanImagesAlone checks the premise of the default
// input stage on the published test splits: with Denoise "auto", every
// clean MNIST test image and at least 99% of the clean Fashion-MNIST ones
// come out exactly as with Denoise "none" (their σ̂ is below autoLight);
// and heavily noisy images (σ = 0.5, clipped) are all filtered.
func TestAutoDenoiseLeavesCleanImagesAlone(t *testing.T) {
	auto := InputConfig{Normalize: NormalizeMinMax, Center: CenterMass, Denoise: DenoiseAuto}
	none := auto
	none.Denoise = DenoiseNone
	for _, c := range []struct {
		name string
		load func(datasets.Split, string) (*datasets.Set, error)
		frac float64 // least fraction left untouched
	}{{"MNIST", datasets.LoadMNIST, 1}, {"Fashion-MNIST", datasets.LoadFashionMNIST, 0.99}} {
		s, err := c.load(datasets.Test, "")
		if err != nil {
			t.Skipf("%s not available: %v", c.name, err)
		}
		same, filtered := 0, 0
		img := make([]float32, s.H*s.W)
		noisy := make([]float32, s.H*s.W)
		for i := 0; i < s.N; i++ {
			s.Float(img, i)
			a := normalizeInput(nil, img, s.H, s.W, auto)
			b := normalizeInput(nil, img, s.H, s.W, none)
			if slices.Equal(a, b) {
				same++
			}
			if i < 500 {
				datasets.Perturbation{Kind: datasets.Noise, Level: 0.5}.Apply(noisy, img, s.H, s.W, uint64(i+1))
				if !slices.Equal(normalizeInput(nil, noisy, s.H, s.W, auto), normalizeInput(nil, noisy, s.H, s.W, none)) {
					filtered++
				}
			}
		}
		if f := float64(same) / float64(s.N); f < c.frac {
			t.Errorf("%s: auto denoising changed %d of %d clean test images; want at most %.0f%%", c.name, s.N-same, s.N, 100*(1-c.frac))
		}
		if filtered != 500 {
			t.Errorf("%s: auto denoising filtered %d of 500 images with noise σ = 0.5, want all", c.name, filtered)
		}
	}
}

// TestCore checks the grey-level coring against its definition
// clamp((v − a)/(1 − 2a), 0, 1) (the black and white points of a levels
// adjustment; common practice) and the cap a ≤ 0.25.
func TestCore(t *testing.T) {
	v := []float32{0, 0.1, 0.2, 0.5, 0.8, 0.9, 1}
	core(v, 0.2)
	want := []float32{0, 0, 0, 0.5, 1, 1, 1}
	for i := range v {
		if math.Abs(float64(v[i]-want[i])) > 1e-6 {
			t.Errorf("core(a=0.2)[%d] = %v; want %v", i, v[i], want[i])
		}
	}
	v = []float32{0.3, 0.5, 0.6}
	core(v, 0.4) // capped at 0.25: (v − 0.25)/0.5
	for i, w := range []float32{0.1, 0.5, 0.7} {
		if math.Abs(float64(v[i]-w)) > 1e-6 {
			t.Errorf("core(a=0.4, capped)[%d] = %v; want %v", i, v[i], w)
		}
	}
	v = []float32{0.3}
	if core(v, 0); v[0] != 0.3 {
		t.Errorf("core(a=0) changed %v", v[0])
	}
}

// slantedLine draws a line of slope s (x = c + s·(y − c)) one pixel of mass
// per row, split between the two nearest columns so that each row's centre
// of mass lies exactly on the line.
func slantedLine(h, w int, c, s float64) []float32 {
	img := make([]float32, h*w)
	for y := 0; y < h; y++ {
		p := c + s*(float64(y)-c)
		i := int(math.Floor(p))
		f := float32(p - math.Floor(p))
		img[y*w+i] += 1 - f
		img[y*w+i+1] += f
	}
	return img
}

func rowCentroids(img []float32, h, w int) (cs []float64, mass float64) {
	for y := 0; y < h; y++ {
		var m, mx float64
		for x, v := range img[y*w : (y+1)*w] {
			m += float64(v)
			mx += float64(v) * float64(x)
		}
		mass += m
		if m > 0 {
			cs = append(cs, mx/m)
		}
	}
	return cs, mass
}

// TestDeskew checks the shear against two facts. The regression slope of x
// on y for points on the line x = c + s·(y − c) is s (least squares; common
// practice), so deskewing that line must make every row's centre of mass
// the same column, the line's centre. Linear interpolation moves a row's
// centre of mass by exactly the shift and keeps its mass (common practice),
// so the mass is kept. A vertical line is left as it is, and a slope beyond
// maxSkew is only partly removed.
func TestDeskew(t *testing.T) {
	const h, w = 28, 28
	const c = 13.5
	// deskewTol: float32 pixels and float64 sums; 1e-4 px is far below the
	// 1/28 px any real slant leaves.
	const deskewTol = 1e-4
	for _, s := range []float64{0.4, -0.3} {
		src := slantedLine(h, w, c, s)
		dst := make([]float32, h*w)
		deskew(dst, src, h, w)
		cs, mass := rowCentroids(dst, h, w)
		_, m0 := rowCentroids(src, h, w)
		for y, x := range cs {
			if math.Abs(x-c) > deskewTol {
				t.Errorf("slope %g: row %d centre %.5f after deskew; want %.1f", s, y, x, c)
				break
			}
		}
		if math.Abs(mass-m0) > deskewTol*m0 {
			t.Errorf("slope %g: mass %.5f after deskew; want %.5f", s, mass, m0)
		}
	}
	vert := slantedLine(h, w, c, 0)
	dst := make([]float32, h*w)
	if deskew(dst, vert, h, w); !slices.Equal(dst, vert) {
		t.Error("deskew changed a vertical line")
	}
	// Slope 1.5 is clamped to maxSkew = 1: a slant of 0.5 px per row remains.
	steep := make([]float32, h*w)
	for y := 6; y < 22; y++ { // slope 1.5 over the middle rows, inside the image
		p := c + 1.5*(float64(y)-c)
		i := int(math.Floor(p))
		f := float32(p - math.Floor(p))
		steep[y*w+i] += 1 - f
		steep[y*w+i+1] += f
	}
	deskew(dst, steep, h, w)
	cs, _ := rowCentroids(dst, h, w)
	if got := (cs[len(cs)-1] - cs[0]) / float64(len(cs)-1); math.Abs(got-0.5) > 1e-3 {
		t.Errorf("slope 1.5 deskewed to slope %.4f; want 0.5 (clamped at %d)", got, maxSkew)
	}
	// The config value is checked.
	bad := InputConfig{Normalize: NormalizeMinMax, Denoise: DenoiseAuto, Center: CenterMass, Deskew: "tilt"}
	if err := bad.validate(); err == nil || !strings.Contains(err.Error(), "input.deskew") {
		t.Errorf("deskew %q: error %v; want one naming input.deskew", bad.Deskew, err)
	}
	bad.Deskew, bad.Upright = DeskewNone, "level"
	if err := bad.validate(); err == nil || !strings.Contains(err.Error(), "input.upright") {
		t.Errorf("upright %q: error %v; want one naming input.upright", bad.Upright, err)
	}
}

// blob is an anisotropic Gaussian on a 28×28 grid whose major axis (σ 5 px)
// is tilted tilt degrees from vertical (clockwise as displayed for tilt > 0)
// and whose minor axis has σ minor px.
func blob(tilt, minor float64) []float32 {
	const n = 28
	img := make([]float32, n*n)
	t := tilt * math.Pi / 180
	ux, uy := math.Sin(t), -math.Cos(t) // major axis direction, y down
	for y := 0; y < n; y++ {
		for x := 0; x < n; x++ {
			dx, dy := float64(x)-13.5, float64(y)-13.5
			a := dx*ux + dy*uy  // along the major axis
			b := -dx*uy + dy*ux // across it
			img[y*n+x] = float32(math.Exp(-a*a/(2*25) - b*b/(2*minor*minor)))
		}
	}
	return img
}

// TestUprightAngle checks the principal-axis rule on Gaussian blobs of
// known orientation: the second-moment axis of an anisotropic Gaussian is
// its major axis (a fact of the moment method; common practice), so a blob
// tilted 25° must be turned by 25° and is then upright to within 1°, while
// blobs tilted 10° (natural variation), 60° (nearer horizontal), or round
// ones are left alone.
func TestUprightAngle(t *testing.T) {
	// angleTol: the blob is sampled on whole pixels and clipped at the
	// border; 0.5° is far below the 15° the rule starts at.
	const angleTol = 0.5
	for _, tilt := range []float64{25, -25, 35} {
		img := blob(tilt, 2)
		deg, ok := uprightAngle(img, 28, 28)
		if !ok || math.Abs(math.Abs(deg)-math.Abs(tilt)) > angleTol {
			t.Errorf("tilt %g°: uprightAngle = %.2f°, %v; want a turn of %g°", tilt, deg, ok, math.Abs(tilt))
			continue
		}
		turned := make([]float32, len(img))
		datasets.Perturbation{Kind: datasets.Rotate, Level: deg}.Apply(turned, img, 28, 28, 0)
		if d, ok := uprightAngle(turned, 28, 28); ok {
			t.Errorf("tilt %g°: still tilted after the turn (%.2f° more)", tilt, d)
		}
		// The turned blob's axis is vertical: μ11 ≈ 0 and μ02 > μ20.
		if a := axisFromVertical(turned, 28, 28); a > 2*angleTol {
			t.Errorf("tilt %g°: axis %.2f° from vertical after the turn; want < %g°", tilt, a, 2*angleTol)
		}
	}
	for _, c := range []struct {
		tilt, minor float64
		why         string
	}{{10, 2, "small tilt"}, {60, 2, "nearer horizontal"}, {25, 4.8, "nearly round"}} {
		if deg, ok := uprightAngle(blob(c.tilt, c.minor), 28, 28); ok {
			t.Errorf("%s (tilt %g°, minor σ %g): turned by %.2f°; want left alone", c.why, c.tilt, c.minor, deg)
		}
	}
	if _, ok := uprightAngle(make([]float32, 28*28), 28, 28); ok {
		t.Error("an empty image was turned")
	}
}

// axisFromVertical is the principal-axis angle from vertical in degrees,
// from the moments written out afresh (tan 2φ = 2μ11/(μ20 − μ02)).
func axisFromVertical(img []float32, h, w int) float64 {
	var m, sx, sy, sxx, syy, sxy float64
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v := float64(img[y*w+x])
			m += v
			sx += v * float64(x)
			sy += v * float64(y)
			sxx += v * float64(x*x)
			syy += v * float64(y*y)
			sxy += v * float64(x*y)
		}
	}
	cx, cy := sx/m, sy/m
	m20, m02, m11 := sxx/m-cx*cx, syy/m-cy*cy, sxy/m-cx*cy
	phi := 0.5 * math.Atan2(2*m11, m20-m02) * 180 / math.Pi
	return 90 - math.Abs(phi)
}

// TestUprightSkipsNoisyImages: an image in which the auto denoiser finds
// noise is not turned (its moments are not to be trusted), a clean tilted
// one is.
func TestUprightSkipsNoisyImages(t *testing.T) {
	up := InputConfig{Normalize: NormalizeMinMax, Denoise: DenoiseAuto, Center: CenterMass, Deskew: DeskewNone, Upright: UprightVertical}
	flat := up
	flat.Upright = UprightNone
	img := blob(25, 2)
	if slices.Equal(normalizeInput(nil, img, 28, 28, up), normalizeInput(nil, img, 28, 28, flat)) {
		t.Error("a clean blob tilted 25° was not turned")
	}
	noisy := make([]float32, len(img))
	datasets.Perturbation{Kind: datasets.Noise, Level: 0.5}.Apply(noisy, img, 28, 28, 1)
	if !slices.Equal(normalizeInput(nil, noisy, 28, 28, up), normalizeInput(nil, noisy, 28, 28, flat)) {
		t.Error("a noisy image (σ 0.5) was turned")
	}
}
