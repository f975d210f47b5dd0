package eval

import (
	"encoding/json"
	"path/filepath"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/internal/safefile"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
)

// LoadMainJobData loads the published training and test splits of
// Fashion-MNIST from fashionDir and of MNIST from mnistDir ("" means each
// loader's default: datasets.LoadFashionMNIST, datasets.LoadMNIST).
func LoadMainJobData(fashionDir, mnistDir string) (*MainJobData, error) {
	var d MainJobData
	var err error
	if d.FashionTrain, err = datasets.LoadFashionMNIST(datasets.Train, fashionDir); err != nil {
		return nil, err
	}
	if d.FashionTest, err = datasets.LoadFashionMNIST(datasets.Test, fashionDir); err != nil {
		return nil, err
	}
	if d.MNISTTrain, err = datasets.LoadMNIST(datasets.Train, mnistDir); err != nil {
		return nil, err
	}
	if d.MNISTTest, err = datasets.LoadMNIST(datasets.Test, mnistDir); err != nil {
		return nil, err
	}
	return &d, nil
}

// SetSummary describes one split: its size and its smallest and largest
// class (the first of several on ties).
type SetSummary struct {
	Set                 *datasets.Set
	Split               string // "train" or "test"
	Smallest, Largest   string
	SmallestN, LargestN int
}

// Summaries describes the four splits, Fashion-MNIST's first.
func (d *MainJobData) Summaries() []SetSummary {
	var out []SetSummary
	for _, r := range []struct {
		split string
		s     *datasets.Set
	}{
		{"train", d.FashionTrain}, {"test", d.FashionTest}, {"train", d.MNISTTrain}, {"test", d.MNISTTest},
	} {
		counts := r.s.ClassCounts()
		lo, hi := 0, 0
		for c := range counts {
			if counts[c] < counts[lo] {
				lo = c
			}
			if counts[c] > counts[hi] {
				hi = c
			}
		}
		out = append(out, SetSummary{Set: r.s, Split: r.split, Smallest: r.s.Classes[lo], SmallestN: counts[lo],
			Largest: r.s.Classes[hi], LargestN: counts[hi]})
	}
	return out
}

// MeanGrey is the mean pixel value of p, in [0,1].
func MeanGrey(p datasets.Photo) float64 {
	var sum float64
	for _, v := range p.Pix {
		sum += float64(v)
	}
	return sum / float64(len(p.Pix))
}

// LearnPhotoBank learns a simple-cell bank from the embedded photos
// (datasets.Photos) by cfg.Learn with seed and workers; mon counts the
// dictionary's minibatch steps (cfg.Dict.Epochs passes of
// ⌈cfg.Patches/cfg.Dict.BatchSize⌉ steps, both as given: the bar is only
// sized, not checked, by them).
func LearnPhotoBank(cfg learn.PhotoBankConfig, seed uint64, workers int, mon JobMonitor) (*learn.PhotoBank, error) {
	photos, err := datasets.Photos()
	if err != nil {
		return nil, err
	}
	steps := 0
	if b := cfg.Dict.BatchSize; b > 0 {
		steps = cfg.Dict.Epochs * ((cfg.Patches + b - 1) / b)
	}
	bar := mon.Start(steps, "learn")
	defer bar.Done()
	return cfg.Learn(photos, seed, workers, bar)
}

// Files WriteBankFiles writes.
const (
	BankJSON      = "bank.json"     // the learned bank (v1layer.Bank as JSON)
	BankConfig    = "config.json"   // the default pipeline on that bank, for "striate train --config"
	BankAtoms     = "atoms.png"     // the atoms as a mosaic (AtomMosaicPNG)
	BankHistogram = "bank_hist.png" // the Gabor-fit histograms (BankHistogramsPNG)
)

// WriteBankFiles writes a learned bank pb into dir: BankJSON, BankAtoms,
// BankConfig (pipeline.DefaultConfig with pb's bank in place of the hand-set
// Gabor bank, seeded with seed) and BankHistogram. A bank whose report
// cannot be drawn as histograms is written without them; histErr then says
// why.
func WriteBankFiles(dir string, pb *learn.PhotoBank, seed uint64) (histErr, err error) {
	bj, err := json.Marshal(pb.Bank)
	if err != nil {
		return nil, err
	}
	mosaic, err := AtomMosaicPNG(pb.Bank, 0, 4)
	if err != nil {
		return nil, err
	}
	pc := pipeline.DefaultConfig()
	pc.Front.Bank = pb.Bank
	pc.Front.Gabor.Disable = true
	pc.Seed = seed
	cj, err := pc.MarshalIndent()
	if err != nil {
		return nil, err
	}
	files := map[string][]byte{BankJSON: bj, BankAtoms: mosaic, BankConfig: cj}
	if hist, err := BankHistogramsPNG(pb.Report); err == nil {
		files[BankHistogram] = hist
	} else {
		histErr = err
	}
	for name, b := range files {
		if err := safefile.WriteBytes(filepath.Join(dir, name), b); err != nil {
			return histErr, err
		}
	}
	return histErr, nil
}
