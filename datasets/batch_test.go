package datasets

import (
	"slices"
	"testing"
)

func rampSet(n, h, w int) *Set {
	s := &Set{Name: "ramp", N: n, H: h, W: w, Pix: make([]uint8, n*h*w), Labels: make([]int, n), Classes: []string{"a", "b", "c"}}
	for i := range s.Pix {
		s.Pix[i] = uint8(i * 7)
	}
	for i := range s.Labels {
		s.Labels[i] = i % 3
	}
	return s
}

func TestBatchesLayoutAndOrder(t *testing.T) {
	s := rampSet(10, 3, 4)
	var seen []int
	var sizes []int
	for b := range s.Batches(BatchConfig{Size: 4}) {
		sizes = append(sizes, b.N)
		for j := 0; j < b.N; j++ {
			i := b.Index[j]
			seen = append(seen, i)
			want := s.Float(nil, i)
			if !slices.Equal(b.Pix[j*12:(j+1)*12], want) || !slices.Equal(b.Images[j], want) || b.Labels[j] != s.Labels[i] {
				t.Fatalf("batch image %d (set %d) differs", j, i)
			}
		}
		if len(b.Pix) != b.N*12 || b.H != 3 || b.W != 4 || len(b.Images) != b.N {
			t.Fatalf("batch shape %d×%d×%d, %d values", b.N, b.H, b.W, len(b.Pix))
		}
	}
	if !slices.Equal(sizes, []int{4, 4, 2}) || !slices.Equal(seen, []int{0, 1, 2, 3, 4, 5, 6, 7, 8, 9}) {
		t.Errorf("sizes %v seen %v", sizes, seen)
	}
	// A given order, early stop, and the default size.
	seen = seen[:0]
	for b := range s.Batches(BatchConfig{Size: 2, Order: []int{9, 3, 3, 0, 5}}) {
		seen = append(seen, b.Index...)
		if len(seen) >= 4 {
			break
		}
	}
	if !slices.Equal(seen, []int{9, 3, 3, 0}) {
		t.Errorf("order: %v", seen)
	}
	count := 0
	for b := range s.Batches(BatchConfig{}) {
		count += b.N
	}
	if count != 10 {
		t.Errorf("default config visited %d", count)
	}
	for range (&Set{}).Batches(BatchConfig{}) {
		t.Error("empty set yielded a batch")
	}
}

// TestBatchesPerturbDeterministic: image i gets seed Seed+i whatever the
// batch size or order.
func TestBatchesPerturbDeterministic(t *testing.T) {
	s := rampSet(7, 5, 5)
	p := Perturbation{Kind: Noise, Level: 0.2}
	collect := func(cfg BatchConfig) map[int][]float32 {
		out := map[int][]float32{}
		for b := range s.Batches(cfg) {
			for j := 0; j < b.N; j++ {
				out[b.Index[j]] = slices.Clone(b.Images[j])
			}
		}
		return out
	}
	a := collect(BatchConfig{Size: 3, Perturb: p, Seed: 11})
	b := collect(BatchConfig{Size: 5, Perturb: p, Seed: 11, Order: []int{6, 5, 4, 3, 2, 1, 0}})
	for i := 0; i < 7; i++ {
		want := make([]float32, 25)
		p.Apply(want, s.Float(nil, i), 5, 5, 11+uint64(i))
		if !slices.Equal(a[i], want) || !slices.Equal(b[i], want) {
			t.Fatalf("image %d perturbed differently", i)
		}
	}
}

// TestBatchesStreamWithoutAllocating: a full pass allocates a fixed handful
// of buffers, not one per image or batch.
func TestBatchesStreamWithoutAllocating(t *testing.T) {
	s := rampSet(2000, 28, 28)
	var sink float32
	allocs := testing.AllocsPerRun(3, func() {
		for b := range s.Batches(BatchConfig{Size: 32}) {
			sink += b.Pix[0]
		}
	})
	if allocs > 8 {
		t.Errorf("a pass over 2000 images in 63 batches made %.0f allocations, want a fixed few", allocs)
	}
	_ = sink
}

func TestBatchesPanics(t *testing.T) {
	s := rampSet(3, 2, 2)
	for name, cfg := range map[string]BatchConfig{
		"size":    {Size: -1},
		"order":   {Order: []int{3}},
		"perturb": {Perturb: Perturbation{Kind: Blur, Level: -2}},
	} {
		func() {
			defer func() {
				if recover() == nil {
					t.Errorf("%s: no panic", name)
				}
			}()
			for range s.Batches(cfg) {
			}
		}()
	}
}

func BenchmarkBatches(b *testing.B) {
	s := rampSet(10000, 28, 28)
	b.ReportAllocs()
	var sink float32
	for b.Loop() {
		for bt := range s.Batches(BatchConfig{Size: 256}) {
			sink += bt.Pix[len(bt.Pix)-1]
		}
	}
	b.ReportMetric(float64(b.N*s.N)/b.Elapsed().Seconds(), "img/s")
	_ = sink
}
