package learn

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// gaborRef is testdata/learn/gabor_ref.json, written by gen_gabor.py with
// scikit-image 0.19.3's filters.gabor_kernel (real part, 17×17).
type gaborRef struct {
	Library string `json:"library"`
	Cases   []struct {
		Frequency float64   `json:"frequency"`
		Theta     float64   `json:"theta"`
		Bandwidth float64   `json:"bandwidth"`
		SigmaX    float64   `json:"sigma_x"`
		SigmaY    float64   `json:"sigma_y"`
		Offset    float64   `json:"offset"`
		Size      int       `json:"size"`
		Kernel    []float64 `json:"kernel"`
	} `json:"cases"`
}

// angleDiff returns the distance between two orientations modulo π.
func angleDiff(a, b float64) float64 {
	d := math.Mod(math.Abs(a-b), math.Pi)
	return math.Min(d, math.Pi-d)
}

// TestFitGaborSkimage fits scikit-image's gabor_kernel outputs and recovers
// their parameters; for the kernels made from an octave bandwidth, our
// FreqBandwidth returns that bandwidth (skimage's σ-bandwidth relation is
// the same Gaussian half-amplitude rule).
func TestFitGaborSkimage(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "testdata", "learn", "gabor_ref.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref gaborRef
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	// Tolerances: the kernels are exact Gabors cropped to 17×17 (a little
	// envelope is cut off), so the fit is near-exact; 2% on lengths and
	// 0.02 rad on angles leave room for the crop.
	const relTol, angTol, r2Min = 0.02, 0.02, 0.999
	for i, c := range ref.Cases {
		w := make([]float32, len(c.Kernel))
		for j, v := range c.Kernel {
			w[j] = float32(v)
		}
		g, err := FitGabor(w, c.Size)
		if err != nil {
			t.Fatal(err)
		}
		// skimage's rows grow downward: our θ is −θ_sk modulo π.
		wantTh := math.Mod(-c.Theta+2*math.Pi, math.Pi)
		// phase: cos(2πf x'_sk + offset); with θ = −θ_sk, ψ = −offset; with θ = π − θ_sk, ψ = offset.
		wantPsi := c.Offset
		if math.Abs(math.Mod(-c.Theta+4*math.Pi, 2*math.Pi)-wantTh) < 1e-9 {
			wantPsi = -c.Offset
		}
		t.Logf("case %d: θ %.4f (want %.4f) λ %.3f (want %.3f) σx %.3f σy %.3f (want %.3f %.3f) ψ %.3f (want %.3f) R² %.5f SF bw %.3f oct",
			i, g.Orientation, wantTh, g.Wavelength, 1/c.Frequency, g.SigmaX, g.SigmaY, c.SigmaX, c.SigmaY, g.Phase, wantPsi, g.R2, g.FreqBandwidth())
		if angleDiff(g.Orientation, wantTh) > angTol || math.Abs(g.Wavelength*c.Frequency-1) > relTol ||
			math.Abs(g.SigmaX/c.SigmaX-1) > relTol || math.Abs(g.SigmaY/c.SigmaY-1) > relTol || g.R2 < r2Min {
			t.Errorf("case %d: fit %+v does not recover %+v", i, g, c)
		}
		if d := math.Abs(math.Remainder(g.Phase-wantPsi, 2*math.Pi)); d > angTol {
			t.Errorf("case %d: phase %.4f, want %.4f", i, g.Phase, wantPsi)
		}
		if c.Bandwidth > 0 && math.Abs(g.FreqBandwidth()-c.Bandwidth) > 0.03 {
			t.Errorf("case %d: bandwidth %.4f octaves, want %.4f (skimage)", i, g.FreqBandwidth(), c.Bandwidth)
		}
	}
}

// TestFitGaborNoiseAndControls: a noisy Gabor still fits with R² near its
// signal fraction, while white noise (the control of the bench protocol:
// random atoms 0% with R² > 0.8) fits poorly.
func TestFitGaborNoiseAndControls(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 5))
	const size = 16
	g0 := GaborFit{X0: 1, Y0: -0.5, Orientation: 1.1, Wavelength: 6, Phase: 0.7, SigmaX: 2.2, SigmaY: 3.3, Amplitude: 1}
	w := g0.Render(nil, size)
	for i := range w {
		w[i] += float32(0.05 * r.NormFloat64())
	}
	g, _ := FitGabor(w, size)
	if angleDiff(g.Orientation, g0.Orientation) > 0.05 || math.Abs(g.Wavelength/6-1) > 0.05 || g.R2 < 0.9 {
		t.Errorf("noisy Gabor: got %+v, want near %+v", g, g0)
	}
	high := 0
	for trial := 0; trial < 20; trial++ {
		for i := range w {
			w[i] = float32(r.NormFloat64())
		}
		g, _ := FitGabor(w, size)
		if g.R2 >= 0.8 {
			high++
		}
	}
	if high > 0 {
		t.Errorf("%d of 20 white-noise patches fit with R² ≥ 0.8; want none", high)
	}
	if _, err := FitGabor(w[:10], size); err == nil {
		t.Error("short patch: no error")
	}
}

// TestBandwidthFormulas checks the octave and orientation bandwidths on
// hand-computed cases: σx·f = sqrt(2 ln 2)/(2π)·3 gives Δf/f = 1/3, i.e.
// log2(2) = 1 octave; σy·f = sqrt(2 ln 2)/(2π) gives Δf⊥ = f, i.e. 90°.
func TestBandwidthFormulas(t *testing.T) {
	f := 0.2
	g := GaborFit{Wavelength: 1 / f, SigmaX: halfAmp / (2 * math.Pi) * 3 / f, SigmaY: halfAmp / (2 * math.Pi) / f}
	if b := g.FreqBandwidth(); math.Abs(b-1) > 1e-12 {
		t.Errorf("FreqBandwidth %v, want 1", b)
	}
	if o := g.OrientationBandwidth(); math.Abs(o-90) > 1e-9 {
		t.Errorf("OrientationBandwidth %v, want 90", o)
	}
	g.SigmaX = halfAmp / (2 * math.Pi) / f / 2
	if !math.IsInf(g.FreqBandwidth(), 1) {
		t.Errorf("low-pass fit: bandwidth %v, want +Inf", g.FreqBandwidth())
	}
}
