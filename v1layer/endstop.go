package v1layer

import (
	"github.com/striate/striate/internal/raster"

	"fmt"
	"math"
)

// LengthConfig is optional length summation of complex-cell maps along
// their preferred orientation (the bar axis, perpendicular to the carrier
// direction θ):
//
//	L_θ(x) = Σ_{t=−R..R} g(t)·C_θ(x + t·d_θ),  d_θ = (−sin θ, cos θ),
//	g(t) ∝ exp(−t²/2σ_L²), Σ g = 1, σ_L = Sigma·λ, R = ceil(2σ_L)
//
// It replaces each energy map by L. The zero value is off; Sigma defaults to 0.5.
type LengthConfig struct {
	Enabled bool    `json:"enabled,omitempty"`
	Sigma   float64 `json:"sigma,omitempty"` // σ_L in wavelengths, in [0.1, 4]
}

func (c LengthConfig) withDefaults() LengthConfig {
	if c.Sigma == 0 {
		c.Sigma = 0.5
	}
	return c
}

func (c LengthConfig) validate() error {
	if c.Enabled && !(c.Sigma >= 0.1 && c.Sigma <= 4) {
		return fmt.Errorf("v1layer: Complex.Length.Sigma %g wavelengths out of range [0.1,4]; 0.5 is the default", c.Sigma)
	}
	return nil
}

// EndStopConfig adds one end-stopped (hypercomplex) channel per energy
// channel, a double-stopped operator after Heitger et al. (1992):
//
//	E_θ(x) = [ C_θ(x) − Gain·½·(C_θ(x + s·d_θ) + C_θ(x − s·d_θ)) ]⁺,  s = Shift·λ
//
// with d_θ the unit vector along the bar axis as in LengthConfig, and C
// sampled bilinearly (0 outside the image). A bar much longer than 2s
// excites the flanks as much as the centre and is suppressed; a short bar
// is not. The zero value is off; Shift defaults to 1 wavelength, Gain to 1.
type EndStopConfig struct {
	Enabled bool    `json:"enabled,omitempty"`
	Shift   float64 `json:"shift,omitempty"` // s in wavelengths, in [0.25, 4]
	Gain    float64 `json:"gain,omitempty"`  // in (0, 4]
}

func (c EndStopConfig) withDefaults() EndStopConfig {
	if c.Shift == 0 {
		c.Shift = 1
	}
	if c.Gain == 0 {
		c.Gain = 1
	}
	return c
}

func (c EndStopConfig) validate() error {
	if !c.Enabled {
		return nil
	}
	if !(c.Shift >= 0.25 && c.Shift <= 4) {
		return fmt.Errorf("v1layer: Complex.EndStop.Shift %g wavelengths out of range [0.25,4]; 1 is the default", c.Shift)
	}
	if !(c.Gain > 0 && c.Gain <= 4) {
		return fmt.Errorf("v1layer: Complex.EndStop.Gain %g out of range (0,4]; 1 is the default", c.Gain)
	}
	return nil
}

// axisStep returns the (column, row) step of the unit vector along the bar
// axis of carrier direction θ (image y up, rows down).
func axisStep(theta float64) (dx, dy float64) {
	return -math.Sin(theta), -math.Cos(theta)
}

// lengthWeights returns the weights g(t), t = −R..R, for σ_L in pixels.
func lengthWeights(sigma float64) []float32 {
	g64 := Gaussian1D(sigma, int(math.Ceil(2*sigma)))
	g := make([]float32, len(g64))
	for i, v := range g64 {
		g[i] = float32(v)
	}
	return g
}

// lengthSum writes L_θ of src (h×w) to dst with the weights g of lengthWeights.
func lengthSum(dst, src []float32, h, w int, theta float64, g []float32) {
	r := len(g) / 2
	dx, dy := axisStep(theta)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var s float32
			for t := -r; t <= r; t++ {
				s += g[t+r] * raster.Bilinear(src, h, w, float64(y)+float64(t)*dy, float64(x)+float64(t)*dx)
			}
			dst[y*w+x] = s
		}
	}
}

// endStop writes E_θ of src (h×w) to dst; shift in pixels.
func endStop(dst, src []float32, h, w int, theta, shift, gain float64) {
	dx, dy := axisStep(theta)
	dx, dy = dx*shift, dy*shift
	g := float32(gain / 2)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			fx, fy := float64(x), float64(y)
			f := raster.Bilinear(src, h, w, fy+dy, fx+dx) + raster.Bilinear(src, h, w, fy-dy, fx-dx)
			dst[y*w+x] = max(0, src[y*w+x]-g*f)
		}
	}
}
