package v1layer

import (
	"fmt"
	"math"
)

// GaborConfig sets up a hand-set bank of Gabor simple cells. The zero value
// is the default bank: 4 orientations (0°, 45°, 90°, 135°), an even/odd
// quadrature pair at each, wavelengths 4 and 8 px (2 octave-spaced scales),
// a half-amplitude bandwidth of 1 octave, aspect ratio 1 and a support
// radius of 3σ — exactly the bank of the reference work in
// internal/benchwork/data/filterbank.json.
type GaborConfig struct {
	// Disable drops the Gabor stage (a DoG-only front end, or a learned
	// bank given in Config.Bank).
	Disable bool `json:"disable,omitempty"`
	// Orientations n: carrier directions θ_k = k·π/n, k = 0..n-1. Default 4; range [1,32].
	Orientations int `json:"orientations,omitempty"`
	// Wavelength λ₀ of the finest scale in pixels. Default 4; range [2,64]
	// (2 px is the Nyquist limit).
	Wavelength float64 `json:"wavelength,omitempty"`
	// Scales: wavelengths λ_s = λ₀·2^s for s = 0..Scales-1 (octave spacing).
	// Default 2; range [1,6].
	Scales int `json:"scales,omitempty"`
	// Bandwidth b: half-amplitude spatial-frequency bandwidth in octaves;
	// it sets σ = λ·SigmaOverLambda(b). Default 1; range [0.3,4].
	Bandwidth float64 `json:"bandwidth,omitempty"`
	// Aspect γ: the envelope is exp(-(x'²+γ²y'²)/2σ²), so γ < 1 elongates it
	// along the stripes. Default 1; range [0.2,5].
	Aspect float64 `json:"aspect,omitempty"`
	// Phases: 2 (default) gives the even (ψ=0) / odd (ψ=π/2) quadrature
	// pair; 4 gives the four polarities ψ = 0, π/2, π, 3π/2.
	Phases int `json:"phases,omitempty"`
	// Radius in envelope σ along the longer envelope axis: the kernel is
	// square with r = ceil(Radius·σ/min(γ,1)) and size 2r+1. Default 3; range [1,6].
	Radius float64 `json:"radius,omitempty"`
}

func (c GaborConfig) withDefaults() GaborConfig {
	if c.Orientations == 0 {
		c.Orientations = 4
	}
	if c.Wavelength == 0 {
		c.Wavelength = 4
	}
	if c.Scales == 0 {
		c.Scales = 2
	}
	if c.Bandwidth == 0 {
		c.Bandwidth = 1
	}
	if c.Aspect == 0 {
		c.Aspect = 1
	}
	if c.Phases == 0 {
		c.Phases = 2
	}
	if c.Radius == 0 {
		c.Radius = 3
	}
	return c
}

func (c GaborConfig) validate() error {
	switch {
	case c.Orientations < 1 || c.Orientations > 32:
		return fmt.Errorf("v1layer: Gabor.Orientations %d out of range [1,32]; 4 is the default", c.Orientations)
	case !(c.Wavelength >= 2 && c.Wavelength <= 64):
		return fmt.Errorf("v1layer: Gabor.Wavelength %g px out of range [2,64] (2 px is the Nyquist limit); 4 is the default", c.Wavelength)
	case c.Scales < 1 || c.Scales > 6:
		return fmt.Errorf("v1layer: Gabor.Scales %d out of range [1,6]; 2 is the default", c.Scales)
	case !(c.Bandwidth >= 0.3 && c.Bandwidth <= 4):
		return fmt.Errorf("v1layer: Gabor.Bandwidth %g octaves out of range [0.3,4]; 1 is the default", c.Bandwidth)
	case !(c.Aspect >= 0.2 && c.Aspect <= 5):
		return fmt.Errorf("v1layer: Gabor.Aspect %g out of range [0.2,5]; 1 is the default", c.Aspect)
	case c.Phases != 2 && c.Phases != 4:
		return fmt.Errorf("v1layer: Gabor.Phases %d; want 2 (even/odd pair) or 4 (four polarities)", c.Phases)
	case !(c.Radius >= 1 && c.Radius <= 6):
		return fmt.Errorf("v1layer: Gabor.Radius %g out of range [1,6] envelope σ; 3 is the default", c.Radius)
	}
	return nil
}

// SigmaOverLambda returns σ/λ for a Gabor whose half-amplitude
// spatial-frequency bandwidth is b octaves:
//
//	σ/λ = (1/π)·sqrt(ln2/2)·(2^b+1)/(2^b−1)
//
// (b = 1 gives 0.5622, b = 1.5 gives 0.3924). It panics if b <= 0.
func SigmaOverLambda(b float64) float64 {
	if !(b > 0) {
		panic(fmt.Sprintf("v1layer: SigmaOverLambda(%g): bandwidth must be > 0", b))
	}
	p := math.Exp2(b)
	return math.Sqrt(math.Ln2/2) / math.Pi * (p + 1) / (p - 1)
}

// GaborParams are the parameters of one Gabor kernel (see doc.go for the
// formula and the coordinate convention).
type GaborParams struct {
	Theta      float64 // carrier direction θ, radians, counter-clockwise from +x with y up
	Wavelength float64 // λ, pixels
	Phase      float64 // ψ, radians; carrier cos(2π x'/λ − ψ): 0 even, π/2 odd
	Sigma      float64 // envelope σ along the carrier, pixels
	Aspect     float64 // γ (0 means 1)
}

// gaborGrid evaluates the zero-mean, unit-L2 Gabor of p on the rectangular
// grid u ∈ [-rx,rx] (columns), v ∈ [-ry,ry] (rows), row-major, in float64.
func gaborGrid(p GaborParams, rx, ry int) []float64 {
	g := p.Aspect
	if g == 0 {
		g = 1
	}
	nx, ny := 2*rx+1, 2*ry+1
	env := make([]float64, nx*ny)
	car := make([]float64, nx*ny)
	ct, st := math.Cos(p.Theta), math.Sin(p.Theta)
	var se, sc float64
	for v := -ry; v <= ry; v++ {
		y := -float64(v) // image y axis points up
		for u := -rx; u <= rx; u++ {
			x := float64(u)
			xr := x*ct + y*st
			yr := -x*st + y*ct
			i := (v+ry)*nx + (u + rx)
			e := math.Exp(-(xr*xr + g*g*yr*yr) / (2 * p.Sigma * p.Sigma))
			c := math.Cos(2*math.Pi*xr/p.Wavelength - p.Phase)
			env[i], car[i] = e, c
			se += e
			sc += e * c
		}
	}
	// Zero mean: subtract the envelope-weighted mean of the carrier, so the
	// kernel keeps its Gaussian taper (the correction the reference work
	// internal/benchwork/data/filterbank.json uses; for odd phases it is zero by symmetry).
	dc := sc / se
	var n2 float64
	for i := range env {
		env[i] *= car[i] - dc
		n2 += env[i] * env[i]
	}
	n := math.Sqrt(n2)
	for i := range env {
		env[i] /= n
	}
	return env
}

// GaborKernel returns the square zero-mean, unit-L2 Gabor kernel of radius
// r (size 2r+1) with parameters p. Meta carries p; Pair is -1.
func GaborKernel(p GaborParams, r int) Kernel {
	w64 := gaborGrid(p, r, r)
	w := make([]float32, len(w64))
	for i, x := range w64 {
		w[i] = float32(x)
	}
	a := p.Aspect
	if a == 0 {
		a = 1
	}
	return Kernel{Size: 2*r + 1, W: w, Meta: Channel{
		Kind: KindGabor, Orientation: p.Theta, Phase: p.Phase, Wavelength: p.Wavelength,
		Sigma: p.Sigma, Aspect: a, Pair: -1,
	}}
}

// gaborRadius is the support radius of a Gabor of envelope σ and aspect γ.
func gaborRadius(sigma, aspect, radius float64) int {
	long := sigma
	if aspect < 1 {
		long = sigma / aspect
	}
	return int(math.Ceil(radius*long - 1e-9))
}

// GaborBank builds the hand-set Gabor bank of cfg (zero value = default, see
// GaborConfig). Kernels are ordered by scale, then orientation, then phase;
// with 2 phases the even and odd kernel of each (scale, orientation) are
// quadrature partners (Meta.Pair), with 4 phases ψ and ψ+π/2 are.
func GaborBank(cfg GaborConfig) (*Bank, error) {
	if cfg.Disable {
		return nil, fmt.Errorf("v1layer: GaborBank called with Gabor.Disable set; clear it or do not build the bank")
	}
	cfg = cfg.withDefaults()
	if err := cfg.validate(); err != nil {
		return nil, err
	}
	so := SigmaOverLambda(cfg.Bandwidth)
	b := &Bank{}
	for s := 0; s < cfg.Scales; s++ {
		lambda := cfg.Wavelength * math.Exp2(float64(s))
		sigma := so * lambda
		r := gaborRadius(sigma, cfg.Aspect, cfg.Radius)
		if 2*r+1 > MaxKernelSize {
			return nil, fmt.Errorf("v1layer: Gabor kernel at λ=%g px would be %d px wide, above the %d px limit; lower Gabor.Wavelength, Scales or Radius", lambda, 2*r+1, MaxKernelSize)
		}
		for o := 0; o < cfg.Orientations; o++ {
			theta := float64(o) * math.Pi / float64(cfg.Orientations)
			base := len(b.Kernels)
			for ph := 0; ph < cfg.Phases; ph++ {
				k := GaborKernel(GaborParams{Theta: theta, Wavelength: lambda, Phase: float64(ph) * math.Pi / 2, Sigma: sigma, Aspect: cfg.Aspect}, r)
				k.Meta.Scale = s
				k.Meta.Pair = base + (ph ^ 1)
				if cfg.Phases == 4 {
					k.Meta.Polarity = 1 - 2*(ph/2) // ψ ≥ π is the sign-flipped cell
				}
				b.Kernels = append(b.Kernels, k)
			}
		}
	}
	return b, nil
}
