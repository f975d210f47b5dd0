package learn

import (
	"fmt"
	"testing"
)

var sinkFeatures []float32

// BenchmarkTemplatesEncode times Encode on maps of the default front end's
// shape for a 28×28 image (12 channels × 14×14), one goroutine:
//
//	go test -run XXX -bench TemplatesEncode ./learn
func BenchmarkTemplatesEncode(b *testing.B) {
	maps := randomMaps(200, 12, 14, 14, 1)
	for _, c := range []TemplateConfig{
		{K: 64, PatchSize: 5, Grids: []int{1, 2}},
		{K: 128, PatchSize: 5, Grids: []int{1, 2}},
		{K: 128, PatchSize: 5, Grids: []int{1, 2}, Scales: []float64{1, 0.75}},
		{K: 128, PatchSize: 5, Grids: []int{1, 2}, Encoder: EncodeTriangle},
	} {
		c.Patches, c.Iters, c.Seed = 5000, 5, 1
		tm, _, err := c.Fit(maps, nil)
		if err != nil {
			b.Fatal(err)
		}
		name := fmt.Sprintf("%s-K%d-p%d-scales%d/12x14x14", tm.Config().Encoder, c.K, c.PatchSize, len(tm.Config().Scales))
		b.Run(name, func(b *testing.B) {
			var dst []float32
			m := &maps[0]
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				dst = tm.Encode(dst, m)
			}
			sinkFeatures = dst
			b.ReportMetric(float64(b.N)/b.Elapsed().Seconds(), "maps/s")
		})
	}
}
