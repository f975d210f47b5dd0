package pipeline

import (
	"runtime"
	"strconv"
	"testing"
	"time"
)

var sinkF []float32

// BenchmarkFit times Fit of the default pipeline on MNIST training sets of
// increasing size; /60000 is the full-MNIST training time (target ≤ 10
// minutes on the 2-core machine; measured 2 December 2026, SIMD build, 2
// threads, idle machine: 210.7 s, head 173.6 s, features 31.7 s, templates
// 5.3 s). Run it alone, under the shared lock, with -benchtime 1x:
//
//	flock /tmp/striate-heavy.lock go test -run XXX -bench Fit/60000 -benchtime 1x ./pipeline
func BenchmarkFit(b *testing.B) {
	train, _ := mnist(b)
	for _, n := range []int{2000, 60000} {
		b.Run(itoa(n), func(b *testing.B) {
			set := train
			if n < train.N {
				set = train.First(n)
			}
			b.ReportAllocs()
			var last FitReport
			for i := 0; i < b.N; i++ {
				_, rep, err := FitReported(DefaultConfig(), set, FitOptions{Workers: runtime.GOMAXPROCS(0)})
				if err != nil {
					b.Fatal(err)
				}
				last = rep
			}
			b.ReportMetric(last.Total.Seconds(), "s/fit")
			b.ReportMetric(last.Unsupervised.Seconds(), "s-unsup")
			b.ReportMetric(last.Features.Seconds(), "s-features")
			b.ReportMetric(last.HeadTime.Seconds(), "s-head")
			b.ReportMetric(float64(n)/last.Total.Seconds(), "img/s")
		})
	}
}

// BenchmarkPredict measures prediction throughput of the default model
// (fitted on 2000 digits) on 28×28 images, single image and batched.
func BenchmarkPredict(b *testing.B) {
	train, test := mnist(b)
	m, err := Fit(DefaultConfig(), train.First(2000), FitOptions{Workers: runtime.GOMAXPROCS(0)})
	if err != nil {
		b.Fatal(err)
	}
	imgs := make([][]float32, 256)
	for i := range imgs {
		imgs[i] = test.Float(nil, i)
	}
	b.Run("28x28/batch256", func(b *testing.B) {
		b.ReportAllocs()
		start := time.Now()
		for i := 0; i < b.N; i++ {
			p, err := m.PredictBatch(imgs, 28, 28, runtime.GOMAXPROCS(0))
			if err != nil {
				b.Fatal(err)
			}
			sinkF = p[0]
		}
		b.ReportMetric(float64(b.N*len(imgs))/time.Since(start).Seconds(), "img/s")
	})
	b.Run("28x28/extract1", func(b *testing.B) {
		img := setImage(test, 0)
		b.ReportAllocs()
		for i := 0; i < b.N; i++ {
			sinkF = m.Extract(img)
		}
	})
}

func itoa(n int) string { return strconv.Itoa(n) }
