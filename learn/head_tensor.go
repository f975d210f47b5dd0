package learn

import (
	"fmt"
	"math"
)

// NamedTensor is one named float32 array of a fitted object, as stored in a
// model file: Data holds the product of Shape values in row-major order.
type NamedTensor struct {
	Name  string
	Shape []int
	Data  []float32
}

// Tensors returns copies of the head's parameters:
//
//	softmax: head.mean [d], head.std [d], head.w [k d], head.b [k]
//	mlp:     head.mean [d], head.std [d], head.w1 [h d], head.b1 [h], head.w2 [k h], head.b2 [k]
//
// Weight matrices are out×in, row-major, and act on standardised features
// z = (x − mean)/std: logits = W·z + b (softmax), or
// W2·max(0, W1·z + b1) + b2 (mlp). NewHeadFromTensors inverts Tensors.
func (hd *Head) Tensors() []NamedTensor {
	cp := func(s []float32) []float32 { return append([]float32(nil), s...) }
	ts := []NamedTensor{
		{"head.mean", []int{hd.d}, cp(hd.mean)},
		{"head.std", []int{hd.d}, cp(hd.std)},
	}
	if hd.kind == KindSoftmax {
		return append(ts,
			NamedTensor{"head.w", []int{hd.k, hd.d}, cp(hd.w1)},
			NamedTensor{"head.b", []int{hd.k}, cp(hd.b1)})
	}
	return append(ts,
		NamedTensor{"head.w1", []int{hd.h, hd.d}, cp(hd.w1)},
		NamedTensor{"head.b1", []int{hd.h}, cp(hd.b1)},
		NamedTensor{"head.w2", []int{hd.k, hd.h}, cp(hd.w2)},
		NamedTensor{"head.b2", []int{hd.k}, cp(hd.b2)})
}

// NewHeadFromTensors rebuilds a head from the tensors Tensors returned (in any
// order; tensors with other names are an error). It checks every name, shape
// and value (finite, std > 0) and copies the data.
func NewHeadFromTensors(ts []NamedTensor) (*Head, error) {
	byName := map[string]NamedTensor{}
	for _, t := range ts {
		if _, dup := byName[t.Name]; dup {
			return nil, fmt.Errorf("learn: head tensors: %q appears twice", t.Name)
		}
		n := 1
		for _, s := range t.Shape {
			if s < 1 || s > 1<<24 {
				return nil, fmt.Errorf("learn: head tensor %q: dimension %d outside [1, %d]", t.Name, s, 1<<24)
			}
			if n > (1<<30)/s { // checked before multiplying: no overflow on 32-bit int
				return nil, fmt.Errorf("learn: head tensor %q: shape %v has more than 2^30 values", t.Name, t.Shape)
			}
			n *= s
		}
		if len(t.Data) != n {
			return nil, fmt.Errorf("learn: head tensor %q: shape %v needs %d values, has %d", t.Name, t.Shape, n, len(t.Data))
		}
		for i, v := range t.Data {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				return nil, fmt.Errorf("learn: head tensor %q: value %d is %g", t.Name, i, v)
			}
		}
		byName[t.Name] = t
	}
	kind, names := KindSoftmax, []string{"head.mean", "head.std", "head.w", "head.b"}
	if _, ok := byName["head.w1"]; ok {
		kind, names = KindMLP, []string{"head.mean", "head.std", "head.w1", "head.b1", "head.w2", "head.b2"}
	}
	if len(byName) != len(names) {
		return nil, fmt.Errorf("learn: head tensors: got %d tensors, a %s head has exactly %v", len(byName), kind, names)
	}
	get := make([]NamedTensor, len(names))
	for i, nm := range names {
		t, ok := byName[nm]
		if !ok {
			return nil, fmt.Errorf("learn: head tensors: missing %q (a %s head has %v)", nm, kind, names)
		}
		get[i] = t
	}
	want := func(t NamedTensor, shape ...int) error {
		if len(t.Shape) != len(shape) {
			return fmt.Errorf("learn: head tensor %q: shape %v, want %v", t.Name, t.Shape, shape)
		}
		for i := range shape {
			if t.Shape[i] != shape[i] {
				return fmt.Errorf("learn: head tensor %q: shape %v, want %v", t.Name, t.Shape, shape)
			}
		}
		return nil
	}
	if len(get[0].Shape) != 1 {
		return nil, fmt.Errorf("learn: head tensor %q: shape %v, want [d]", get[0].Name, get[0].Shape)
	}
	d := get[0].Shape[0]
	if len(get[2].Shape) != 2 {
		return nil, fmt.Errorf("learn: head tensor %q: shape %v, want a matrix", get[2].Name, get[2].Shape)
	}
	m := get[2].Shape[0]
	checks := []error{want(get[1], d), want(get[2], m, d), want(get[3], m)}
	k, h := m, 0
	if kind == KindMLP {
		if len(get[4].Shape) != 2 {
			return nil, fmt.Errorf("learn: head tensor %q: shape %v, want a matrix", get[4].Name, get[4].Shape)
		}
		h, k = m, get[4].Shape[0]
		checks = append(checks, want(get[4], k, h), want(get[5], k))
	}
	for _, err := range checks {
		if err != nil {
			return nil, err
		}
	}
	if k < 2 {
		return nil, fmt.Errorf("learn: head tensors: %d classes, need at least 2", k)
	}
	for i, s := range get[1].Data {
		if !(s > 0) {
			return nil, fmt.Errorf("learn: head tensor %q: value %d is %g, want > 0", get[1].Name, i, s)
		}
	}
	cp := func(i int) []float32 { return append([]float32(nil), get[i].Data...) }
	if kind == KindMLP {
		return newHead(KindMLP, d, h, k, cp(0), cp(1), cp(2), cp(3), cp(4), cp(5)), nil
	}
	return newHead(KindSoftmax, d, 0, k, cp(0), cp(1), cp(2), cp(3), nil, nil), nil
}
