package pipeline

import (
	"fmt"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// LearnBankConfig makes Fit learn the front end's simple-cell bank from the
// natural photographs shipped with striate (datasets.Photos) by sparse
// coding, in place of the hand-set Gabor bank: patches are cut, each
// patch's mean removed, ZCA-whitened, a dictionary is learned
// (learn.DictConfig) and its atoms become kernels with Gabor-fit metadata
// (learn.LearnedBank). No image of the training set is used, labelled or not.
// Every zero field means the default beside it.
type LearnBankConfig struct {
	// PatchSize is the patch (and atom) side in pixels; 0 means 8. Range [4, 16].
	PatchSize int `json:"patch_size,omitempty"`
	// Patches is the number of photo patches; 0 means 20000.
	Patches int `json:"patches,omitempty"`
	// ZCAEps is the whitening ε (pixels in [0,1]); 0 means 1e-3, the value
	// of the front-end bench protocol (DEVELOPERS.md, Benchmarks).
	ZCAEps float64 `json:"zca_eps,omitempty"`
	// Dict configures dictionary learning; Dict.Atoms 0 means 24 here (not
	// learn's 256: each atom becomes one or two front-end channels), and
	// Dict.Seed 0 means a seed derived from Config.Seed. Its run-time
	// fields (workers, coder.workers, checkpoint_every, OnCheckpoint) must
	// stay zero: FitOptions.Workers sets the goroutines.
	Dict learn.DictConfig `json:"dict"`
	// Bank sets the quadrature pairing of atoms (learn.BankConfig); its
	// Workers must stay zero (FitOptions.Workers sets it).
	Bank learn.BankConfig `json:"bank"`
}

func (c LearnBankConfig) withDefaults() LearnBankConfig {
	orDefault(&c.PatchSize, 8)
	orDefault(&c.Patches, 20000)
	orDefault(&c.ZCAEps, 1e-3)
	orDefault(&c.Dict.Atoms, 24)
	return c
}

func (c LearnBankConfig) validate() error {
	if err := noRunOptions("learn_bank.dict", c.Dict); err != nil {
		return err
	}
	if c.Bank.Workers != 0 {
		return fmt.Errorf("pipeline: learn_bank.bank.workers %d: the number of goroutines is a run-time option, not part of a model; leave it 0 and set FitOptions.Workers", c.Bank.Workers)
	}
	if err := c.Dict.Validate(); err != nil {
		return learnErr("learn_bank.dict", err)
	}
	if c.PatchSize < 4 || c.PatchSize > 16 {
		return fmt.Errorf("pipeline: learn_bank.patch_size %d; want [4, 16] (0 means 8)", c.PatchSize)
	}
	if c.Patches < c.Dict.Atoms || c.Patches > 1<<20 {
		return fmt.Errorf("pipeline: learn_bank.patches %d; want [dict.atoms = %d, %d] (0 means 20000)", c.Patches, c.Dict.Atoms, 1<<20)
	}
	if !(c.ZCAEps > 0) {
		return fmt.Errorf("pipeline: learn_bank.zca_eps %g; want > 0 (0 means 1e-3)", c.ZCAEps)
	}
	return nil
}

// learnBank runs the bank-learning recipe of c (learn.PhotoBankConfig with
// ZCA whitening, on the embedded photos) and returns the bank and its
// report. workers is used for dictionary learning and the Gabor fits.
func learnBank(c LearnBankConfig, seed uint64, workers int, prog learn.Progress) (*v1layer.Bank, *learn.BankReport, error) {
	photos, err := datasets.Photos()
	if err != nil {
		return nil, nil, fmt.Errorf("pipeline: learning a bank: %w", err)
	}
	pc := learn.PhotoBankConfig{PatchSize: c.PatchSize, Patches: c.Patches, Whiten: learn.WhitenZCA, ZCAEps: c.ZCAEps,
		Dict: c.Dict, Bank: c.Bank}
	pb, err := pc.Learn(photos, seed, workers, prefixed{prog, "bank: "})
	if err != nil {
		return nil, nil, fmt.Errorf("pipeline: learning a bank: %w", err)
	}
	return pb.Bank, pb.Report, nil
}
