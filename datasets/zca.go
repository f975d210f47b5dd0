package datasets

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// ZCA is a fitted zero-phase whitening transform of d = Size² dimensional
// patches:
//
//	x ↦ W (x − μ),   W = U diag(1/sqrt(λᵢ + ε)) Uᵀ
//
// where μ is the per-pixel mean of the fitting patches, C = U diag(λ) Uᵀ their
// covariance (normalised by N) and ε the regulariser (Bell & Sejnowski 1997,
// "The 'independent components' of natural scenes are edge filters"; the ε
// form is common practice). W is symmetric; whitened patches have covariance
// U diag(λᵢ/(λᵢ+ε)) Uᵀ, the identity in every direction where λᵢ ≫ ε. A ZCA
// is immutable and safe for concurrent use.
type ZCA struct {
	size int
	eps  float64
	mean []float64
	w    []float64 // d×d row-major
	eig  []float64 // ascending, clamped at 0
}

// FitZCA fits a ZCA transform to the patches with regulariser eps > 0 (in
// squared pixel units; 1e-3 suits mean-removed patches of [0,1] pixels, where
// the leading eigenvalues are ~1e-1 … 1e0 for 16×16). It needs at least two
// patches and rejects non-finite pixels. Eigenvalues below 0 (rounding in a
// singular covariance, e.g. after RemoveMean) count as 0.
func FitZCA(p *Patches, eps float64) (*ZCA, error) {
	if !(eps > 0) || math.IsInf(eps, 1) {
		return nil, fmt.Errorf("datasets: ZCA epsilon %g must be positive and finite (1e-3 is usual for [0,1] pixels)", eps)
	}
	d := p.Size * p.Size
	if p.N < 2 || d < 1 || len(p.Pix) != p.N*d {
		return nil, fmt.Errorf("datasets: ZCA needs at least 2 patches of consistent size; got %d patches of %d×%d in %d values", p.N, p.Size, p.Size, len(p.Pix))
	}
	mean := make([]float64, d)
	for i, v := range p.Pix {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return nil, fmt.Errorf("datasets: ZCA: patch %d pixel %d is %v; patches must be finite", i/d, i%d, v)
		}
		mean[i%d] += float64(v)
	}
	for j := range mean {
		mean[j] /= float64(p.N)
	}
	cov := mat.NewSymDense(d, nil)
	tmp := mat.NewSymDense(d, nil)
	for start := 0; start < p.N; start += zcaBlock {
		x := centredBlock(p, mean, start, min(start+zcaBlock, p.N))
		tmp.SymOuterK(1/float64(p.N), x.T())
		cov.AddSym(cov, tmp)
	}
	var es mat.EigenSym
	if !es.Factorize(cov, true) {
		return nil, fmt.Errorf("datasets: ZCA: eigen-decomposition of the %d×%d covariance did not converge", d, d)
	}
	eig := es.Values(nil)
	var u mat.Dense
	es.VectorsTo(&u)
	scale := make([]float64, d)
	for i := range eig {
		eig[i] = math.Max(eig[i], 0)
		scale[i] = 1 / math.Sqrt(eig[i]+eps)
	}
	// W = U diag(scale) Uᵀ
	us := mat.DenseCopyOf(&u)
	for j := 0; j < d; j++ {
		for i := 0; i < d; i++ {
			us.Set(i, j, us.At(i, j)*scale[j])
		}
	}
	w := mat.NewDense(d, d, nil)
	w.Mul(us, u.T())
	// Symmetrise away rounding so that W is exactly symmetric.
	wd := w.RawMatrix().Data
	for i := 0; i < d; i++ {
		for j := i + 1; j < d; j++ {
			a := 0.5 * (wd[i*d+j] + wd[j*d+i])
			wd[i*d+j], wd[j*d+i] = a, a
		}
	}
	return &ZCA{size: p.Size, eps: eps, mean: mean, w: wd, eig: eig}, nil
}

// zcaBlock is the number of patches converted to float64 at a time, so that
// memory stays at a few MB whatever the patch count.
const zcaBlock = 4096

// centredBlock returns patches [lo, hi) minus mean as a float64 matrix.
func centredBlock(p *Patches, mean []float64, lo, hi int) *mat.Dense {
	d := len(mean)
	x := mat.NewDense(hi-lo, d, nil)
	raw := x.RawMatrix().Data
	for i := lo; i < hi; i++ {
		src := p.Patch(i)
		row := raw[(i-lo)*d : (i-lo+1)*d]
		for j, v := range src {
			row[j] = float64(v) - mean[j]
		}
	}
	return x
}

// Dim returns the patch dimension d = Size².
func (z *ZCA) Dim() int { return z.size * z.size }

// Eps returns the regulariser ε.
func (z *ZCA) Eps() float64 { return z.eps }

// Mean returns a copy of the per-pixel mean μ subtracted before whitening.
func (z *ZCA) Mean() []float64 { return append([]float64(nil), z.mean...) }

// Matrix returns a copy of W, d×d row-major.
func (z *ZCA) Matrix() []float64 { return append([]float64(nil), z.w...) }

// Eigenvalues returns a copy of the covariance eigenvalues λ, ascending.
func (z *ZCA) Eigenvalues() []float64 { return append([]float64(nil), z.eig...) }

// Apply whitens every patch of p in place: x ← W (x − μ), computed in
// float64. It panics if p's patch size differs from the fitted one.
func (z *ZCA) Apply(p *Patches) {
	if p.Size != z.size {
		panic(fmt.Sprintf("datasets: ZCA fitted on %d×%d patches applied to %d×%d", z.size, z.size, p.Size, p.Size))
	}
	d := z.Dim()
	w := mat.NewDense(d, d, z.w)
	var y mat.Dense
	for start := 0; start < p.N; start += zcaBlock {
		hi := min(start+zcaBlock, p.N)
		x := centredBlock(p, z.mean, start, hi)
		y.Reset()
		y.Mul(x, w) // rows are xᵀ; W symmetric, so xᵀW = (Wx)ᵀ
		out := y.RawMatrix().Data
		dst := p.Pix[start*d : hi*d]
		for i := range dst {
			dst[i] = float32(out[i])
		}
	}
}
