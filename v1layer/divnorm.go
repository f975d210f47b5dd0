package v1layer

import (
	"fmt"
	"math"
)

// NormConfig is divisive normalisation across orientations (Heeger 1992):
// each oriented channel C_i at a position is divided by the pooled energy
// of all oriented channels of the same scale at that position,
//
//	N_i(x) = C_i(x) / sqrt(σ² + (1/n)·Σ_j C_j(x)²)
//
// i.e. Heeger's R_i = E_i/(σ² + mean_j E_j) on squared energies E = C²,
// returned as the amplitude sqrt(R_i). The zero value is off; Sigma (the
// semi-saturation constant, in response units) defaults to 0.1.
type NormConfig struct {
	Enabled bool    `json:"enabled,omitempty"`
	Sigma   float64 `json:"sigma,omitempty"` // in (0, 10]
}

func (c NormConfig) withDefaults() NormConfig {
	if c.Sigma == 0 {
		c.Sigma = 0.1
	}
	return c
}

func (c NormConfig) validate() error {
	if c.Enabled && !(c.Sigma > 0 && c.Sigma <= 10) {
		return fmt.Errorf("v1layer: Complex.Norm.Sigma %g out of range (0,10]; 0.1 is the default", c.Sigma)
	}
	return nil
}

// divNorm normalises the maps (each of n pixels) in place; acc holds n values.
func divNorm(maps [][]float32, n int, sigma float64, acc []float32) {
	acc = acc[:n]
	s2 := float32(sigma * sigma)
	inv := 1 / float32(len(maps))
	for i := range acc {
		acc[i] = 0
	}
	for _, m := range maps {
		for i, v := range m[:n] {
			acc[i] += v * v
		}
	}
	for i, a := range acc {
		acc[i] = 1 / float32(math.Sqrt(float64(s2+a*inv)))
	}
	for _, m := range maps {
		for i := range m[:n] {
			m[i] *= acc[i]
		}
	}
}
