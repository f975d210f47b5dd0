package nn

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
)

// Plain is the hand-written float32 engine (see the package comment). Its
// matrix products go through gonum's blas32 with the weight matrices stored
// out×in, so the forward product X·Wᵀ runs on dot kernels and the weight
// gradient dZᵀ·X on axpy kernels along the long input dimension.
type Plain struct {
	spec   Spec
	params [][]float32
	x, y   []float32
	z      []float32 // B×K logits, then dZ
	a, da  []float32 // B×H activations and their gradient (mlp)
}

// NewPlain validates s (which must be float32) and allocates the engine.
func NewPlain(s Spec) (*Plain, error) {
	if err := s.validate(); err != nil {
		return nil, err
	}
	if s.Float64 {
		return nil, fmt.Errorf("nn: the plain engine is float32 only")
	}
	p := &Plain{spec: s,
		x: make([]float32, s.Batch*s.In),
		y: make([]float32, s.Batch*s.Out),
		z: make([]float32, s.Batch*s.Out),
	}
	for _, sh := range s.ParamShapes() {
		n := 1
		for _, v := range sh {
			n *= v
		}
		p.params = append(p.params, make([]float32, n))
	}
	if s.Hidden > 0 {
		p.a = make([]float32, s.Batch*s.Hidden)
		p.da = make([]float32, s.Batch*s.Hidden)
	}
	return p, nil
}

func (p *Plain) Spec() Spec            { return p.spec }
func (p *Plain) Params32() [][]float32 { return p.params }
func (p *Plain) X32() []float32        { return p.x }
func (p *Plain) Y32() []float32        { return p.y }
func (p *Plain) Close() error          { return nil }

func gen(rows, cols int, data []float32) blas32.General {
	return blas32.General{Rows: rows, Cols: cols, Stride: cols, Data: data}
}

// forwardAffine sets out (B×m) = in (B×n) · Wᵀ + 1·bᵀ with W m×n.
func forwardAffine(out, in, W, b []float32, B, n, m int) {
	for i := 0; i < B; i++ {
		copy(out[i*m:(i+1)*m], b)
	}
	blas32.Gemm(blas.NoTrans, blas.Trans, 1, gen(B, n, in), gen(m, n, W), 1, gen(B, m, out))
}

// backwardAffine sets dW (m×n) = dOutᵀ·in and db = column sums of dOut.
func backwardAffine(dW, db, dOut, in []float32, B, n, m int) {
	blas32.Gemm(blas.Trans, blas.NoTrans, 1, gen(B, m, dOut), gen(B, n, in), 0, gen(m, n, dW))
	clear(db)
	for i := 0; i < B; i++ {
		for j, v := range dOut[i*m : (i+1)*m] {
			db[j] += v
		}
	}
}

// Eval implements Engine; grads must be [][]float32.
func (p *Plain) Eval(grads any) (float64, error) {
	g, ok := grads.([][]float32)
	if !ok || len(g) != len(p.params) {
		return 0, fmt.Errorf("nn: plain engine wants %d float32 gradient slices, got %T", len(p.params), grads)
	}
	for i := range g {
		if len(g[i]) != len(p.params[i]) {
			return 0, fmt.Errorf("nn: gradient %d has length %d, want %d", i, len(g[i]), len(p.params[i]))
		}
	}
	s := p.spec
	B, D, H, K := s.Batch, s.In, s.Hidden, s.Out
	var loss float64
	if H == 0 {
		forwardAffine(p.z, p.x, p.params[0], p.params[1], B, D, K)
		loss = softmaxCE(p.z, p.y, B, K)
		backwardAffine(g[0], g[1], p.z, p.x, B, D, K)
	} else {
		forwardAffine(p.a, p.x, p.params[0], p.params[1], B, D, H)
		for i, v := range p.a {
			if v < 0 {
				p.a[i] = 0
			}
		}
		forwardAffine(p.z, p.a, p.params[2], p.params[3], B, H, K)
		loss = softmaxCE(p.z, p.y, B, K)
		backwardAffine(g[2], g[3], p.z, p.a, B, H, K)
		// dA = dZ·W2, masked by the ReLU.
		blas32.Gemm(blas.NoTrans, blas.NoTrans, 1, gen(B, K, p.z), gen(K, H, p.params[2]), 0, gen(B, H, p.da))
		for i, v := range p.a {
			if v <= 0 {
				p.da[i] = 0
			}
		}
		backwardAffine(g[0], g[1], p.da, p.x, B, D, H)
	}
	if s.L2 > 0 {
		lam := float32(s.L2)
		for _, wi := range []int{0, 2} {
			if wi >= len(p.params) {
				break
			}
			var sq float64
			w, gw := p.params[wi], g[wi]
			for j, v := range w {
				sq += float64(v) * float64(v)
				gw[j] += lam * v
			}
			loss += s.L2 / 2 * sq
		}
	}
	if math.IsNaN(loss) || math.IsInf(loss, 0) {
		return loss, ErrNonFinite
	}
	return loss, nil
}

// softmaxCE returns −(1/B) Σ_i Σ_k Y_ik log softmax(Z_i)_k and overwrites z
// with dloss/dZ = (softmax(Z) − Y)/B. Sums run in float64.
func softmaxCE(z, y []float32, B, K int) float64 {
	var loss float64
	invB := 1 / float64(B)
	for i := 0; i < B; i++ {
		zr, yr := z[i*K:(i+1)*K], y[i*K:(i+1)*K]
		mx := zr[0]
		for _, v := range zr[1:] {
			mx = max(mx, v)
		}
		var se float64
		for _, v := range zr {
			se += math.Exp(float64(v - mx))
		}
		lse := math.Log(se)
		for k, v := range zr {
			lp := float64(v-mx) - lse
			if yr[k] != 0 {
				loss -= float64(yr[k]) * lp
			}
			zr[k] = float32((math.Exp(lp) - float64(yr[k])) * invB)
		}
	}
	return loss * invB
}
