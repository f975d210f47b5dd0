package eval

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

var sinkMetrics *Metrics

// BenchmarkScore scores n predictions over 10 classes (the size of the
// MNIST and Fashion-MNIST test sets at n = 10 000).
func BenchmarkScore(b *testing.B) {
	for _, n := range []int{1000, 10000} {
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			r := rand.New(rand.NewPCG(1, 1))
			labels := make([]int, n)
			probs := make([][]float32, n)
			classes := make([]string, 10)
			for c := range classes {
				classes[c] = fmt.Sprint(c)
			}
			for i := range probs {
				labels[i] = r.IntN(10)
				p := make([]float32, 10)
				var s float32
				for c := range p {
					p[c] = r.Float32()
					s += p[c]
				}
				for c := range p {
					p[c] /= s
				}
				probs[i] = p
			}
			b.ReportAllocs()
			b.ResetTimer()
			for b.Loop() {
				m, err := Score(labels, probs, classes, MetricsConfig{})
				if err != nil {
					b.Fatal(err)
				}
				sinkMetrics = m
			}
			b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "predictions/s")
		})
	}
}

var sinkCmp *Comparison

// BenchmarkCompare is dominated by the 2000-resample paired bootstrap.
func BenchmarkCompare(b *testing.B) {
	for _, n := range []int{1000, 10000} {
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			labels, pa, pb := synthPaired(n, n/10, n/12, n*7/10, 1)
			b.ReportAllocs()
			for b.Loop() {
				c, err := Compare("a", "b", labels, pa, pb, CompareConfig{Seed: 1})
				if err != nil {
					b.Fatal(err)
				}
				sinkCmp = c
			}
		})
	}
}
