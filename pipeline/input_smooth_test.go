package pipeline

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"testing"

	"github.com/striate/striate/datasets"
)

// TestSmoothMatchesReference compares DenoiseSmooth with an independent
// implementation in NumPy 1.24.2 on top of scipy.ndimage.median_filter
// (size 3, mode "nearest"; SciPy 1.10.1; testdata/pipeline/gen_smooth.py,
// values in smooth.json): the noise estimate, the strength and every output
// pixel, on images whose strengths cover 0, (0, 1), (1, 2) and 2.
//
// sigmaTol: Go forms the Haar coefficients and their median in float32,
// the script in float64; they differ by float32 rounding of values below
// 1, a few 1e-8, well within 1e-6. pixTol: such a difference moves the
// strength by about 1e-6 (the slope is 1/smoothStep ≈ 18), hence a blended
// pixel by at most that much, and the float32 blend and coring (a stretch
// of at most 2×) add a few float32 roundings (6e-8 each); 1e-5 is well
// above both and far below one grey level (1/255).
func TestSmoothMatchesReference(t *testing.T) {
	b, err := os.ReadFile("../testdata/pipeline/smooth.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []struct {
			H, W            int
			In, Want        []float32
			Sigma, Strength float64
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	const sigmaTol, pixTol = 1e-6, 1e-5
	seen := map[string]bool{}
	for ci, c := range ref.Cases {
		n := c.H * c.W
		sd := noiseSigma(make([]float32, n), c.In, c.H, c.W)
		if math.Abs(sd-c.Sigma) > sigmaTol {
			t.Errorf("case %d: σ̂ = %.8f; NumPy gives %.8f", ci, sd, c.Sigma)
		}
		s := smoothStrength(sd)
		if math.Abs(s-c.Strength) > sigmaTol/smoothStep {
			t.Errorf("case %d: strength %.6f; NumPy gives %.6f", ci, s, c.Strength)
		}
		switch {
		case s == 0:
			seen["0"] = true
		case s < 1:
			seen["(0,1)"] = true
		case s < 2:
			seen["(1,2)"] = true
		default:
			seen["2"] = true
		}
		got := make([]float32, n)
		smoothMedian(got, c.In, make([]float32, n), c.H, c.W, sd)
		for i := range got {
			if d := math.Abs(float64(got[i] - c.Want[i])); d > pixTol {
				t.Fatalf("case %d (%d×%d, s = %.3f): pixel %d = %v; reference %v", ci, c.H, c.W, s, i, got[i], c.Want[i])
			}
		}
	}
	if len(seen) != 4 {
		t.Errorf("reference cases cover strengths %v; want 0, (0,1), (1,2) and 2", seen)
	}
}

// TestSmoothStrengthContinuousMonotone checks the property that is the
// point of DenoiseSmooth: its strength s(σ̂) is non-decreasing and
// Lipschitz in σ̂ with constant 1/smoothStep (so continuous, with no step
// anywhere), 0 up to smoothLo and 2 from smoothLo + 2·smoothStep, and
// passes through the middle of each of DenoiseAuto's steps (0.5 at
// autoLight, 1.5 at autoHeavy). The coring width k(s(σ̂))·σ̂ is continuous
// too. lipTol: one float64 rounding of the difference quotient.
func TestSmoothStrengthContinuousMonotone(t *testing.T) {
	const step, lipTol = 1e-5, 1e-6
	prev, prevA := smoothStrength(-0.1), 0.0
	for sd := -0.1 + step; sd < 1; sd += step {
		s := smoothStrength(sd)
		if s < prev {
			t.Fatalf("s(%.5f) = %g < s(%.5f) = %g: not monotone", sd, s, sd-step, prev)
		}
		if (s-prev)/step > (1+lipTol)/smoothStep {
			t.Fatalf("s rises %g per unit σ̂ at %.5f; bound 1/smoothStep = %g", (s-prev)/step, sd, 1/smoothStep)
		}
		a := smoothCoreK(s) * sd
		// The coring width's slope is at most k + sd·|k'|·s' ≤ 1 + 0.25·1/smoothStep.
		if math.Abs(a-prevA)/step > (1+0.25/smoothStep)*(1+lipTol) {
			t.Fatalf("coring width jumps by %g at σ̂ = %.5f", a-prevA, sd)
		}
		if s < 0 || s > 2 || (sd <= smoothLo && s != 0) || (sd >= smoothLo+2*smoothStep && s != 2) {
			t.Fatalf("s(%.5f) = %g; want 0 up to %.4f, 2 from %.4f, in [0,2] between", sd, s, smoothLo, smoothLo+2*smoothStep)
		}
		prev, prevA = s, a
	}
	for _, c := range []struct{ sd, s float64 }{{autoLight, 0.5}, {autoHeavy, 1.5}, {0.1025, 0}, {0.2125, 2}} {
		if got := smoothStrength(c.sd); math.Abs(got-c.s) > 1e-9 {
			t.Errorf("s(%g) = %g; want %g", c.sd, got, c.s)
		}
	}
	if s := smoothStrength(math.NaN()); s != 0 {
		t.Errorf("s(NaN) = %g; want 0", s)
	}
}

// TestSmoothImageContinuousInSigma: for a fixed noisy image, the output of
// DenoiseSmooth changes by a small amount for a small change of σ̂ at
// every σ̂ (jumpTol per 1e-4: the blend moves a pixel by at most
// |m − v|/smoothStep·Δσ̂ ≤ 1.8e-3, the coring's stretch of at most 2× and
// its moving black point add about as much again), while DenoiseAuto
// jumps at its thresholds — the difference the mode exists for. It also
// checks that at whole strengths DenoiseSmooth is DenoiseAuto: the same
// image at s = 0 and at s = 2, and within float32 rounding at s = 1.
func TestSmoothImageContinuousInSigma(t *testing.T) {
	const h, w = 28, 28
	rng := rand.New(rand.NewPCG(7, 11))
	img := make([]float32, h*w)
	for y := 4; y < 24; y++ {
		for x := 11; x < 16; x++ {
			img[y*w+x] = 1
		}
	}
	for i := range img {
		img[i] = float32(min(1, max(0, float64(img[i])+0.3*rng.NormFloat64())))
	}
	const dsd, jumpTol = 1e-4, 0.01
	prev, cur, auto, tmp := make([]float32, h*w), make([]float32, h*w), make([]float32, h*w), make([]float32, h*w)
	smoothMedian(prev, img, tmp, h, w, 0)
	autoJump := 0.0
	prevAuto := slices.Clone(img)
	for sd := dsd; sd < 0.3; sd += dsd {
		smoothMedian(cur, img, tmp, h, w, sd)
		medianPasses(auto, img, tmp, h, w, sd)
		for i := range cur {
			if d := math.Abs(float64(cur[i] - prev[i])); d > jumpTol {
				t.Fatalf("σ̂ %.4f → %.4f: pixel %d moves %.4f; want ≤ %g", sd-dsd, sd, i, d, jumpTol)
			}
			autoJump = max(autoJump, math.Abs(float64(auto[i]-prevAuto[i])))
		}
		copy(prev, cur)
		copy(prevAuto, auto)
	}
	if autoJump < 10*jumpTol {
		t.Errorf("DenoiseAuto's largest jump is %.4f; expected its thresholds to show as jumps (premise of the test)", autoJump)
	}
	for _, c := range []struct {
		sd  float64
		tol float64
	}{{0.05, 0}, {smoothLo, 0}, {smoothLo + smoothStep, 1e-6}, {smoothLo + 2*smoothStep, 0}, {0.4, 0}} {
		smoothMedian(cur, img, tmp, h, w, c.sd)
		medianPasses(auto, img, tmp, h, w, c.sd)
		for i := range cur {
			if math.Abs(float64(cur[i]-auto[i])) > c.tol {
				t.Fatalf("σ̂ = %.4f (s = %g): pixel %d is %v, auto gives %v", c.sd, smoothStrength(c.sd), i, cur[i], auto[i])
			}
		}
	}
}

// TestSmoothDenoiseLeavesCleanImagesAlone: as TestAutoDenoiseLeavesCleanImagesAlone
// for DenoiseSmooth, whose ramp starts lower (σ̂ = smoothLo = 0.1025
// instead of 0.13): every clean MNIST test image and at least 99% of the
// clean Fashion-MNIST ones come out exactly as with Denoise "none".
func TestSmoothDenoiseLeavesCleanImagesAlone(t *testing.T) {
	sm := InputConfig{Normalize: NormalizeMinMax, Center: CenterMass, Denoise: DenoiseSmooth}
	none := sm
	none.Denoise = DenoiseNone
	for _, c := range []struct {
		name string
		load func(datasets.Split, string) (*datasets.Set, error)
		frac float64
	}{{"MNIST", datasets.LoadMNIST, 1}, {"Fashion-MNIST", datasets.LoadFashionMNIST, 0.99}} {
		s, err := c.load(datasets.Test, "")
		if err != nil {
			t.Skipf("%s not available: %v", c.name, err)
		}
		same := 0
		img := make([]float32, s.H*s.W)
		for i := 0; i < s.N; i++ {
			s.Float(img, i)
			if slices.Equal(normalizeInput(nil, img, s.H, s.W, sm), normalizeInput(nil, img, s.H, s.W, none)) {
				same++
			}
		}
		if f := float64(same) / float64(s.N); f < c.frac {
			t.Errorf("%s: smooth denoising changed %d of %d clean test images; want at most %.0f%%", c.name, s.N-same, s.N, 100*(1-c.frac))
		}
		t.Logf("%s: %d of %d clean test images unchanged", c.name, same, s.N)
	}
}
