package pipeline

import (
	"slices"
	"testing"
	"time"

	"github.com/striate/striate/learn"
)

// BenchmarkPredictInt8 is the single-image latency of the float model and
// of its int8 form (Model.Quantize), one goroutine, on an MNIST test digit:
// the default pipeline, its head trained briefly (latency does not depend
// on how well it was trained). Besides the mean (ns/op) it reports the
// median of the single calls' times (p50-ms), the figure striate bench
// gives; on a busy machine the median is the steadier of the two, as most
// calls run within one scheduling slice.
func BenchmarkPredictInt8(b *testing.B) {
	train, test := mnist(b)
	cfg := DefaultConfig()
	cfg.Head = learn.HeadConfig{Epochs: 1}
	cfg.HeadMinSteps = -1
	cfg.Unlabeled = 2000
	m, err := Fit(cfg, train.First(2000), FitOptions{Workers: 2})
	if err != nil {
		b.Fatal(err)
	}
	q, err := m.Quantize(train, QuantizeOptions{Images: 500, Workers: 2})
	if err != nil {
		b.Fatal(err)
	}
	img := setImage(test, 0)
	for _, c := range []struct {
		name string
		m    *Model
	}{{"float", m}, {"int8", q}} {
		b.Run("28x28/"+c.name, func(b *testing.B) {
			b.ReportAllocs()
			lat := make([]time.Duration, b.N)
			for i := 0; i < b.N; i++ {
				t0 := time.Now()
				_, p := c.m.Predict(img)
				lat[i] = time.Since(t0)
				sinkF = p
			}
			b.StopTimer()
			slices.Sort(lat)
			b.ReportMetric(float64(lat[len(lat)/2])/1e6, "p50-ms")
		})
	}
}
