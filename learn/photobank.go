package learn

import (
	"fmt"
	"math"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/v1layer"
)

// Whitening recipes of PhotoBankConfig.Whiten.
const (
	// WhitenZCA whitens the sampled patches: remove each patch's mean, then
	// W = U·diag(1/sqrt(λ_i + ε))·Uᵀ fitted on them (datasets.FitZCA).
	WhitenZCA = "zca"
	// WhitenOF filters the photos with Olshausen & Field's (1996) whitening
	// and low-pass filter f·exp(−(f/f0)⁴) (datasets.WhitenPhotos) before
	// sampling, then removes each patch's mean and scales all patches to
	// unit pixel variance, so that λ means the same for any photo set.
	WhitenOF = "of"
)

// ofBorder is the margin, in pixels, kept clear of the photo edges when
// sampling after WhitenOF: the periodic filter leaves artefacts there.
const ofBorder = 8

// PhotoBankConfig is the whole recipe from photographs to a learned bank:
// sample patches, whiten them, learn a dictionary by sparse coding
// (DictConfig.Fit) and turn its atoms into front-end kernels
// (LearnedBank). The zero value means the defaults beside each field.
type PhotoBankConfig struct {
	PatchSize int     // patch (and atom) side in pixels; 0 means 8. Range [3, 32].
	Patches   int     // patches sampled (seeded, uniform over photos and positions); 0 means 20000
	Whiten    string  // WhitenZCA (default) or WhitenOF
	ZCAEps    float64 // ε of WhitenZCA in squared [0,1] pixel units; 0 means 1e-3
	F0        float64 // cut-off of WhitenOF in cycles/pixel; 0 means 0.25
	// Dict configures the dictionary; Dict.Seed 0 means the seed passed to
	// Learn, Dict.Workers 0 means its workers.
	Dict DictConfig
	// Bank configures the quadrature pairing; Bank.Workers 0 means the
	// workers passed to Learn.
	Bank BankConfig
}

func (c PhotoBankConfig) resolved(seed uint64, workers int) (PhotoBankConfig, error) {
	if c.PatchSize == 0 {
		c.PatchSize = 8
	}
	if c.Patches == 0 {
		c.Patches = 20000
	}
	if c.Whiten == "" {
		c.Whiten = WhitenZCA
	}
	if c.ZCAEps == 0 {
		c.ZCAEps = 1e-3
	}
	if c.F0 == 0 {
		c.F0 = 0.25
	}
	if c.Dict.Seed == 0 {
		c.Dict.Seed = seed
	}
	if c.Dict.Workers == 0 {
		c.Dict.Workers = max(1, workers)
	}
	if c.Bank.Workers == 0 {
		c.Bank.Workers = max(1, workers)
	}
	switch {
	case c.PatchSize < 3 || c.PatchSize > 32:
		return c, fmt.Errorf("learn: PhotoBankConfig.PatchSize %d; want [3, 32] (0 means 8)", c.PatchSize)
	case c.Patches < 1:
		return c, fmt.Errorf("learn: PhotoBankConfig.Patches %d; want ≥ 1 (0 means 20000)", c.Patches)
	case c.Whiten != WhitenZCA && c.Whiten != WhitenOF:
		return c, fmt.Errorf("learn: PhotoBankConfig.Whiten %q; want %q (default) or %q", c.Whiten, WhitenZCA, WhitenOF)
	case !(c.ZCAEps > 0):
		return c, fmt.Errorf("learn: PhotoBankConfig.ZCAEps %g; want > 0 (0 means 1e-3)", c.ZCAEps)
	case !(c.F0 > 0 && c.F0 <= 0.5):
		return c, fmt.Errorf("learn: PhotoBankConfig.F0 %g; want (0, 0.5] cycles/pixel (0 means 0.25)", c.F0)
	}
	return c, nil
}

// PhotoBank is what Learn returns: the bank, the Gabor-fit report of its
// atoms and the dictionary they came from.
type PhotoBank struct {
	Bank   *v1layer.Bank
	Report *BankReport
	Dict   *Dictionary
}

// Learn runs the recipe on photos (grey, [0,1]; datasets.Photos() is the
// embedded set) with the given seed and workers; progress (nil is silent)
// sees the dictionary-learning steps.
func (c PhotoBankConfig) Learn(photos []datasets.Photo, seed uint64, workers int, progress Progress) (*PhotoBank, error) {
	c, err := c.resolved(seed, workers)
	if err != nil {
		return nil, err
	}
	border := 0
	if c.Whiten == WhitenOF {
		photos = datasets.WhitenPhotos(photos, c.F0)
		border = ofBorder
	}
	p, err := datasets.SamplePatches(photos, datasets.PatchConfig{Size: c.PatchSize, Count: c.Patches, Seed: seed, Border: border})
	if err != nil {
		return nil, fmt.Errorf("learn: photo bank: %w", err)
	}
	p.RemoveMean()
	if c.Whiten == WhitenOF {
		var ss float64
		for _, v := range p.Pix {
			ss += float64(v) * float64(v)
		}
		if ss == 0 {
			return nil, fmt.Errorf("learn: photo bank: the whitened patches are all zero; use photos with some texture")
		}
		s := float32(1 / math.Sqrt(ss/float64(len(p.Pix))))
		for i := range p.Pix {
			p.Pix[i] *= s
		}
	} else {
		z, err := datasets.FitZCA(p, c.ZCAEps)
		if err != nil {
			return nil, fmt.Errorf("learn: photo bank: %w", err)
		}
		z.Apply(p)
	}
	d, err := c.Dict.Fit(p.Pix, c.PatchSize*c.PatchSize, progress)
	if err != nil {
		return nil, fmt.Errorf("learn: photo bank: %w", err)
	}
	bank, rep, err := LearnedBank(d, c.Bank)
	if err != nil {
		return nil, fmt.Errorf("learn: photo bank: %w", err)
	}
	return &PhotoBank{Bank: bank, Report: rep, Dict: d}, nil
}
