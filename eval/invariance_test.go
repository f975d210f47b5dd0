package eval

import (
	"math"
	"testing"

	"github.com/striate/striate/v1layer"
)

// quadPair builds a zero-mean even/odd Gabor pair of wavelength lam at
// orientation 0 (x right, y up), σ = 0.5622·λ (one-octave bandwidth,
// common practice), size×size.
func quadPair(lam float64, size int) (even, odd []float64) {
	r := size / 2
	sig := 0.5622 * lam
	even = make([]float64, size*size)
	odd = make([]float64, size*size)
	var me float64
	for v := -r; v <= r; v++ {
		for u := -r; u <= r; u++ {
			g := math.Exp(-float64(u*u+v*v) / (2 * sig * sig))
			i := (v+r)*size + u + r
			even[i] = g * math.Cos(2*math.Pi*float64(u)/lam)
			odd[i] = g * math.Sin(2*math.Pi*float64(u)/lam)
			me += even[i]
		}
	}
	for i := range even {
		even[i] -= me / float64(len(even))
	}
	return
}

// fakeCells returns a MapsFunc with four channels built from one
// quadrature pair: 0 linear even, 1 linear odd, 2 half-wave rectified even,
// 3 quadrature energy sqrt(even² + odd²). Maps are the size of the image
// (zero padding).
func fakeCells(lam float64) MapsFunc {
	const size = 21
	even, odd := quadPair(lam, size)
	r := size / 2
	return func(dst *v1layer.Maps, img []float32, h, w int) {
		dst.Resize(4, h, w)
		n := h * w
		for y := range h {
			for x := range w {
				var e, o float64
				for v := -r; v <= r; v++ {
					yy := y - v // kernel v up = image row above
					if yy < 0 || yy >= h {
						continue
					}
					for u := -r; u <= r; u++ {
						xx := x + u
						if xx < 0 || xx >= w {
							continue
						}
						p := float64(img[yy*w+xx])
						k := (v+r)*size + u + r
						e += even[k] * p
						o += odd[k] * p
					}
				}
				i := y*w + x
				dst.Pix[i] = float32(e)
				dst.Pix[n+i] = float32(o)
				dst.Pix[2*n+i] = float32(max(e, 0))
				dst.Pix[3*n+i] = float32(math.Hypot(e, o))
			}
		}
	}
}

// TestInvarianceKnownCells checks the probe on cells whose answers are
// known: a half-wave rectified sinusoid has F1/F0 = (A/2)/(A/π) = π/2
// (the rectified-linear simple-cell value behind the F1/F0 > 1 criterion of
// Skottun et al. 1991); an energy cell's response does not depend on phase
// (F1 = 0, phase correlation 1); a linear cell's responses a quarter cycle
// apart are cos and −sin, whose correlation over a full cycle is 0.
func TestInvarianceKnownCells(t *testing.T) {
	inv, err := Invariance(fakeCells(8), InvarianceConfig{Wavelengths: []float64{4, 8}, Orientations: 4})
	if err != nil {
		t.Fatal(err)
	}
	if len(inv) != 4 {
		t.Fatalf("%d channels; want 4", len(inv))
	}
	even, odd, rect, energy := inv[0], inv[1], inv[2], inv[3]
	for _, c := range inv {
		if c.PrefWavelength != 8 || c.PrefOrientation != 0 {
			t.Errorf("channel %d prefers λ=%g θ=%g; built for λ=8, θ=0", c.Channel, c.PrefWavelength, c.PrefOrientation)
		}
	}
	// 16 phase samples alias the rectified cosine's harmonics 16, 32, ...
	// into F0; over all sampling offsets the ratio strays from π/2 by at most
	// 1.31% (worked numerically with NumPy: offset 0 gives 1.0131·π/2);
	// tolerance 2%.
	if math.Abs(rect.Modulation/(math.Pi/2)-1) > 0.02 {
		t.Errorf("rectified cell F1/F0 = %.4f; want π/2 = %.4f", rect.Modulation, math.Pi/2)
	}
	// The pair is in quadrature to exp(−(2πσ/λ·2)²/2) ≈ 1e-11 at its own
	// wavelength; 0.01 allows for the 21-px window's truncation.
	if energy.Modulation > 0.01 {
		t.Errorf("energy cell F1/F0 = %.4f; want ≈ 0", energy.Modulation)
	}
	if even.Modulation != MaxModulation || odd.Modulation != MaxModulation {
		t.Errorf("linear cells F1/F0 = %g, %g; want the cap %d (F0 = 0)", even.Modulation, odd.Modulation, MaxModulation)
	}
	// Phase: energy ≈ 1 (off-peak gratings leave small even/odd imbalance),
	// linear ≈ 0 (exactly 0 up to float32 rounding over 16 phases).
	if energy.PhaseCorr < 0.95 {
		t.Errorf("energy phase correlation %.4f; want > 0.95", energy.PhaseCorr)
	}
	if math.Abs(even.PhaseCorr) > 0.01 || math.Abs(odd.PhaseCorr) > 0.01 {
		t.Errorf("linear phase correlations %.4f, %.4f; want ≈ 0", even.PhaseCorr, odd.PhaseCorr)
	}
	if rect.PhaseCorr >= energy.PhaseCorr {
		t.Errorf("rectified phase correlation %.4f not below energy's %.4f", rect.PhaseCorr, energy.PhaseCorr)
	}
	// A 1 px shift is a quarter cycle at λ = 4: linear maps decorrelate,
	// the energy map barely changes.
	if energy.ShiftCorr < 0.95 || even.ShiftCorr > energy.ShiftCorr-0.2 {
		t.Errorf("shift correlations: energy %.4f, even %.4f; want energy > 0.95 and well above even", energy.ShiftCorr, even.ShiftCorr)
	}
}

func TestInvarianceSilentChannel(t *testing.T) {
	zero := func(dst *v1layer.Maps, img []float32, h, w int) {
		dst.Resize(1, h, w)
		clear(dst.Pix)
	}
	inv, err := Invariance(zero, InvarianceConfig{Size: 16, Wavelengths: []float64{4}, Orientations: 2, Phases: 4})
	if err != nil {
		t.Fatal(err)
	}
	if !inv[0].Silent || inv[0].PhaseCorr != 0 || inv[0].Modulation != 0 {
		t.Errorf("silent channel: %+v", inv[0])
	}
}

func TestInvarianceConfigErrors(t *testing.T) {
	f := fakeCells(8)
	for _, cfg := range []InvarianceConfig{
		{Phases: 6}, {Wavelengths: []float64{1}}, {Size: 4}, {Contrast: 2}, {Shift: 40},
	} {
		if _, err := Invariance(f, cfg); err == nil {
			t.Errorf("config %+v accepted", cfg)
		}
	}
}

// TestInvarianceFrontEnd probes the default v1layer front end: its
// quadrature-energy channels must classify as complex cells by the
// Skottun et al. (1991) criterion F1/F0 < 1.
func TestInvarianceFrontEnd(t *testing.T) {
	fe, err := v1layer.New(v1layer.Config{})
	if err != nil {
		t.Skipf("v1layer front end not available: %v", err)
	}
	inv, err := Invariance(fe.Apply, InvarianceConfig{Orientations: 4, Phases: 8})
	if err != nil {
		t.Fatal(err)
	}
	chans := fe.Channels()
	if len(chans) != len(inv) {
		t.Fatalf("%d invariance rows for %d channels", len(inv), len(chans))
	}
	energy := 0
	for i, ch := range chans {
		if ch.Kind != v1layer.KindEnergy {
			continue
		}
		energy++
		if inv[i].Modulation >= 1 {
			t.Errorf("energy channel %d (θ=%.2f λ=%.1f): F1/F0 = %.3f; want < 1 (complex)", i, ch.Orientation, ch.Wavelength, inv[i].Modulation)
		}
	}
	if energy == 0 {
		t.Skip("default front end has no energy channels")
	}
}

// TestFlatMapsMatchesMaps: the flat-vector adapter gives the probe the same
// maps, hence the same answers.
func TestFlatMapsMatchesMaps(t *testing.T) {
	f := fakeCells(8)
	flat := func(img []float32, h, w int) []float32 {
		var m v1layer.Maps
		f(&m, img, h, w)
		return append([]float32(nil), m.Pix...)
	}
	cfg := InvarianceConfig{Size: 24, Wavelengths: []float64{8}, Orientations: 2, Phases: 8}
	a, err := Invariance(f, cfg)
	if err != nil {
		t.Fatal(err)
	}
	b, err := Invariance(FlatMaps(flat, 4, 0, 0), cfg)
	if err != nil {
		t.Fatal(err)
	}
	for i := range a {
		if a[i] != b[i] {
			t.Errorf("channel %d: %+v via Maps, %+v via FlatMaps", i, a[i], b[i])
		}
	}
}
