package v1layer

import (
	"compress/gzip"
	"encoding/json"
	"math"
	"os"
	"testing"
)

func readGz(t *testing.T, name string, v any) {
	t.Helper()
	f, err := os.Open("../testdata/v1layer/" + name)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	zr, err := gzip.NewReader(f)
	if err != nil {
		t.Fatal(err)
	}
	if err := json.NewDecoder(zr).Decode(v); err != nil {
		t.Fatal(err)
	}
}

// Gabor kernels equal scikit-image 0.19.3's skimage.filters.gabor_kernel
// (Debian python3-skimage) after the same zero-mean, unit-L2
// normalisation, on the grid of testdata/v1layer/gen_reference.py.
// Tolerance 1e-6: an order above the float32 rounding of these unit-L2
// values (≤ 6e-8), which is what the front end computes in (common
// practice); both sides are float64 (the file keeps 10 significant
// digits), so agreement is ~1e-10 unless a formula differs.
func TestGaborMatchesSkimage(t *testing.T) {
	var ref struct {
		Versions map[string]string
		Cases    []struct {
			Theta, Lambda, Sigma, Gamma, Psi float64
			Rx, Ry                           int
			Values                           []float64
		}
	}
	readGz(t, "gabor_skimage.json.gz", &ref)
	if len(ref.Cases) < 12 {
		t.Fatalf("only %d reference cases", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		got := gaborGrid(GaborParams{Theta: c.Theta, Wavelength: c.Lambda, Phase: c.Psi, Sigma: c.Sigma, Aspect: c.Gamma}, c.Rx, c.Ry)
		if len(got) != len(c.Values) {
			t.Fatalf("case %+v: %d values, reference %d", c, len(got), len(c.Values))
		}
		var worst float64
		for i, v := range c.Values {
			worst = math.Max(worst, math.Abs(got[i]-v))
		}
		if worst > 1e-6 {
			t.Errorf("θ=%.3f λ=%g σ=%g γ=%g ψ=%.3f: max |Δ| = %.3g vs skimage %s, want ≤ 1e-6",
				c.Theta, c.Lambda, c.Sigma, c.Gamma, c.Psi, worst, ref.Versions["scikit-image"])
		}
	}
}

// σ/λ from the relation between a Gabor function's half-amplitude
// spatial-frequency bandwidth b (octaves) and its envelope,
// σ/λ = (1/π)·sqrt(ln2/2)·(2^b+1)/(2^b−1), which follows from the
// Gaussian spectrum of Daugman's (1985) form and is written this way by
// Petkov & Kruizinga (1997, Biol. Cybern. 76; from memory). Evaluated by
// hand to 4 decimals: 0.5622 for the 1-octave bandwidth (the commonly used
// σ ≈ 0.56 λ) and 0.3924 for b = 1.5, hence the 5e-5 tolerance.
func TestSigmaOverLambda(t *testing.T) {
	for _, c := range []struct{ b, want float64 }{{1, 0.5622}, {1.5, 0.3924}} {
		if got := SigmaOverLambda(c.b); math.Abs(got-c.want) > 5e-5 {
			t.Errorf("SigmaOverLambda(%g) = %.5f, want %.4f", c.b, got, c.want)
		}
	}
	// filterbank.json gives σ = 2.248687501551331 px for λ = 4, b = 1.
	if got := 4 * SigmaOverLambda(1); math.Abs(got-2.248687501551331) > 1e-12 {
		t.Errorf("σ(λ=4,b=1) = %.15g, want 2.248687501551331 (filterbank.json)", got)
	}
}

// The half-amplitude spatial-frequency bandwidth measured from each
// kernel's spectrum equals the requested b within 5% (a tolerance of ours:
// the 3σ truncation and the pixel grid move it by a few percent at most).
// b is defined as in the physiology it models, log2 of the ratio of the
// frequencies where the response falls to half its peak (De Valois,
// Albrecht & Thorell 1982, Vision Res. 22, macaque V1: bandwidths from
// about 0.5 to over 3 octaves, median about 1.4; from memory).
// The spectrum is the DTFT of the complex kernel even + i·odd, sampled
// along the carrier direction; the half-amplitude points are found by
// bisection and b = log2(f_hi/f_lo).
func TestGaborSpectralBandwidth(t *testing.T) {
	for _, b := range []float64{1, 1.5} {
		for _, lambda := range []float64{8, 16} {
			bank, err := GaborBank(GaborConfig{Bandwidth: b, Wavelength: lambda, Scales: 1, Orientations: 4})
			if err != nil {
				t.Fatal(err)
			}
			for o := 0; o < len(bank.Kernels); o += 2 {
				ev, od := bank.Kernels[o], bank.Kernels[o+1]
				theta := ev.Meta.Orientation
				amp := func(f float64) float64 {
					r := ev.Size / 2
					var re, im float64
					for v := -r; v <= r; v++ {
						for u := -r; u <= r; u++ {
							i := (v+r)*ev.Size + u + r
							// x' at (u,v) with y = −v, as in the kernel formula
							ph := 2 * math.Pi * f * (float64(u)*math.Cos(theta) - float64(v)*math.Sin(theta))
							kr, ki := float64(ev.W[i]), float64(od.W[i])
							c, s := math.Cos(ph), math.Sin(ph)
							re += kr*c + ki*s // (kr + i·ki)·exp(−iφ)
							im += ki*c - kr*s
						}
					}
					return math.Hypot(re, im)
				}
				f0 := 1 / lambda
				peak := amp(f0)
				half := func(lo, hi float64) float64 { // amp(lo) and amp(hi) straddle peak/2
					alo := amp(lo) - peak/2
					for k := 0; k < 50; k++ {
						mid := (lo + hi) / 2
						if am := amp(mid) - peak/2; (am > 0) == (alo > 0) {
							lo, alo = mid, am
						} else {
							hi = mid
						}
					}
					return (lo + hi) / 2
				}
				flo := half(f0/8, f0)
				fhi := half(f0, math.Min(4*f0, 0.5))
				got := math.Log2(fhi / flo)
				t.Logf("b=%g λ=%g θ=%.0f°: measured %.4f octaves", b, lambda, theta*180/math.Pi, got)
				if math.Abs(got-b)/b > 0.05 {
					t.Errorf("b=%g λ=%g θ=%.2f: measured bandwidth %.4f octaves, want within 5%%", b, lambda, theta, got)
				}
			}
		}
	}
}

// Every bank kernel is zero-mean and unit-L2 (tolerances: float32
// rounding of up to 841 weights, ~1e-6).
func TestGaborBankNormalised(t *testing.T) {
	bank, err := GaborBank(GaborConfig{Orientations: 6, Scales: 3, Phases: 4, Aspect: 0.5})
	if err != nil {
		t.Fatal(err)
	}
	if len(bank.Kernels) != 6*3*4 {
		t.Fatalf("%d kernels, want 72", len(bank.Kernels))
	}
	if err := bank.Validate(); err != nil {
		t.Fatal(err)
	}
	for i, k := range bank.Kernels {
		var s, s2 float64
		for _, w := range k.W {
			s += float64(w)
			s2 += float64(w) * float64(w)
		}
		if math.Abs(s) > 1e-5 || math.Abs(s2-1) > 1e-5 {
			t.Errorf("kernel %d: sum %.2g, sum of squares %.7f; want 0 and 1", i, s, s2)
		}
	}
	// Four polarities: ψ = π is the negative of ψ = 0.
	k0, k2 := bank.Kernels[0], bank.Kernels[2]
	for i := range k0.W {
		if math.Abs(float64(k0.W[i]+k2.W[i])) > 1e-6 {
			t.Fatalf("ψ=π kernel is not the negative of ψ=0 at %d", i)
		}
	}
	if k0.Meta.Polarity != 1 || k2.Meta.Polarity != -1 || k0.Meta.Pair != 1 || k2.Meta.Pair != 3 {
		t.Errorf("four-phase metadata: %+v / %+v", k0.Meta, k2.Meta)
	}
}

func TestGaborConfigErrors(t *testing.T) {
	for _, c := range []GaborConfig{{Wavelength: 1.5}, {Orientations: 40}, {Phases: 3}, {Bandwidth: 9}, {Scales: 9}, {Aspect: 0.01}, {Radius: 10}} {
		if _, err := GaborBank(c); err == nil {
			t.Errorf("GaborBank(%+v) accepted", c)
		}
	}
	if _, err := GaborBank(GaborConfig{Wavelength: 64, Scales: 3}); err == nil {
		t.Errorf("a 3-scale bank from λ=64 (kernels ≥ 500 px) was accepted")
	}
}
