package benchwork

import (
	"fmt"

	"github.com/striate/striate/datasets"
)

// The sparse-coding protocol of the shared reference work (its README §2)
// reads 100,000 16×16 patch positions (a 600 kB file) into eleven photos, two
// of which (motorcycle_left, motorcycle_right) have no licence stated and
// cannot ship. The protocol is regenerated instead from the nine
// licence-clear photos embedded in package datasets, so nothing needs to be
// embedded here: the same count, size, split, normalisation and whitening,
// at positions drawn by datasets.SamplePatches with SparseSeed.

// Sparse-coding protocol constants (shared reference work, README §2).
const (
	SparsePatches = 100000 // patches: the first SparseTrain train, the rest held out
	SparseTrain   = 90000
	SparseSize    = 16   // patch side in pixels
	SparseZCAEps  = 1e-3 // ZCA regulariser
	// SparseSeed is the datasets.SamplePatches seed of the regenerated
	// positions (a photo uniformly at random, then a position in it).
	SparseSeed = 2026
)

// SparseSet is the whitened protocol data: rows of SparseSize² float32.
type SparseSet struct {
	Train, Held []float32
	Dim         int
	Eigen       []float64 // eigenvalues of the training covariance the ZCA was fitted on
	Source      string    // how the patches were made
}

// Sparse regenerates the sparse-coding protocol on the embedded photos:
// SparsePatches patches of 16×16 (pixel/255) by datasets.SamplePatches with
// SparseSeed, each patch's mean removed, ZCA (ε = 1e-3, the training
// per-pixel mean removed) fitted on the first 90% and applied to all; the
// last 10% are held out. n > 0 and below SparsePatches takes n patches
// instead (for a quick run), split the same way.
func Sparse(n int) (*SparseSet, error) {
	if n <= 0 || n > SparsePatches {
		n = SparsePatches
	}
	photos, err := datasets.Photos()
	if err != nil {
		return nil, fmt.Errorf("benchwork: %v", err)
	}
	p, err := datasets.SamplePatches(photos, datasets.PatchConfig{Size: SparseSize, Count: n, Seed: SparseSeed})
	if err != nil {
		return nil, fmt.Errorf("benchwork: %v", err)
	}
	p.RemoveMean()
	d := SparseSize * SparseSize
	ntr := n * SparseTrain / SparsePatches
	train := &datasets.Patches{N: ntr, Size: SparseSize, Pix: p.Pix[:ntr*d]}
	held := &datasets.Patches{N: n - ntr, Size: SparseSize, Pix: p.Pix[ntr*d:]}
	z, err := datasets.FitZCA(train, SparseZCAEps)
	if err != nil {
		return nil, fmt.Errorf("benchwork: %v", err)
	}
	z.Apply(train)
	z.Apply(held)
	return &SparseSet{Train: train.Pix, Held: held.Pix, Dim: d, Eigen: z.Eigenvalues(),
		Source: fmt.Sprintf("%d patches of %d×%d from the %d embedded photos (datasets.SamplePatches, seed %d), ZCA ε %g on the first %d",
			n, SparseSize, SparseSize, len(photos), SparseSeed, SparseZCAEps, ntr)}, nil
}
