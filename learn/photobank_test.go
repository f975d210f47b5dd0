package learn

import (
	"math"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// TestPhotoBankRecipe runs both whitening recipes on the embedded photos at
// a small size. Checks: one kernel per atom (odd size: an even atom side is
// padded by one, as LearnedBank documents), each kernel zero-mean to float32
// rounding (the patches had their means removed, so every atom, a
// combination of them, lies in the zero-mean subspace — common practice of
// sparse-coding setups since Olshausen & Field 1996), the same seed giving
// the same bank, and a different seed a different one.
func TestPhotoBankRecipe(t *testing.T) {
	photos, err := datasets.Photos()
	if err != nil {
		t.Fatal(err)
	}
	for _, wh := range []string{WhitenZCA, WhitenOF} {
		cfg := PhotoBankConfig{PatchSize: 8, Patches: 2000, Whiten: wh, Dict: DictConfig{Atoms: 12, Epochs: 2, Lambda: 0.5}}
		a, err := cfg.Learn(photos, 5, 2, nil)
		if err != nil {
			t.Fatalf("%s: %v", wh, err)
		}
		if len(a.Bank.Kernels) != 12 || len(a.Report.Fits) != 12 {
			t.Fatalf("%s: %d kernels, %d fits; want 12 of each", wh, len(a.Bank.Kernels), len(a.Report.Fits))
		}
		for i, k := range a.Bank.Kernels {
			if k.Size != 9 {
				t.Fatalf("%s: kernel %d has size %d, want 9", wh, i, k.Size)
			}
			var s, ss float64
			for _, v := range k.W {
				s += float64(v)
				ss += float64(v) * float64(v)
			}
			// meanTol: float32 atoms of 64 unit-scale values, and the half-pixel
			// shift of the even-to-odd padding, which keeps the sum.
			const meanTol = 1e-4
			if math.Abs(s) > meanTol*math.Sqrt(ss)*float64(len(k.W)) {
				t.Errorf("%s: kernel %d sums to %g (norm %g); want ≈ 0", wh, i, s, math.Sqrt(ss))
			}
		}
		b, err := cfg.Learn(photos, 5, 1, nil)
		if err != nil {
			t.Fatal(err)
		}
		c, err := cfg.Learn(photos, 6, 2, nil)
		if err != nil {
			t.Fatal(err)
		}
		same, differ := true, false
		for i := range a.Bank.Kernels {
			for j, v := range a.Bank.Kernels[i].W {
				if b.Bank.Kernels[i].W[j] != v {
					same = false
				}
				if c.Bank.Kernels[i].W[j] != v {
					differ = true
				}
			}
		}
		if !same {
			t.Errorf("%s: the same seed with 1 and 2 workers gave different banks", wh)
		}
		if !differ {
			t.Errorf("%s: seeds 5 and 6 gave the same bank", wh)
		}
	}
}

func TestPhotoBankErrors(t *testing.T) {
	photos, err := datasets.Photos()
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		cfg  PhotoBankConfig
		want string
	}{
		{PhotoBankConfig{PatchSize: 2}, "PatchSize 2"},
		{PhotoBankConfig{Patches: -1}, "Patches -1"},
		{PhotoBankConfig{Whiten: "pca"}, `Whiten "pca"`},
		{PhotoBankConfig{ZCAEps: -1}, "ZCAEps -1"},
		{PhotoBankConfig{F0: 0.9}, "F0 0.9"},
	} {
		_, err := c.cfg.Learn(photos, 1, 1, nil)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one naming %q", c.cfg, err, c.want)
		}
	}
}
