package v1layer

import (
	"github.com/striate/striate/internal/raster"

	"fmt"
	"math"
)

// DoGConfig sets up the retina / LGN stage: centre-surround differences of
// Gaussians. The zero value is the default: centre σ of 1 and 2 px, surround
// ratio 1.6, support radius 3 surround σ, half-wave rectified into an
// on-centre and an off-centre channel per σ, no contrast normalisation —
// the DoG part of the reference work.
type DoGConfig struct {
	// Disable drops the retina stage.
	Disable bool `json:"disable,omitempty"`
	// Sigmas are the centre σ_c in pixels, one scale each. Default [1, 2];
	// each in [0.3, 20], at most 8.
	Sigmas []float64 `json:"sigmas,omitempty"`
	// Ratio σ_s/σ_c. Default 1.6 (Marr & Hildreth 1980's approximation of
	// the Laplacian of Gaussian); range (1, 10].
	Ratio float64 `json:"ratio,omitempty"`
	// Radius of the support in surround σ: r = ceil(Radius·σ_s). Default 3; range [1,6].
	Radius float64 `json:"radius,omitempty"`
	// Signed keeps one signed channel per σ instead of the on/off pair
	// max(0,r), max(0,−r).
	Signed bool `json:"signed,omitempty"`
	// LCN is the optional local contrast normalisation of the DoG response.
	LCN LCNConfig `json:"lcn"`
}

func (c DoGConfig) withDefaults() DoGConfig {
	if len(c.Sigmas) == 0 {
		c.Sigmas = []float64{1, 2}
	} else {
		c.Sigmas = append([]float64(nil), c.Sigmas...)
	}
	if c.Ratio == 0 {
		c.Ratio = 1.6
	}
	if c.Radius == 0 {
		c.Radius = 3
	}
	c.LCN = c.LCN.withDefaults()
	return c
}

func (c DoGConfig) validate() error {
	if len(c.Sigmas) > 8 {
		return fmt.Errorf("v1layer: DoG.Sigmas has %d scales; at most 8", len(c.Sigmas))
	}
	for i, s := range c.Sigmas {
		if !(s >= 0.3 && s <= 20) {
			return fmt.Errorf("v1layer: DoG.Sigmas[%d] = %g px out of range [0.3,20]; default [1,2]", i, s)
		}
	}
	if !(c.Ratio > 1 && c.Ratio <= 10) {
		return fmt.Errorf("v1layer: DoG.Ratio %g out of range (1,10]; 1.6 is the default", c.Ratio)
	}
	if !(c.Radius >= 1 && c.Radius <= 6) {
		return fmt.Errorf("v1layer: DoG.Radius %g out of range [1,6] surround σ; 3 is the default", c.Radius)
	}
	for _, s := range c.Sigmas {
		if r := int(math.Ceil(c.Radius*c.Ratio*s - 1e-9)); 2*r+1 > MaxKernelSize {
			return fmt.Errorf("v1layer: DoG kernel for σ_c=%g px would be %d px wide, above the %d px limit; lower DoG.Sigmas, Ratio or Radius", s, 2*r+1, MaxKernelSize)
		}
	}
	return c.LCN.validate()
}

// Gaussian1D returns the 1-D Gaussian exp(-t²/2σ²) on t = -r..r, normalised
// to sum 1 over that support, in float64.
func Gaussian1D(sigma float64, r int) []float64 { return raster.Gaussian(sigma, r) }

// dogGrid returns the zero-sum, unit-L2 on-centre DoG of centre σ_c and
// surround σ_s on the square support of radius r, in float64.
func dogGrid(sc, ss float64, r int) []float64 {
	gc, gs := Gaussian1D(sc, r), Gaussian1D(ss, r)
	n := 2*r + 1
	k := make([]float64, n*n)
	var n2 float64
	for v := 0; v < n; v++ {
		for u := 0; u < n; u++ {
			x := gc[v]*gc[u] - gs[v]*gs[u]
			k[v*n+u] = x
			n2 += x * x
		}
	}
	nn := math.Sqrt(n2)
	for i := range k {
		k[i] /= nn
	}
	return k
}

// DoGKernel returns the on-centre difference of Gaussians
//
//	k = Gc − Gs,  Gc, Gs each normalised to sum 1 over the square support,
//	k /= ||k||₂
//
// with σ_s = ratio·σ_c and radius r = ceil(radius·σ_s). A uniform field
// gives exactly zero response (up to rounding). Meta: KindDoG, Sigma = σ_c,
// Polarity +1, Pair -1.
func DoGKernel(sigmaC, ratio, radius float64) Kernel {
	ss := ratio * sigmaC
	r := int(math.Ceil(radius*ss - 1e-9))
	k64 := dogGrid(sigmaC, ss, r)
	w := make([]float32, len(k64))
	for i, x := range k64 {
		w[i] = float32(x)
	}
	return Kernel{Size: 2*r + 1, W: w, Meta: Channel{Kind: KindDoG, Sigma: sigmaC, Surround: ss, Polarity: 1, Pair: -1}}
}

// dogBank returns the DoG kernels of a defaulted, validated cfg, scale s = index.
func dogBank(cfg DoGConfig) []Kernel {
	ks := make([]Kernel, len(cfg.Sigmas))
	for i, s := range cfg.Sigmas {
		ks[i] = DoGKernel(s, cfg.Ratio, cfg.Radius)
		ks[i].Meta.Scale = i
	}
	return ks
}
