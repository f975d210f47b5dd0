package learn

import (
	"fmt"
	"math/rand/v2"
	"testing"

	"github.com/striate/striate/learn/internal/nn"
)

// BenchmarkHeadEpoch times one training epoch (no validation) on random
// features of the size the full-MNIST pipeline produces: 60,000 rows × 2,000
// features, 10 classes. Run under the shared lock:
//
//	flock /tmp/striate-heavy.lock go test -run XXX -bench HeadEpoch -benchtime 2x ./learn
func BenchmarkHeadEpoch(b *testing.B) {
	n, d, k := benchRows, 2000, 10
	X, y := noiseRows(n, d, k, 1)
	for _, cfg := range []HeadConfig{
		{Kind: KindSoftmax, Batch: 128},
		{Kind: KindSoftmax, Batch: 128, Engine: EngineGorgonia},
		{Kind: KindSoftmax, Batch: 512},
		{Kind: KindMLP, Hidden: 256, Batch: 128},
		{Kind: KindMLP, Hidden: 256, Batch: 128, Engine: EngineGorgonia},
		{Kind: KindMLP, Hidden: 256, Batch: 512},
		{Kind: KindMLP, Hidden: 1024, Batch: 256},
	} {
		cfg.Epochs, cfg.ValFrac = 1, -1
		eng := cfg.Engine
		if eng == "" {
			eng = EngineGo
		}
		b.Run(fmt.Sprintf("%s-%s-h%d-b%d/%dx%d", eng, cfg.Kind, cfg.Hidden, cfg.Batch, n, d), func(b *testing.B) {
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				if _, _, err := cfg.Fit(X, y, k, nil); err != nil {
					b.Fatal(err)
				}
			}
			b.ReportMetric(float64(n)*float64(b.N)/b.Elapsed().Seconds(), "rows/s")
		})
	}
}

var sinkProbs []float32

var benchRows = 60000

// BenchmarkHeadPredict times single-row inference (the per-image cost).
func BenchmarkHeadPredict(b *testing.B) {
	for _, c := range []struct{ d, h int }{{2000, 0}, {2000, 256}} {
		b.Run(fmt.Sprintf("d%d-h%d", c.d, c.h), func(b *testing.B) {
			rng := rand.New(rand.NewPCG(2, 2))
			mk := func(n int) []float32 {
				s := make([]float32, n)
				for i := range s {
					s[i] = float32(rng.NormFloat64())
				}
				return s
			}
			one := func(n int) []float32 {
				s := make([]float32, n)
				for i := range s {
					s[i] = 1
				}
				return s
			}
			var hd *Head
			if c.h == 0 {
				hd = newHead(KindSoftmax, c.d, 0, 10, mk(c.d), one(c.d), mk(c.d*10), mk(10), nil, nil)
			} else {
				hd = newHead(KindMLP, c.d, c.h, 10, mk(c.d), one(c.d), mk(c.d*c.h), mk(c.h), mk(c.h*10), mk(10))
			}
			x := mk(c.d)
			dst, scratch := make([]float32, 10), make([]float32, hd.ScratchLen(1))
			b.ReportAllocs()
			for i := 0; i < b.N; i++ {
				sinkProbs = hd.Predict(dst, x, scratch)
			}
		})
	}
}

// BenchmarkHeadStep times one minibatch gradient evaluation of each engine
// at 2,000 features and at the full-MNIST head's shapes (1,085 features,
// 512 hidden units, the fit's 4 chunks), 10 classes, on one goroutine;
// with GOEXPERIMENT=simd the "go" engine uses the AVX2 product kernels.
func BenchmarkHeadStep(b *testing.B) {
	for _, sp := range []nn.Spec{
		{In: 2000, Out: 10, Batch: 128, L2: 1e-4},
		{In: 2000, Hidden: 256, Out: 10, Batch: 128, L2: 1e-4},
		{In: 1085, Out: 10, Batch: 128, L2: 1e-4, Chunks: headChunks(128)},
		{In: 1085, Hidden: 512, Out: 10, Batch: 128, L2: 1e-4, Chunks: headChunks(128)},
	} {
		for _, eng := range []string{EngineGo, EngineGorgonia} {
			b.Run(fmt.Sprintf("%s-d%d-h%d-b%d", eng, sp.In, sp.Hidden, sp.Batch), func(b *testing.B) {
				var e nn.Engine
				var err error
				if eng == EngineGo {
					e, err = nn.NewPlain(sp, headKernels(), nil)
				} else {
					e, err = nn.New(sp)
				}
				if err != nil {
					b.Fatal(err)
				}
				defer e.Close()
				rng := rand.New(rand.NewPCG(1, 1))
				var grads [][]float32
				for _, p := range e.Params32() {
					for i := range p {
						p[i] = float32(0.05 * rng.NormFloat64())
					}
					grads = append(grads, make([]float32, len(p)))
				}
				for i := range e.X32() {
					e.X32()[i] = float32(rng.NormFloat64())
				}
				for i := 0; i < sp.Batch; i++ {
					e.Y32()[i*sp.Out+i%sp.Out] = 1
				}
				b.ReportAllocs()
				for i := 0; i < b.N; i++ {
					if _, err := e.Eval(grads); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(b.Elapsed().Milliseconds())/float64(b.N), "ms/step")
			})
		}
	}
	b.Logf("product kernel: %s", kernelBuild)
}

// BenchmarkHeadFit times a whole head fit of the pipeline's default kind (an
// mlp of 512 hidden units, minibatches of 128, no validation) on random
// features of the full-MNIST set's size, 60,000 × 1,085, for one epoch (468
// steps), with 1 and 2 workers; the heads are bit-identical
// (TestHeadWorkersBitIdentical). Run it alone:
//
//	GOEXPERIMENT=simd go test -run XXX -bench HeadFit -benchtime 1x ./learn
func BenchmarkHeadFit(b *testing.B) {
	n, d, k := benchRows, 1085, 10
	X, y := noiseRows(n, d, k, 3)
	cfg := HeadConfig{Kind: KindMLP, Hidden: 512, Epochs: 1, ValFrac: -1, Seed: 1}
	for _, w := range []int{1, 2} {
		b.Run(fmt.Sprintf("workers-%d/%dx%d-h512", w, n, d), func(b *testing.B) {
			b.ReportAllocs()
			steps := 0
			for i := 0; i < b.N; i++ {
				_, rep, err := cfg.FitWith(X, y, k, HeadFitOptions{Workers: w})
				if err != nil {
					b.Fatal(err)
				}
				steps += rep.Epochs * rep.StepsPerEpoch
			}
			b.ReportMetric(float64(steps)/b.Elapsed().Seconds(), "steps/s")
		})
	}
	b.Logf("product kernel: %s", kernelBuild)
}

// noiseRows returns n rows of d standard-normal features and labels drawn
// uniformly from k classes, independently of the features.
func noiseRows(n, d, k int, seed uint64) ([]float32, []int) {
	rng := rand.New(rand.NewPCG(seed, seed))
	X := make([]float32, n*d)
	for i := range X {
		X[i] = float32(rng.NormFloat64())
	}
	y := make([]int, n)
	for i := range y {
		y[i] = rng.IntN(k)
	}
	return X, y
}
