package datasets

import (
	"fmt"
	"iter"
)

// Batch is a group of images of one Set as float32 pixels, laid out N×1×H×W
// (NCHW with a single channel):
//
//	pixel (y, x) of image j = Pix[(j*H+y)*W+x],  value byte/255 (then perturbed)
//	Images[j]              = Pix[j*H*W : (j+1)*H*W]   (views, for [][]float32 APIs)
//	Labels[j], Index[j]    = class, and position in the Set, of image j
type Batch struct {
	N, H, W int
	Pix     []float32
	Images  [][]float32
	Labels  []int
	Index   []int
}

// BatchConfig configures Set.Batches. The zero value visits every image in
// order, 256 at a time, unperturbed.
type BatchConfig struct {
	// Size is the number of images per batch (the last may be smaller);
	// zero means 256.
	Size int
	// Order lists the Set indices to visit; nil means 0..N-1. Use
	// StratifiedSplit or PerClass results, or a shuffled permutation.
	Order []int
	// Perturb is applied to every image; the zero value is none.
	Perturb Perturbation
	// Seed drives the perturbation: image i of the Set is perturbed with
	// seed Seed+i, so the result does not depend on Size or Order.
	Seed uint64
}

// Batches returns an iterator over the images of s in batches. It streams:
// pixels stay as bytes in s and each batch is converted into one buffer that
// is reused for the next batch, so the caller must copy what it wants to
// keep beyond one iteration step. Memory is one batch of float32 whatever
// the Set size, and a full pass allocates nothing per image.
//
// It panics (when iteration starts) if cfg.Size < 0, an Order index is out of
// range or cfg.Perturb is invalid.
func (s *Set) Batches(cfg BatchConfig) iter.Seq[*Batch] {
	return func(yield func(*Batch) bool) {
		size := cfg.Size
		if size == 0 {
			size = 256
		}
		if size < 0 {
			panic(fmt.Sprintf("datasets: batch size %d < 0", cfg.Size))
		}
		if err := cfg.Perturb.Validate(); err != nil {
			panic(err.Error())
		}
		n := s.N
		if cfg.Order != nil {
			n = len(cfg.Order)
			for _, i := range cfg.Order {
				if i < 0 || i >= s.N {
					panic(fmt.Sprintf("datasets: batch order index %d out of range [0,%d)", i, s.N))
				}
			}
		}
		d := s.H * s.W
		size = min(size, max(n, 1))
		b := &Batch{H: s.H, W: s.W, Pix: make([]float32, size*d), Images: make([][]float32, size),
			Labels: make([]int, size), Index: make([]int, size)}
		var scratch []float32
		if cfg.Perturb.Kind != None {
			scratch = make([]float32, d)
		}
		for start := 0; start < n; start += size {
			m := min(size, n-start)
			b.N, b.Pix, b.Images, b.Labels, b.Index = m, b.Pix[:m*d], b.Images[:m], b.Labels[:m], b.Index[:m]
			for j := 0; j < m; j++ {
				i := start + j
				if cfg.Order != nil {
					i = cfg.Order[i]
				}
				dst := b.Pix[j*d : (j+1)*d]
				if scratch == nil {
					s.Float(dst, i)
				} else {
					s.Float(scratch, i)
					cfg.Perturb.Apply(dst, scratch, s.H, s.W, cfg.Seed+uint64(i))
				}
				b.Images[j], b.Labels[j], b.Index[j] = dst, s.Labels[i], i
			}
			if !yield(b) {
				return
			}
		}
	}
}
