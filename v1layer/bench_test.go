package v1layer

import (
	"fmt"

	"github.com/striate/striate/internal/benchwork"
	"math/rand/v2"
	"testing"
	"time"
)

// Benchmarks run the default front end, which equals the reference work's
// filterbank.json (TestDefaultKernelsMatchBench), on that work's inputs
// (MNIST test images when the data set is on this machine, the 256×256 photo
// crops embedded in internal/benchwork) and on seeded random images
// otherwise — content does not change the work. `striate bench` times the whole reference sets.
//
//	flock /tmp/striate-heavy.lock go test -run XXX -bench FrontEnd ./v1layer
//	GOEXPERIMENT=simd flock /tmp/striate-heavy.lock go test -run XXX -bench FrontEnd ./v1layer

var sinkMaps Maps

// referenceImages returns n images of side sz from the reference work
// (benchwork), or seeded random ones if it is not available.
func referenceImages(sz, n int) [][]float32 {
	if sz == 28 {
		if s := benchwork.MNIST(n); len(s.Images) == n {
			return s.Images
		}
	}
	if sz == 256 {
		if dir, err := benchwork.FindDir(""); err == nil {
			if s, err := benchwork.Crops(dir, n); err == nil {
				return s.Images
			}
		}
	}
	return benchImages(n, sz, sz)
}

func benchImages(n, h, w int) [][]float32 {
	rng := rand.New(rand.NewPCG(3, 4))
	imgs := make([][]float32, n)
	for i := range imgs {
		imgs[i], _ = randImage(rng, h, w)
	}
	return imgs
}

func BenchmarkFrontEnd(b *testing.B) {
	f, err := New(Config{})
	if err != nil {
		b.Fatal(err)
	}
	for _, sz := range []int{28, 256} {
		imgs := referenceImages(sz, 64)
		b.Run(fmt.Sprintf("%dx%d", sz, sz), func(b *testing.B) {
			b.ReportAllocs()
			var dst Maps
			f.Apply(&dst, imgs[0], sz, sz)
			b.ResetTimer()
			start := time.Now()
			for i := 0; i < b.N; i++ {
				f.Apply(&dst, imgs[i%len(imgs)], sz, sz)
			}
			b.ReportMetric(float64(b.N)/time.Since(start).Seconds(), "img/s")
			sinkMaps = dst
		})
		for _, workers := range []int{1, 2} {
			batch := imgs
			b.Run(fmt.Sprintf("%dx%d/workers=%d", sz, sz, workers), func(b *testing.B) {
				b.ReportAllocs()
				dst := make([]Maps, len(batch))
				f.ApplyBatch(dst, batch, sz, sz, workers)
				b.ResetTimer()
				start := time.Now()
				for i := 0; i < b.N; i++ {
					f.ApplyBatch(dst, batch, sz, sz, workers)
				}
				b.ReportMetric(float64(b.N*len(batch))/time.Since(start).Seconds(), "img/s")
				sinkMaps = dst[0]
			})
		}
	}
}

// BenchmarkStage times the stages of the default front end separately:
// "pad" (copying into the padded plane), "responses" (all 18
// correlations), "complex+pool" (rectification, energy and pooling), and
// the two halves as whole front ends: "retina-only" (DoG on/off + pooling)
// and "gabor-only" (Gabor energy + pooling).
func BenchmarkStage(b *testing.B) {
	f, err := New(Config{})
	if err != nil {
		b.Fatal(err)
	}
	for _, sz := range []int{28, 256} {
		img := benchImages(1, sz, sz)[0]
		s := f.getScratch(sz, sz)
		var dst Maps
		c, oh, ow, _ := f.OutShape(sz, sz)
		dst.Resize(c, oh, ow)
		f.apply(&dst, img, sz, sz, s)
		run := func(name string, fn func()) {
			b.Run(fmt.Sprintf("%s/%dx%d", name, sz, sz), func(b *testing.B) {
				b.ReportAllocs()
				start := time.Now()
				for i := 0; i < b.N; i++ {
					fn()
				}
				b.ReportMetric(float64(b.N)/time.Since(start).Seconds(), "img/s")
			})
		}
		run("pad", func() { padImage(s.es.pad, img, sz, sz, f.maxR, s.es.pw, BorderZero) })
		run("responses", func() { f.eng.responses(s.resp, img, sz, sz, BorderZero, s.es) })
		run("complex+pool", func() { f.post(&dst, sz, sz, s) })
		sinkMaps = dst
		for _, part := range []struct {
			name string
			cfg  Config
		}{
			{"retina-only", Config{Gabor: GaborConfig{Disable: true}}},
			{"gabor-only", Config{DoG: DoGConfig{Disable: true}}},
		} {
			g, err := New(part.cfg)
			if err != nil {
				b.Fatal(err)
			}
			var out Maps
			g.Apply(&out, img, sz, sz)
			run(part.name, func() { g.Apply(&out, img, sz, sz) })
			sinkMaps = out
		}
	}
}

// BenchmarkPool compares the 3×3 stride-2 pooling paths on one map: the
// fused scalar pass, the vectorised row-max path (pool3s2Wide) and the
// generic vertical-max plus row loop; the crossover sets pool3s2MaxW.
func BenchmarkPool(b *testing.B) {
	for _, sz := range []int{28, 64, 128, 256} {
		src := benchImages(1, sz, sz)[0]
		dst := make([]float32, poolOut(sz, 2)*poolOut(sz, 2))
		for _, path := range []string{"fused", "wide", "rows"} {
			b.Run(fmt.Sprintf("%s/%dx%d", path, sz, sz), func(b *testing.B) {
				old := pool3s2MaxW
				tmp := make([]float32, 2*sz+2)
				switch path {
				case "fused":
					pool3s2MaxW = 1 << 30
				case "wide":
					pool3s2MaxW = 0
				default:
					pool3s2MaxW, tmp = 0, tmp[:sz]
				}
				defer func() { pool3s2MaxW = old }()
				start := time.Now()
				for i := 0; i < b.N; i++ {
					maxPool(dst, src, sz, sz, 3, 2, tmp)
				}
				b.ReportMetric(float64(b.N)/time.Since(start).Seconds(), "maps/s")
			})
		}
	}
}

// BenchmarkDirect times the path for kernels with no separable plan on a
// learned-style bank (24 full-rank 9×9 kernels, as package learn fits),
// 28×28 and 64×64: "engine" is the front end's correlation stage (SIMD
// in a SIMD build), "scalar" the plain row-AXPY loops it replaced.
func BenchmarkDirect(b *testing.B) {
	rng := rand.New(rand.NewPCG(5, 6))
	ks := make([]Kernel, 24)
	for i := range ks {
		ks[i] = Kernel{Size: 9, W: make([]float32, 81)}
		for j := range ks[i].W {
			ks[i].W[j] = float32(rng.NormFloat64() * 0.1)
		}
	}
	e := newEngine(ks, 4)
	for _, sz := range []int{28, 64} {
		img := benchImages(1, sz, sz)[0]
		s := e.scratchFor(nil, sz, sz)
		resp := make([][]float32, len(ks))
		for i := range resp {
			resp[i] = make([]float32, respLen(sz, sz))
		}
		for _, path := range []string{"engine", "scalar"} {
			b.Run(fmt.Sprintf("%s/%dx%d", path, sz, sz), func(b *testing.B) {
				start := time.Now()
				for i := 0; i < b.N; i++ {
					if path == "engine" {
						e.responses(resp, img, sz, sz, BorderZero, s)
						continue
					}
					padImage(s.pad, img, sz, sz, 4, s.pw, BorderZero)
					for k := range ks {
						correlateDirect(resp[k], s.pad, s.pw, sz, sz, 4, ks[k].W, 9)
					}
				}
				b.ReportMetric(float64(b.N)/time.Since(start).Seconds(), "img/s")
			})
		}
	}
}
