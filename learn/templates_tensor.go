package learn

import (
	"fmt"
	"math"
)

// Tensors returns copies of the learned numbers of the layer:
//
//	templates.mean      [C·p·p]       μ, mean of the normalised training patches
//	templates.whiten    [C·p·p C·p·p] W, the ZCA matrix (identity when whitening is off)
//	templates.centroids [K C p p]     t_k, unit-norm templates in whitened space
//	templates.scalars   [2]           α (absolute soft threshold), ε of the patch normalisation (−1 = off)
//
// The config (Config()) holds everything else; NewTemplatesFromTensors
// rebuilds the layer from both.
func (t *Templates) Tensors() []NamedTensor {
	cp := func(s []float32) []float32 { return append([]float32(nil), s...) }
	return []NamedTensor{
		{"templates.mean", []int{t.dim}, cp(t.mean)},
		{"templates.whiten", []int{t.dim, t.dim}, cp(t.whiten)},
		{"templates.centroids", []int{t.k, t.c, t.p, t.p}, cp(t.cent)},
		{"templates.scalars", []int{2}, []float32{t.alpha, t.normEps}},
	}
}

// NewTemplatesFromTensors rebuilds a layer from the config it was fitted with
// and the tensors Tensors returned (any order). It checks names, shapes,
// finiteness and agreement with cfg (K, PatchSize) and copies the data.
func NewTemplatesFromTensors(cfg TemplateConfig, ts []NamedTensor) (*Templates, error) {
	r, err := cfg.resolved()
	if err != nil {
		return nil, err
	}
	by := map[string]NamedTensor{}
	for _, t := range ts {
		if _, dup := by[t.Name]; dup {
			return nil, fmt.Errorf("learn: template tensors: %q appears twice", t.Name)
		}
		n := 1
		for _, s := range t.Shape {
			if s < 1 || s > maxPatchDim {
				return nil, fmt.Errorf("learn: template tensor %q: dimension %d outside [1, %d]", t.Name, s, maxPatchDim)
			}
			if n > maxPatchDim*maxPatchDim/s { // the whitening matrix is the largest tensor
				return nil, fmt.Errorf("learn: template tensor %q: shape %v has more than %d values", t.Name, t.Shape, maxPatchDim*maxPatchDim)
			}
			n *= s
		}
		if len(t.Data) != n {
			return nil, fmt.Errorf("learn: template tensor %q: shape %v needs %d values, has %d", t.Name, t.Shape, n, len(t.Data))
		}
		for i, v := range t.Data {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				return nil, fmt.Errorf("learn: template tensor %q: value %d is %g", t.Name, i, v)
			}
		}
		by[t.Name] = t
	}
	names := []string{"templates.mean", "templates.whiten", "templates.centroids", "templates.scalars"}
	if len(by) != len(names) {
		return nil, fmt.Errorf("learn: template tensors: got %d, want exactly %v", len(by), names)
	}
	for _, nm := range names {
		if _, ok := by[nm]; !ok {
			return nil, fmt.Errorf("learn: template tensors: missing %q", nm)
		}
	}
	cent, mean, wh, sc := by["templates.centroids"], by["templates.mean"], by["templates.whiten"], by["templates.scalars"]
	if len(cent.Shape) != 4 || cent.Shape[2] != cent.Shape[3] {
		return nil, fmt.Errorf("learn: template tensor %q: shape %v, want [K C p p]", cent.Name, cent.Shape)
	}
	k, c, p := cent.Shape[0], cent.Shape[1], cent.Shape[2]
	dim := c * p * p
	if k != r.K || p != r.PatchSize {
		return nil, fmt.Errorf("learn: template tensors hold K=%d, p=%d; the config says K=%d, PatchSize=%d", k, p, r.K, r.PatchSize)
	}
	if dim > maxPatchDim {
		return nil, fmt.Errorf("learn: template tensors: patch dimension %d exceeds %d", dim, maxPatchDim)
	}
	if len(mean.Shape) != 1 || mean.Shape[0] != dim {
		return nil, fmt.Errorf("learn: template tensor %q: shape %v, want [%d]", mean.Name, mean.Shape, dim)
	}
	if len(wh.Shape) != 2 || wh.Shape[0] != dim || wh.Shape[1] != dim {
		return nil, fmt.Errorf("learn: template tensor %q: shape %v, want [%d %d]", wh.Name, wh.Shape, dim, dim)
	}
	if len(sc.Shape) != 1 || sc.Shape[0] != 2 {
		return nil, fmt.Errorf("learn: template tensor %q: shape %v, want [2]", sc.Name, sc.Shape)
	}
	t := &Templates{cfg: r, c: c, p: p, dim: dim, k: k,
		mean:   append([]float32(nil), mean.Data...),
		whiten: append([]float32(nil), wh.Data...),
		cent:   append([]float32(nil), cent.Data...),
		alpha:  sc.Data[0], normEps: sc.Data[1],
	}
	if t.alpha < 0 {
		return nil, fmt.Errorf("learn: template tensor %q: α = %g, want ≥ 0", sc.Name, t.alpha)
	}
	if t.normEps < 0 {
		t.normEps = -1
	}
	t.derive()
	return t, nil
}
