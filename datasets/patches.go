package datasets

import (
	"fmt"
	"math"
)

// PatchConfig configures SamplePatches. The zero value samples 10,000
// patches of 16×16 with seed 0 from anywhere in the photos.
type PatchConfig struct {
	// Size is the patch side in pixels; zero means 16.
	Size int
	// Count is the number of patches; zero means 10,000.
	Count int
	// Seed makes the sample reproducible.
	Seed uint64
	// Border is the margin, in pixels, at each photo edge that no patch
	// touches; zero means none. After WhitenImage use a margin of a few
	// pixels, since the filter treats the photo as periodic and leaves
	// artefacts along its edges.
	Border int
}

// MaxPatchValues bounds Count·Size² (2^28 float32 values, 1 GiB).
const MaxPatchValues = 1 << 28

// Patches holds N square patches of Size×Size pixels:
//
//	pixel (y, x) of patch i = Pix[(i*Size+y)*Size+x]
type Patches struct {
	N, Size int
	Pix     []float32
}

// Patch returns patch i, sharing memory with p.
func (p *Patches) Patch(i int) []float32 {
	d := p.Size * p.Size
	return p.Pix[i*d : (i+1)*d]
}

// SamplePatches cuts cfg.Count patches from photos: for each patch a photo is
// drawn uniformly at random, then a top-left corner uniformly among the
// positions that keep the patch cfg.Border pixels away from every edge (the
// sampling of Olshausen & Field's sparse-coding experiments: a random image,
// then a random place in it). The draw is deterministic in cfg.Seed.
func SamplePatches(photos []Photo, cfg PatchConfig) (*Patches, error) {
	size, count := cfg.Size, cfg.Count
	if size == 0 {
		size = 16
	}
	if count == 0 {
		count = 10000
	}
	if size < 1 || count < 1 || cfg.Border < 0 {
		return nil, fmt.Errorf("datasets: patch size %d, count %d, border %d: size and count must be ≥ 1 (or 0 for the defaults) and border ≥ 0", cfg.Size, cfg.Count, cfg.Border)
	}
	if int64(count)*int64(size)*int64(size) > MaxPatchValues {
		return nil, fmt.Errorf("datasets: %d patches of %d×%d exceed %d values (MaxPatchValues); sample fewer or smaller patches", count, size, size, MaxPatchValues)
	}
	if len(photos) == 0 {
		return nil, fmt.Errorf("datasets: no photos to sample patches from; pass the result of Photos()")
	}
	for _, ph := range photos {
		if len(ph.Pix) != ph.H*ph.W {
			return nil, fmt.Errorf("datasets: photo %q holds %d pixels for %d×%d", ph.Name, len(ph.Pix), ph.H, ph.W)
		}
		if ph.H-2*cfg.Border < size || ph.W-2*cfg.Border < size {
			return nil, fmt.Errorf("datasets: photo %q is %d×%d, too small for %d×%d patches with a %d px border; lower Size or Border", ph.Name, ph.H, ph.W, size, size, cfg.Border)
		}
	}
	r := newRand(cfg.Seed, tagPatches)
	p := &Patches{N: count, Size: size, Pix: make([]float32, count*size*size)}
	for i := 0; i < count; i++ {
		ph := photos[r.IntN(len(photos))]
		y0 := cfg.Border + r.IntN(ph.H-2*cfg.Border-size+1)
		x0 := cfg.Border + r.IntN(ph.W-2*cfg.Border-size+1)
		dst := p.Patch(i)
		for y := 0; y < size; y++ {
			copy(dst[y*size:(y+1)*size], ph.Pix[(y0+y)*ph.W+x0:])
		}
	}
	return p, nil
}

// RemoveMean subtracts from every patch its own mean (the DC component).
func (p *Patches) RemoveMean() {
	for i := 0; i < p.N; i++ {
		x := p.Patch(i)
		var s float64
		for _, v := range x {
			s += float64(v)
		}
		m := float32(s / float64(len(x)))
		for j := range x {
			x[j] -= m
		}
	}
}

// ContrastEps is the default variance offset of NormalizeContrast: 10 on the
// 0..255 scale of Coates, Lee & Ng (2011), i.e. 10/255² in [0,1] units.
const ContrastEps = 10.0 / (255 * 255)

// NormalizeContrast replaces every patch x by (x − mean(x)) / sqrt(var(x) + eps),
// the brightness and contrast normalisation of Coates, Lee & Ng, "An analysis
// of single-layer networks in unsupervised feature learning" (AISTATS 2011;
// constant recalled from memory). var is the population variance. eps ≤ 0
// means ContrastEps; eps keeps flat patches from being blown up into noise.
func (p *Patches) NormalizeContrast(eps float64) {
	if eps <= 0 {
		eps = ContrastEps
	}
	for i := 0; i < p.N; i++ {
		x := p.Patch(i)
		var s, ss float64
		for _, v := range x {
			s += float64(v)
		}
		m := s / float64(len(x))
		for _, v := range x {
			ss += (float64(v) - m) * (float64(v) - m)
		}
		k := 1 / math.Sqrt(ss/float64(len(x))+eps)
		for j, v := range x {
			x[j] = float32((float64(v) - m) * k)
		}
	}
}
