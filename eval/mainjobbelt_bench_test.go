package eval

import (
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// BenchmarkBeltStep times the full main job's belt step on each dataset
// (beltSizesFor(false): 150 validation and 400 test frames) with the demo's
// hand-set model fitted on the quick job's subsets (the same architecture
// as the full job's, so the same cost per recognised window; a fit of the
// whole split would only take longer to set up):
//
//	GOEXPERIMENT=simd go test -run XXX -bench BeltStep -benchtime 1x ./eval
//
// It skips when the datasets are not installed.
func BenchmarkBeltStep(b *testing.B) {
	sz := sizesFor(true)
	for _, ds := range []struct {
		name, preset string
		load         func(datasets.Split, string) (*datasets.Set, error)
	}{{"fashion", "garments", datasets.LoadFashionMNIST}, {"mnist", "digits", datasets.LoadMNIST}} {
		b.Run(ds.name, func(b *testing.B) {
			train, err := ds.load(datasets.Train, "")
			if err != nil {
				b.Skipf("dataset not available: %v", err)
			}
			test, err := ds.load(datasets.Test, "")
			if err != nil {
				b.Skipf("dataset not available: %v", err)
			}
			c, err := demoConfig(nil, ds.preset)
			if err != nil {
				b.Fatal(err)
			}
			sz.shrink(&c)
			idx := datasets.PerClass(train.Labels, sz.trainPerClass, 0)
			m, err := pipeline.Fit(c, train.Subset(idx), pipeline.FitOptions{Workers: 2})
			if err != nil {
				b.Fatal(err)
			}
			val := unfitted(train, idx)
			b.ResetTimer()
			for b.Loop() {
				res, _, err := beltStep(m, "hand-set", val, test, beltSizesFor(false), "training images the fit left out", 0, 2, quietMonitor{})
				if err != nil {
					b.Fatal(err)
				}
				b.ReportMetric(res.Scores.MAP, "mAP")
			}
		})
	}
}
