package nn

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
)

// GemmNTFunc computes c = a·bᵀ for row-major a (m×p), b (n×p), c (m×n),
// overwriting c.
type GemmNTFunc func(c, a, b []float32, m, n, p int)

// GemmNTGonum is the GemmNTFunc on gonum's blas32 (the default).
func GemmNTGonum(c, a, b []float32, m, n, p int) {
	if m == 0 || n == 0 {
		return
	}
	blas32.Gemm(blas.NoTrans, blas.Trans, 1,
		blas32.General{Rows: m, Cols: p, Stride: p, Data: a},
		blas32.General{Rows: n, Cols: p, Stride: p, Data: b},
		0, blas32.General{Rows: m, Cols: n, Stride: n, Data: c})
}

// Plain is the hand-written float32 engine (see the package comment). Every
// matrix product is one call of a GemmNTFunc (c = a·bᵀ, both operands read
// along rows), so a faster kernel (package learn's SIMD build) plugs in
// through NewPlain; the weight gradients dW = dZᵀ·X are formed as
// (dZᵀ)·(Xᵀ)ᵀ from transposed copies of the batch.
type Plain struct {
	spec   Spec
	gemm   GemmNTFunc
	params [][]float32
	x, y   []float32
	z      []float32 // B×K logits, then dZ
	a, da  []float32 // B×H activations and their gradient (mlp)
	// transposes: of the layer input (in×B), of the output gradient (out×B),
	// and of W2 (H×K)
	tin, tout, w2t []float32
}

// NewPlain validates s (which must be float32) and allocates the engine.
// gemm nil means GemmNTGonum.
func NewPlain(s Spec, gemm GemmNTFunc) (*Plain, error) {
	if err := s.validate(); err != nil {
		return nil, err
	}
	if s.Float64 {
		return nil, fmt.Errorf("nn: the plain engine is float32 only")
	}
	if gemm == nil {
		gemm = GemmNTGonum
	}
	p := &Plain{spec: s, gemm: gemm,
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
	wide := max(s.In, s.Hidden)
	p.tin = make([]float32, wide*s.Batch)
	p.tout = make([]float32, max(s.Hidden, s.Out)*s.Batch)
	if s.Hidden > 0 {
		p.a = make([]float32, s.Batch*s.Hidden)
		p.da = make([]float32, s.Batch*s.Hidden)
		p.w2t = make([]float32, s.Hidden*s.Out)
	}
	return p, nil
}

func (p *Plain) Spec() Spec            { return p.spec }
func (p *Plain) Params32() [][]float32 { return p.params }
func (p *Plain) X32() []float32        { return p.x }
func (p *Plain) Y32() []float32        { return p.y }
func (p *Plain) Close() error          { return nil }

// transpose sets dst (cols×rows) = srcᵀ for row-major src (rows×cols).
func transpose(dst, src []float32, rows, cols int) {
	const tile = 32
	for r0 := 0; r0 < rows; r0 += tile {
		r1 := min(rows, r0+tile)
		for c0 := 0; c0 < cols; c0 += tile {
			c1 := min(cols, c0+tile)
			for r := r0; r < r1; r++ {
				row := src[r*cols : (r+1)*cols]
				for c := c0; c < c1; c++ {
					dst[c*rows+r] = row[c]
				}
			}
		}
	}
}

// forwardAffine sets out (B×m) = in (B×n) · Wᵀ + 1·bᵀ with W m×n.
func (p *Plain) forwardAffine(out, in, W, b []float32, B, n, m int) {
	p.gemm(out, in, W, B, m, n)
	for i := 0; i < B; i++ {
		row := out[i*m : (i+1)*m]
		for j, v := range b {
			row[j] += v
		}
	}
}

// backwardAffine sets dW (m×n) = dOutᵀ·in and db = column sums of dOut.
func (p *Plain) backwardAffine(dW, db, dOut, in []float32, B, n, m int) {
	tin, tout := p.tin[:n*B], p.tout[:m*B]
	transpose(tin, in, B, n)
	transpose(tout, dOut, B, m)
	p.gemm(dW, tout, tin, m, n, B)
	for j := range db {
		var s float32
		for _, v := range tout[j*B : (j+1)*B] {
			s += v
		}
		db[j] = s
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
		p.forwardAffine(p.z, p.x, p.params[0], p.params[1], B, D, K)
		loss = softmaxCE(p.z, p.y, B, K)
		p.backwardAffine(g[0], g[1], p.z, p.x, B, D, K)
	} else {
		p.forwardAffine(p.a, p.x, p.params[0], p.params[1], B, D, H)
		for i, v := range p.a {
			if v < 0 {
				p.a[i] = 0
			}
		}
		p.forwardAffine(p.z, p.a, p.params[2], p.params[3], B, H, K)
		loss = softmaxCE(p.z, p.y, B, K)
		p.backwardAffine(g[2], g[3], p.z, p.a, B, H, K)
		// dA = dZ·W2 = dZ·(W2ᵀ)ᵀ, masked by the ReLU.
		transpose(p.w2t, p.params[2], K, H)
		p.gemm(p.da, p.z, p.w2t, B, H, K)
		for i, v := range p.a {
			if v <= 0 {
				p.da[i] = 0
			}
		}
		p.backwardAffine(g[0], g[1], p.da, p.x, B, D, H)
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
