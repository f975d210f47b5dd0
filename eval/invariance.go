package eval

import (
	"fmt"
	"math"

	"github.com/striate/striate/v1layer"
)

// MapsFunc computes a stack of feature maps for one h×w grey image in [0,1];
// (*v1layer.FrontEnd).Apply has this signature. It must size dst itself.
type MapsFunc func(dst *v1layer.Maps, img []float32, h, w int)

// FlatMaps adapts an extractor that returns a flat channel-major vector of
// channels equal planes (such as a feature extractor without metadata) to a
// MapsFunc. Each plane is mapH×mapW; with mapH = mapW = 0 the planes are
// taken as square. The returned MapsFunc panics if the vector does not
// split that way (a programmer error in the extractor or the sizes).
func FlatMaps(extract func(img []float32, h, w int) []float32, channels, mapH, mapW int) MapsFunc {
	return func(dst *v1layer.Maps, img []float32, h, w int) {
		v := extract(img, h, w)
		if channels < 1 || len(v)%channels != 0 {
			panic(fmt.Sprintf("eval: FlatMaps: %d values do not split into %d channels", len(v), channels))
		}
		plane := len(v) / channels
		mh, mw := mapH, mapW
		if mh == 0 && mw == 0 {
			mh = int(math.Round(math.Sqrt(float64(plane))))
			mw = mh
		}
		if mh*mw != plane {
			panic(fmt.Sprintf("eval: FlatMaps: planes of %d values are not %d×%d", plane, mh, mw))
		}
		dst.Resize(channels, mh, mw)
		copy(dst.Pix, v)
	}
}

// InvarianceConfig sets up the grating probe of Invariance. The zero value
// means the defaults beside each field.
type InvarianceConfig struct {
	Size         int       // grating image side, px; 0 means 32
	Wavelengths  []float64 // grating wavelengths λ, px; nil means {4, 6, 8, 12}
	Orientations int       // directions θ equally spaced in [0, π); 0 means 8
	Phases       int       // phases φ equally spaced in [0, 2π); 0 means 16, must be a multiple of 4
	Contrast     float64   // Michelson contrast in (0,1]; 0 means 1
	Shift        int       // translation for ShiftCorr, px along x; 0 means 1
}

func (c InvarianceConfig) withDefaults() InvarianceConfig {
	if c.Size == 0 {
		c.Size = 32
	}
	if c.Wavelengths == nil {
		c.Wavelengths = []float64{4, 6, 8, 12}
	}
	if c.Orientations == 0 {
		c.Orientations = 8
	}
	if c.Phases == 0 {
		c.Phases = 16
	}
	if c.Contrast == 0 {
		c.Contrast = 1
	}
	if c.Shift == 0 {
		c.Shift = 1
	}
	return c
}

func (c InvarianceConfig) validate() error {
	if c.Size < 8 || c.Size > 1024 {
		return fmt.Errorf("eval: invariance grating size %d px; want 8 to 1024", c.Size)
	}
	for _, l := range c.Wavelengths {
		if !(l >= 2) || l > float64(c.Size) {
			return fmt.Errorf("eval: invariance wavelength %v px; want 2 (Nyquist) to the grating size %d", l, c.Size)
		}
	}
	if len(c.Wavelengths) == 0 {
		return fmt.Errorf("eval: invariance needs at least one wavelength")
	}
	if c.Orientations < 1 || c.Orientations > 64 {
		return fmt.Errorf("eval: invariance with %d orientations; want 1 to 64", c.Orientations)
	}
	if c.Phases < 4 || c.Phases%4 != 0 || c.Phases > 64 {
		return fmt.Errorf("eval: invariance with %d phases; want a multiple of 4 from 4 to 64 (so a quarter cycle is a whole step)", c.Phases)
	}
	if !(c.Contrast > 0 && c.Contrast <= 1) {
		return fmt.Errorf("eval: invariance contrast %v; want (0,1]", c.Contrast)
	}
	if c.Shift < 1 || c.Shift >= c.Size/2 {
		return fmt.Errorf("eval: invariance shift %d px; want 1 to %d", c.Shift, c.Size/2-1)
	}
	return nil
}

// ChannelInvariance describes how one channel's response changes when a
// grating is moved.
type ChannelInvariance struct {
	Channel int `json:"channel"`
	// PhaseCorr is the Pearson correlation, over all gratings and phases,
	// between the channel's centre response to a grating at phase φ and at
	// φ + π/2. A linear (simple) cell gives 0, a quadrature-energy (complex)
	// cell 1.
	PhaseCorr float64 `json:"phase_corr"`
	// ShiftCorr is the Pearson correlation, over all gratings, phases and
	// map positions, between the channel's maps for a grating and for the
	// same grating translated by Shift px: position tolerance of the map.
	ShiftCorr float64 `json:"shift_corr"`
	// Modulation is F1/F0 of the centre response over one cycle of phase at
	// the preferred grating (Skottun et al. 1991: simple cells > 1, complex
	// cells < 1). F0 is the mean response, F1 the amplitude of its first
	// harmonic; capped at MaxModulation when F0 ≈ 0 (linear cells).
	Modulation      float64 `json:"modulation"`
	PrefOrientation float64 `json:"pref_orientation"` // θ of the preferred grating, radians
	PrefWavelength  float64 `json:"pref_wavelength"`  // λ of the preferred grating, px
	Silent          bool    `json:"silent"`           // no response to any grating; correlations set to 0
}

// MaxModulation caps F1/F0: a linear cell's mean response to a full cycle
// is zero, so its ratio is unbounded; 100 is far above the 1.0 boundary and
// keeps the value finite for JSON.
const MaxModulation = 100

// Invariance probes each channel of f with full-field sinusoidal gratings
//
//	I(x, y) = ½ + ½·C·cos(2π/λ·(x cos θ + y sin θ) + φ)
//
// (x right and y up from the image centre, the angle convention of
// v1layer.Channel) over the configured wavelengths, orientations and
// phases, and returns one ChannelInvariance per output channel. The centre
// response is the map value at row H/2, column W/2.
func Invariance(f MapsFunc, cfg InvarianceConfig) ([]ChannelInvariance, error) {
	cfg = cfg.withDefaults()
	if err := cfg.validate(); err != nil {
		return nil, err
	}
	s := cfg.Size
	img := make([]float32, s*s)
	var m v1layer.Maps
	var base []float32
	nTh, nL, nP := cfg.Orientations, len(cfg.Wavelengths), cfg.Phases
	nStim := nTh * nL * nP
	// centre[c][stim] and the full maps for the unshifted and shifted images.
	var centre [][]float64
	var shiftSums []corrSums
	var C, plane int
	stim := 0
	for ti := range nTh {
		th := math.Pi * float64(ti) / float64(nTh)
		for _, lam := range cfg.Wavelengths {
			for pi := range nP {
				ph := 2 * math.Pi * float64(pi) / float64(nP)
				grating(img, s, th, lam, ph, 0, cfg.Contrast)
				f(&m, img, s, s)
				if stim == 0 {
					C, plane = m.C, m.H*m.W
					if C < 1 || plane < 1 || len(m.Pix) != C*plane {
						return nil, fmt.Errorf("eval: invariance: extractor returned maps %d×%d×%d with %d values", m.C, m.H, m.W, len(m.Pix))
					}
					centre = make([][]float64, C)
					shiftSums = make([]corrSums, C)
					for c := range C {
						centre[c] = make([]float64, nStim)
					}
				} else if m.C != C || m.H*m.W != plane {
					return nil, fmt.Errorf("eval: invariance: extractor changed its output shape to %d×%d×%d", m.C, m.H, m.W)
				}
				ci := (m.H/2)*m.W + m.W/2
				for c := range C {
					centre[c][stim] = float64(m.Pix[c*plane+ci])
				}
				unshifted := append(base[:0], m.Pix...)
				base = unshifted
				grating(img, s, th, lam, ph, float64(cfg.Shift), cfg.Contrast)
				f(&m, img, s, s)
				if m.C != C || m.H*m.W != plane {
					return nil, fmt.Errorf("eval: invariance: extractor changed its output shape to %d×%d×%d", m.C, m.H, m.W)
				}
				for c := range C {
					shiftSums[c].add(unshifted[c*plane:(c+1)*plane], m.Pix[c*plane:(c+1)*plane])
				}
				stim++
			}
		}
	}
	out := make([]ChannelInvariance, C)
	q := nP / 4 // a quarter cycle in phase steps
	a := make([]float64, 0, nStim)
	b := make([]float64, 0, nStim)
	for c := range C {
		r := centre[c]
		a, b = a[:0], b[:0]
		best, bestV := 0, math.Inf(-1)
		for g := 0; g < nTh*nL; g++ {
			for p := range nP {
				a = append(a, r[g*nP+p])
				b = append(b, r[g*nP+(p+q)%nP])
				if v := r[g*nP+p]; v > bestV {
					best, bestV = g, v
				}
			}
		}
		ci := ChannelInvariance{Channel: c}
		pc, okP := pearson(a, b)
		sc, okS := shiftSums[c].corr()
		if !okP && !okS {
			ci.Silent = true
		}
		ci.PhaseCorr, ci.ShiftCorr = pc, sc
		ci.PrefOrientation = math.Pi * float64(best/nL) / float64(nTh)
		ci.PrefWavelength = cfg.Wavelengths[best%nL]
		ci.Modulation = modulation(r[best*nP : (best+1)*nP])
		out[c] = ci
	}
	return out, nil
}

// grating writes the sinusoid described at Invariance, translated by dx px
// to the right.
func grating(dst []float32, s int, th, lam, ph, dx, contrast float64) {
	c := float64(s-1) / 2
	k := 2 * math.Pi / lam
	ct, st := math.Cos(th), math.Sin(th)
	for y := range s {
		yy := c - float64(y) // y up
		for x := range s {
			xx := float64(x) - c - dx
			dst[y*s+x] = float32(0.5 + 0.5*contrast*math.Cos(k*(xx*ct+yy*st)+ph))
		}
	}
}

// modulation returns F1/F0 of r sampled at equally spaced phases over one
// cycle: F0 = mean, F1 = (2/N)|Σ r_j e^{−i2πj/N}|.
func modulation(r []float64) float64 {
	var f0, re, im float64
	n := float64(len(r))
	for j, v := range r {
		a := 2 * math.Pi * float64(j) / n
		f0 += v
		re += v * math.Cos(a)
		im -= v * math.Sin(a)
	}
	f0 /= n
	f1 := 2 / n * math.Hypot(re, im)
	if f1 == 0 {
		return 0
	}
	if math.Abs(f0) < f1/MaxModulation {
		return MaxModulation
	}
	return f1 / math.Abs(f0)
}

// pearson returns the correlation of a and b; ok is false (and the result 0)
// when either has (near) zero variance.
func pearson(a, b []float64) (float64, bool) {
	n := float64(len(a))
	var ma, mb float64
	for i := range a {
		ma += a[i]
		mb += b[i]
	}
	ma /= n
	mb /= n
	var sab, saa, sbb float64
	for i := range a {
		da, db := a[i]-ma, b[i]-mb
		sab += da * db
		saa += da * da
		sbb += db * db
	}
	// Variance below 1e-20 relative to the squared mean is float32 round-off
	// of a constant response.
	scale := (ma*ma + mb*mb + 1e-30) * n * 1e-20
	if saa <= scale || sbb <= scale {
		return 0, false
	}
	return sab / math.Sqrt(saa*sbb), true
}

// corrSums accumulates the sums behind a Pearson correlation in one pass,
// so the probe never holds every map at once. Responses are bounded
// (gratings in [0,1] through a fixed front end), so the textbook one-pass
// formula in float64 loses nothing that matters here.
type corrSums struct {
	n, a, b, ab, aa, bb float64
}

func (s *corrSums) add(x, y []float32) {
	for i := range x {
		a, b := float64(x[i]), float64(y[i])
		s.n++
		s.a += a
		s.b += b
		s.ab += a * b
		s.aa += a * a
		s.bb += b * b
	}
}

func (s *corrSums) corr() (float64, bool) {
	if s.n == 0 {
		return 0, false
	}
	ma, mb := s.a/s.n, s.b/s.n
	saa := s.aa - s.n*ma*ma
	sbb := s.bb - s.n*mb*mb
	sab := s.ab - s.n*ma*mb
	// One-pass variances of a constant carry round-off of about 1e-12 of the
	// squared mean (float64 sums of up to ~10⁷ float32 values).
	scale := (ma*ma + mb*mb + 1e-30) * s.n * 1e-10
	if saa <= scale || sbb <= scale {
		return 0, false
	}
	return max(-1, min(1, sab/math.Sqrt(saa*sbb))), true
}
