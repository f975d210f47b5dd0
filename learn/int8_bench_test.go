package learn

import "testing"

// BenchmarkInt8Templates is one image's template encoding at the default
// pipeline's shapes (12 channels of 14×14 maps, 64 templates of 5×5,
// 2×2 grid), float against int8.
func BenchmarkInt8Templates(b *testing.B) {
	maps := randomMaps(20, 12, 14, 14, 7)
	tm, _, err := TemplateConfig{K: 64, PatchSize: 5, Patches: 2000, Iters: 2, Seed: 3}.Fit(maps, nil)
	if err != nil {
		b.Fatal(err)
	}
	q, err := tm.Quantize(maps)
	if err != nil {
		b.Fatal(err)
	}
	b.Run("float", func(b *testing.B) {
		var dst []float32
		for i := 0; i < b.N; i++ {
			dst = tm.Encode(dst, &maps[i%20])
		}
	})
	b.Run("int8", func(b *testing.B) {
		var dst []uint8
		for i := 0; i < b.N; i++ {
			dst = q.Encode(dst, &maps[i%20])
		}
	})
}

// BenchmarkInt8Head is one prediction of an MLP head at the default
// pipeline's shapes (1100 inputs, 512 hidden units, 10 classes), float
// against int8.
func BenchmarkInt8Head(b *testing.B) {
	const n, d, k = 200, 1100, 10
	X, y := blobs(n, d, k, 1, 3)
	hd, _, err := HeadConfig{Kind: KindMLP, Hidden: 512, Epochs: 1}.Fit(X, y, k, nil)
	if err != nil {
		b.Fatal(err)
	}
	sc, zp := make([]float32, d), make([]int32, d)
	codes := make([]uint8, n*d)
	for i := range sc {
		sc[i], zp[i] = ActivationScale(0, 20)
	}
	for i, v := range X {
		codes[i] = QuantizeValue(v, sc[i%d], zp[i%d])
	}
	q, err := hd.Quantize(sc, zp, codes, n)
	if err != nil {
		b.Fatal(err)
	}
	b.Run("float", func(b *testing.B) {
		dst, scr := make([]float32, k), make([]float32, hd.ScratchLen(1))
		for i := 0; i < b.N; i++ {
			hd.Predict(dst, X[(i%n)*d:(i%n+1)*d], scr)
		}
	})
	b.Run("int8", func(b *testing.B) {
		dst := make([]float32, k)
		for i := 0; i < b.N; i++ {
			q.Predict(dst, codes[(i%n)*d:(i%n+1)*d])
		}
	})
}
