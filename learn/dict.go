package learn

import (
	"fmt"
	"math"
)

// Dictionary is an immutable set of K unit-norm atoms of dimension Dim,
// stored row-major: component p of atom j is at index j*Dim+p. A signal x is
// approximated by the synthesis x ≈ Σ_j a_j·atom_j = Dᵀa when the atoms are
// the rows of D. A Dictionary is safe for concurrent use.
type Dictionary struct {
	k, dim int
	w      []float32
}

// NewDictionary copies k atoms of dimension dim from w (row-major, len k*dim)
// and scales each to unit L2 norm. It fails if the sizes disagree, a value
// is not finite, or an atom is zero.
func NewDictionary(w []float32, k, dim int) (*Dictionary, error) {
	if k < 1 || dim < 1 {
		return nil, fmt.Errorf("learn: dictionary of %d atoms of dimension %d; want at least one atom of dimension ≥ 1", k, dim)
	}
	if len(w) != k*dim {
		return nil, fmt.Errorf("learn: dictionary has %d values; want atoms×dim = %d×%d = %d", len(w), k, dim, k*dim)
	}
	d := &Dictionary{k: k, dim: dim, w: make([]float32, len(w))}
	for j := 0; j < k; j++ {
		row := w[j*dim : (j+1)*dim]
		var ss float64
		for p, v := range row {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				return nil, fmt.Errorf("learn: dictionary atom %d component %d is %v; want a finite number", j, p, v)
			}
			ss += float64(v) * float64(v)
		}
		if ss == 0 {
			return nil, fmt.Errorf("learn: dictionary atom %d is zero; every atom needs a non-zero norm", j)
		}
		s := 1 / math.Sqrt(ss)
		dst := d.w[j*dim : (j+1)*dim]
		for p, v := range row {
			dst[p] = float32(float64(v) * s)
		}
	}
	return d, nil
}

// Atoms returns the number of atoms K.
func (d *Dictionary) Atoms() int { return d.k }

// Dim returns the dimension of each atom.
func (d *Dictionary) Dim() int { return d.dim }

// Atom copies atom j into dst (allocating when dst is short) and returns it.
// It panics if j is out of range.
func (d *Dictionary) Atom(dst []float32, j int) []float32 {
	if j < 0 || j >= d.k {
		panic(fmt.Sprintf("learn: atom %d out of range [0,%d)", j, d.k))
	}
	if cap(dst) < d.dim {
		dst = make([]float32, d.dim)
	}
	dst = dst[:d.dim]
	copy(dst, d.w[j*d.dim:(j+1)*d.dim])
	return dst
}

// Weights returns a copy of all atoms, row-major (atom j at [j*Dim:(j+1)*Dim]).
func (d *Dictionary) Weights() []float32 { return append([]float32(nil), d.w...) }

// Objective returns the per-signal sparse-coding objective
// 0.5·||x − Dᵀa||² + λ·||a||₁, accumulated in float64, for one signal x
// (len Dim) and its code a (len Atoms). It panics on wrong lengths.
func (d *Dictionary) Objective(x, a []float32, lambda float64) float64 {
	if len(x) != d.dim || len(a) != d.k {
		panic(fmt.Sprintf("learn: Objective got signal %d and code %d; want %d and %d", len(x), len(a), d.dim, d.k))
	}
	r := make([]float64, d.dim)
	for p, v := range x {
		r[p] = float64(v)
	}
	var l1 float64
	for j, aj := range a {
		if aj == 0 {
			continue
		}
		l1 += math.Abs(float64(aj))
		row := d.w[j*d.dim : (j+1)*d.dim]
		for p, v := range row {
			r[p] -= float64(aj) * float64(v)
		}
	}
	var ss float64
	for _, v := range r {
		ss += v * v
	}
	return 0.5*ss + lambda*l1
}
