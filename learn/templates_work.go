package learn

import "fmt"

// TemplateWork is the memory a template layer of a given configuration
// needs on c×h×w maps, worked out from the configuration alone (no maps,
// no templates), so that a caller can refuse a configuration before it
// allocates anything. All sizes are in bytes.
type TemplateWork struct {
	// Encode is the per-call scratch of Encode or EncodeMaps (one
	// goroutine): at the scale with the most positions P, the P×dim
	// patches (twice for the triangle encoder), the P×K responses, the
	// P×Features() outputs and the per-position moments, plus the
	// resampled maps of each scale ≠ 1.
	Encode int64
	// Fit is what Fit allocates besides the maps it is given: the
	// Patches×dim sample and its whitened copy, the dim×dim whitening
	// matrices (float64), the K×dim templates and, for method "sparse",
	// the Patches×K codes.
	Fit int64
	// OutC×OutH×OutW is the shape of the maps EncodeMaps returns, the input
	// of a stacked layer.
	OutC, OutH, OutW int
	// OutLen is the length of the vector Encode returns (OutLen's value
	// when the maps are large enough for the pooling grids).
	OutLen int
}

// Work returns the TemplateWork of c on ch×h×w maps. It returns the
// configuration's own error when c is invalid and an error when the maps
// are smaller than the patch.
func (c TemplateConfig) Work(ch, h, w int) (TemplateWork, error) {
	r, err := c.resolved()
	if err != nil {
		return TemplateWork{}, err
	}
	t := &Templates{cfg: r, c: ch, p: r.PatchSize, dim: ch * r.PatchSize * r.PatchSize, k: r.K}
	oh, ow := t.positions(h, w)
	if oh < 1 || ow < 1 {
		return TemplateWork{}, fmt.Errorf("learn: templates: %d×%d maps are smaller than patch size %d", h, w, r.PatchSize)
	}
	dim, k, f := int64(t.dim), int64(r.K), int64(t.Features())
	var wk TemplateWork
	for _, s := range r.Scales {
		sh, sw := scaledSize(h, w, s)
		ph, pw := t.positions(sh, sw)
		np := int64(ph) * int64(pw)
		b := 4*np*(dim+k+f) + 16*np + 16*int64(sh+1)*int64(sw+1)
		if r.Encoder == EncodeTriangle {
			b += 4 * np * dim
		}
		if s != 1 {
			b += 4 * int64(ch) * int64(sh) * int64(sw)
		}
		wk.Encode = max(wk.Encode, b)
	}
	n := int64(r.Patches)
	wk.Fit = 8*n*dim + 3*8*dim*dim + 8*k*dim
	if r.Method == MethodSparse {
		wk.Fit += 4 * n * k
	}
	for _, g := range r.Grids {
		wk.OutLen += g * g * int(f)
	}
	q := r.MapPool
	wk.OutC, wk.OutH, wk.OutW = int(f), max(1, oh/q), max(1, ow/q)
	return wk, nil
}
