package v1layer

import (
	"fmt"
	"math"
)

// LCNConfig is the optional local contrast normalisation of the DoG
// response r (see doc.go):
//
//	n(x) = r(x) / (Epsilon + sqrt(Σ_x' G_σ(x−x')·r(x')²))
//
// The zero value is off; when Enabled, Sigma defaults to 3 px and Epsilon to 0.01.
type LCNConfig struct {
	Enabled bool    `json:"enabled,omitempty"`
	Sigma   float64 `json:"sigma,omitempty"`   // σ of the Gaussian pooling window, px, in [0.5, 20]
	Epsilon float64 `json:"epsilon,omitempty"` // additive constant, in (0, 10]
}

func (c LCNConfig) withDefaults() LCNConfig {
	if c.Sigma == 0 {
		c.Sigma = 3
	}
	if c.Epsilon == 0 {
		c.Epsilon = 0.01
	}
	return c
}

func (c LCNConfig) validate() error {
	if !c.Enabled {
		return nil
	}
	if !(c.Sigma >= 0.5 && c.Sigma <= 20) {
		return fmt.Errorf("v1layer: DoG.LCN.Sigma %g px out of range [0.5,20]; 3 is the default", c.Sigma)
	}
	if !(c.Epsilon > 0 && c.Epsilon <= 10) {
		return fmt.Errorf("v1layer: DoG.LCN.Epsilon %g out of range (0,10]; 0.01 is the default", c.Epsilon)
	}
	return nil
}

// lcnRadius is the support radius of the LCN Gaussian: 3σ.
func lcnRadius(sigma float64) int { return int(math.Ceil(3*sigma - 1e-9)) }

// lcnApply normalises the h×w map r in place using tmp (len ≥ 3·h·w) and
// the 1-D Gaussian g (odd length). Border as b.
func lcnApply(r []float32, h, w int, g []float32, eps float32, b Border, tmp []float32) {
	n := h * w
	sq, out := tmp[:n], tmp[n:2*n]
	for i, x := range r[:n] {
		sq[i] = x * x
	}
	gaussSep(out, sq, h, w, g, b, tmp[2*n:3*n])
	for i := range r[:n] {
		r[i] /= eps + float32(math.Sqrt(float64(max(out[i], 0))))
	}
}
