package learn

import (
	"fmt"
	"math"
	"sort"
	"sync"

	"github.com/striate/striate/v1layer"
)

// BankConfig sets how LearnedBank turns atoms into kernels and pairs them.
// The zero value pairs atoms whose fits have R² ≥ 0.5, orientations within
// 15°, wavelengths within 25%, phases 90° ± 30° apart and centres no
// farther apart than the larger envelope σx; one worker.
type BankConfig struct {
	PairMinR2        float64 `json:"pair_min_r2"`        // 0 means 0.5
	PairOrientation  float64 `json:"pair_orientation"`   // radians; 0 means 15°
	PairWavelength   float64 `json:"pair_wavelength"`    // relative; 0 means 0.25
	PairPhase        float64 `json:"pair_phase"`         // radians from π/2; 0 means 30°
	PairCentreSigmas float64 `json:"pair_centre_sigmas"` // 0 means 1
	Workers          int     `json:"workers,omitempty"`  // goroutines for the fits; 0 means 1 (run-time: omitted from JSON when 0)
}

func (c BankConfig) withDefaults() BankConfig {
	if c.PairMinR2 == 0 {
		c.PairMinR2 = 0.5
	}
	if c.PairOrientation == 0 {
		c.PairOrientation = 15 * math.Pi / 180
	}
	if c.PairWavelength == 0 {
		c.PairWavelength = 0.25
	}
	if c.PairPhase == 0 {
		c.PairPhase = 30 * math.Pi / 180
	}
	if c.PairCentreSigmas == 0 {
		c.PairCentreSigmas = 1
	}
	if c.Workers <= 0 {
		c.Workers = 1
	}
	return c
}

// GaborLikeR2 is the fit quality above which an atom counts as Gabor-like
// in BankReport (the threshold of the bench protocol, R² ≥ 0.8).
const GaborLikeR2 = 0.8

// BankReport describes a learned bank: the Gabor fit of every atom (in
// dictionary order, which is also kernel order) and summary figures.
// Medians and quadrant counts are over the Gabor-like atoms (R² ≥
// GaborLikeR2); a low-pass fit has an infinite octave bandwidth and counts
// as the largest value in the median.
type BankReport struct {
	Fits                       []GaborFit
	Pairs                      int     // quadrature pairs formed
	Unpaired                   int     // atoms left to rectification
	GaborLike                  int     // atoms with R² ≥ GaborLikeR2
	FracGaborLike              float64 // GaborLike / atoms
	MedianR2                   float64 // over all atoms
	MedianFreqBandwidth        float64 // octaves
	MedianOrientationBandwidth float64 // degrees
	Quadrants                  [4]int  // orientations in [0,45), [45,90), [90,135), [135,180) degrees
}

// LearnedBank fits a 2-D Gabor to every atom of d (atoms must be square
// patches, Dim = s²) and returns them as a v1layer bank plus the report.
//
// Kernels: an odd s is used as is; an even s is embedded in an (s+1)×(s+1)
// kernel, shifted by the half pixel that brings the fitted centre nearer the
// kernel centre. Each kernel has unit L2 norm (as the atom), Meta.Kind
// KindLearned, Orientation/Phase/Wavelength from the fit, Sigma = σx (across
// the stripes), Aspect = σx/σy and FitR2. Atoms act on whitened input; in a
// front end the DoG retina plays the part of the whitening.
//
// Pairing rule: atoms i, j are quadrature candidates when both fits have
// R² ≥ PairMinR2, their orientations differ by at most PairOrientation
// (modulo π), their wavelengths by at most the fraction PairWavelength,
// their phases are π/2 ± PairPhase apart (modulo π, after negating one
// phase when the carrier directions are antiparallel), and their centres are
// at most PairCentreSigmas·max(σx_i, σx_j) apart. Candidates are taken
// greedily by ascending cost (the sum of each deviation divided by its
// tolerance), each atom at most once; Meta.Pair names the partner. Unpaired
// atoms get Pair = −1, and v1layer rectifies them (half-wave, both signs).
func LearnedBank(d *Dictionary, cfg BankConfig) (*v1layer.Bank, *BankReport, error) {
	if d == nil {
		return nil, nil, fmt.Errorf("learn: LearnedBank needs a dictionary; got nil")
	}
	cfg = cfg.withDefaults()
	s := int(math.Round(math.Sqrt(float64(d.dim))))
	if s*s != d.dim || s < 3 {
		return nil, nil, fmt.Errorf("learn: LearnedBank needs square atoms of side ≥ 3; dimension %d is not a square", d.dim)
	}
	k := d.k
	fits := make([]GaborFit, k)
	var wg sync.WaitGroup
	next := make(chan int, k)
	for j := 0; j < k; j++ {
		next <- j
	}
	close(next)
	for w := 0; w < min(cfg.Workers, k); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			f := newGaborFitter(s)
			for j := range next {
				fits[j] = f.fit(d.w[j*d.dim : (j+1)*d.dim])
			}
		}()
	}
	wg.Wait()

	pair := pairAtoms(fits, cfg)
	ks := s
	if s%2 == 0 {
		ks = s + 1
	}
	bank := &v1layer.Bank{Kernels: make([]v1layer.Kernel, k)}
	for j := 0; j < k; j++ {
		f := fits[j]
		w := make([]float32, ks*ks)
		ox, oy := 0, 0
		if ks != s {
			// kernel-centre offset of the fitted centre is X0+ox−½ (columns)
			// and −Y0+oy−½ (rows); pick the shift that makes it smaller.
			if f.X0 <= 0 {
				ox = 1
			}
			if f.Y0 >= 0 {
				oy = 1
			}
		}
		atom := d.w[j*d.dim : (j+1)*d.dim]
		for r := 0; r < s; r++ {
			copy(w[(r+oy)*ks+ox:(r+oy)*ks+ox+s], atom[r*s:(r+1)*s])
		}
		wl := f.Wavelength
		if math.IsInf(wl, 0) {
			wl = 0 // a pure blob has no carrier
		}
		bank.Kernels[j] = v1layer.Kernel{Size: ks, W: w, Meta: v1layer.Channel{
			Kind: v1layer.KindLearned, Orientation: f.Orientation, Phase: f.Phase, Wavelength: wl,
			Sigma: f.SigmaX, Aspect: f.Aspect(), Pair: pair[j], FitR2: f.R2}}
	}
	if err := bank.Validate(); err != nil {
		return nil, nil, fmt.Errorf("learn: learned bank invalid: %w", err)
	}
	return bank, summarise(fits, pair), nil
}

func pairAtoms(fits []GaborFit, cfg BankConfig) []int {
	type cand struct {
		i, j int
		cost float64
	}
	var cands []cand
	for i := range fits {
		a := fits[i]
		if a.R2 < cfg.PairMinR2 || math.IsInf(a.Wavelength, 0) {
			continue
		}
		for j := i + 1; j < len(fits); j++ {
			b := fits[j]
			if b.R2 < cfg.PairMinR2 || math.IsInf(b.Wavelength, 0) {
				continue
			}
			dth := math.Abs(a.Orientation - b.Orientation) // both in [0, π)
			psiB := b.Phase
			if dth > math.Pi/2 { // antiparallel carriers: x' flips, ψ negates
				dth = math.Pi - dth
				psiB = -psiB
			}
			dwl := math.Abs(a.Wavelength/b.Wavelength - 1)
			dpsi := math.Abs(math.Abs(math.Remainder(a.Phase-psiB, math.Pi)) - math.Pi/2)
			dc := math.Hypot(a.X0-b.X0, a.Y0-b.Y0) / math.Max(a.SigmaX, b.SigmaX)
			if dth > cfg.PairOrientation || dwl > cfg.PairWavelength || dpsi > cfg.PairPhase || dc > cfg.PairCentreSigmas {
				continue
			}
			cost := dth/cfg.PairOrientation + dwl/cfg.PairWavelength + dpsi/cfg.PairPhase + dc/cfg.PairCentreSigmas
			cands = append(cands, cand{i, j, cost})
		}
	}
	sort.Slice(cands, func(x, y int) bool {
		if cands[x].cost != cands[y].cost {
			return cands[x].cost < cands[y].cost
		}
		if cands[x].i != cands[y].i {
			return cands[x].i < cands[y].i
		}
		return cands[x].j < cands[y].j
	})
	pair := make([]int, len(fits))
	for i := range pair {
		pair[i] = -1
	}
	for _, c := range cands {
		if pair[c.i] == -1 && pair[c.j] == -1 {
			pair[c.i], pair[c.j] = c.j, c.i
		}
	}
	return pair
}

func summarise(fits []GaborFit, pair []int) *BankReport {
	r := &BankReport{Fits: fits}
	var r2s, fb, ob []float64
	for i, f := range fits {
		r2s = append(r2s, f.R2)
		if pair[i] >= 0 {
			if pair[i] > i {
				r.Pairs++
			}
		} else {
			r.Unpaired++
		}
		if f.R2 < GaborLikeR2 {
			continue
		}
		r.GaborLike++
		fb = append(fb, f.FreqBandwidth())
		if !math.IsInf(f.Wavelength, 0) {
			ob = append(ob, f.OrientationBandwidth())
		} else {
			ob = append(ob, math.Inf(1))
		}
		deg := f.Orientation * 180 / math.Pi
		r.Quadrants[min(3, max(0, int(deg/45)))]++
	}
	r.FracGaborLike = float64(r.GaborLike) / float64(len(fits))
	r.MedianR2 = median(r2s)
	r.MedianFreqBandwidth = median(fb)
	r.MedianOrientationBandwidth = median(ob)
	return r
}

// median returns the median of v (NaN for none); v is reordered.
func median(v []float64) float64 {
	if len(v) == 0 {
		return math.NaN()
	}
	sort.Float64s(v)
	n := len(v)
	if n%2 == 1 {
		return v[n/2]
	}
	a, b := v[n/2-1], v[n/2]
	if math.IsInf(a, 1) || math.IsInf(b, 1) {
		return math.Max(a, b)
	}
	return (a + b) / 2
}
