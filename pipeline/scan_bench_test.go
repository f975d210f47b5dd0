package pipeline_test

import (
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// BenchmarkScan scans 256×256 textured-belt frames holding five items and
// four lint fragments, on one worker, with the tiny shape recogniser of the
// tests (the recogniser's share grows with a larger model: each item costs
// 3-6 PredictBatch windows).
func BenchmarkScan(b *testing.B) {
	b.Run("256x256-5items", func(b *testing.B) {
		s, err := pipeline.NewScanner(shapeModel(b), pipeline.ScanConfig{})
		if err != nil {
			b.Fatal(err)
		}
		scenes := shapeScenes(b, 14, 8, datasets.SceneConfig{W: 256, H: 256, MinItems: 5, MaxItems: 5,
			Background: datasets.Texture, Lint: 4, Seed: 1})
		var res pipeline.ScanResult
		items := 0
		b.ReportAllocs()
		b.SetBytes(256 * 256 * 4)
		b.ResetTimer()
		for i := 0; b.Loop(); i++ {
			sc := &scenes[i%len(scenes)]
			if err := s.Scan(&res, sc.Pix, sc.H, sc.W, 1); err != nil {
				b.Fatal(err)
			}
			items += len(res.Items)
		}
		b.ReportMetric(float64(items)/float64(b.N), "items/frame")
	})
}
