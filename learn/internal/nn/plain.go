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

// GemmNNFunc computes c = a·b for row-major a (m×p), b (p×n), c (m×n),
// overwriting c.
type GemmNNFunc func(c, a, b []float32, m, n, p int)

// Kernels are the two matrix products of the plain engine; a nil field
// means gonum's (GemmNTGonum, GemmNNGonum). With several workers both must
// be safe for concurrent use.
type Kernels struct {
	NT GemmNTFunc // c = a·bᵀ: forward passes and dA
	NN GemmNNFunc // c = a·b: weight gradients dW = dZᵀ·X read the layer input in place
	// PackNN and NNPacked, both set or both nil, split an NN product whose b
	// several products read: PackNN writes rows [q0, q1) of b (p×n) into
	// pk (disjoint row ranges may be packed concurrently), NNPacked
	// computes c = a·b from pk with NN's bits. An mlp's chunks then pack
	// their input rows once per step for all the blocks of dW1.
	PackNN   func(pk, b []float32, p, n, q0, q1 int)
	NNPacked func(c, a, pk []float32, m, n, p int)
	// PackNT and NTPacked, both set or both nil, do the same for an NT
	// product: PackNT packs all of b (n×p) into pk, NTPacked computes
	// c = a·bᵀ from pk with NT's bits. An mlp's chunks then pack their
	// rows once per step for all the blocks of the hidden forward pass.
	PackNT   func(pk, b []float32, n, p int)
	NTPacked func(c, a, pk []float32, m, n, p int)
}

// GemmNNGonum is the GemmNNFunc on gonum's blas32 (the default).
func GemmNNGonum(c, a, b []float32, m, n, p int) {
	if m == 0 || n == 0 {
		return
	}
	blas32.Gemm(blas.NoTrans, blas.NoTrans, 1,
		blas32.General{Rows: m, Cols: p, Stride: p, Data: a},
		blas32.General{Rows: p, Cols: n, Stride: n, Data: b},
		0, blas32.General{Rows: m, Cols: n, Stride: n, Data: c})
}

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
// matrix product is one call of a Kernels product, so faster kernels
// (package learn's SIMD build) plug in through NewPlain: forward passes
// and dA are c = a·bᵀ products, the weight gradients dW = dZᵀ·X are c = a·b
// products of the transposed output gradient with the layer input as it
// lies in memory.
//
// The batch is split into Spec.Chunks row chunks (rows [c·B/C, (c+1)·B/C)),
// each with its own scratch; the work of Eval is cut into units fixed by the
// Spec alone and run on the goroutines of a Team in two Runs (softmax) or
// four (mlp), every unit writing its own outputs, so any number of workers
// gives the same loss and gradient bit for bit:
//
//  1. per chunk: the forward pass, the chunk's loss terms and the backward
//     pass down to dZ (and, for an mlp, the hidden layer's dA), written into
//     the chunk's rows of whole-batch buffers; the gradient shares of the
//     small tensors (softmax W and b; mlp W2 and b2), whose terms are
//     already divided by the whole batch size B. Beside them, per range of
//     reduceRange weights, Σ w² for the L2 term of the loss. An mlp runs
//     this step as three Runs: the chunks' inputs (the Fill hook) beside
//     Σ w²; then the hidden layer's forward pass per block of
//     plainForwardBlock hidden units, for every chunk in turn, so that the
//     block of W1 is read from memory once per step and from the L2 cache
//     for the other chunks (W1 is 2.2 MB at 1,077 features and 512 units;
//     every chunk reading all of it cost a third of the product's speed);
//     then the rest of each chunk's passes.
//  2. per block of plainHiddenBlock hidden units (mlp): that block's rows of
//     dW1 = dAᵀ·X and db1 over the whole batch, so the big product keeps the
//     batch as its inner dimension and no chunk holds a copy of dW1; per
//     range of reduceRange values of the small tensors: the chunks' shares
//     summed in chunk order 0, 1, …, C−1. Each unit then adds the L2 term's
//     gradient λ·W to its weights' gradients.
//
// Hooks (SetHooks) fold a caller's per-step work into the same two Runs: the
// minibatch rows a chunk reads are written by the chunk's own unit, and the
// optimiser step of a gradient block (with the L2 term's gradient) by the
// unit that finished it, so a training step needs no Runs of its own and
// reads the weights once fewer.
type Plain struct {
	spec     Spec
	gemm     GemmNTFunc
	gemmNN   GemmNNFunc
	packNN   func(pk, b []float32, p, n, q0, q1 int)
	nnPacked func(c, a, pk []float32, m, n, p int)
	xnn      []float32 // the batch input packed by packNN (mlp with packNN)
	packNT   func(pk, b []float32, n, p int)
	ntPacked func(c, a, pk []float32, m, n, p int)
	team     *Team
	params   [][]float32
	x, y     []float32
	w2t      []float32 // W2ᵀ (H×K), shared by the chunks (mlp)
	// the whole-batch dAᵀ (H×B) the hidden blocks read (mlp)
	dat    []float32
	chunks []plainChunk
	shared []bool       // per tensor: summed from chunk shares (else written by the hidden blocks)
	ranges []paramRange // reduction units over the shared tensors
	wsq    []paramRange // ranges of the weight tensors (L2 term), reduceRange long
	sq     []float64    // per wsq range: Σ w² of its weights (L2 term)
	grads  [][]float32  // the caller's gradients during Eval
	hooks  Hooks
	// func values made once, so that Eval allocates nothing
	firstFn, secondFn, forwardFn, chunkFn func(int)
}

// Hooks are a caller's additions to Eval (see SetHooks).
type Hooks struct {
	// Fill, if not nil, writes rows [r0, r1) of X32 and Y32; Eval calls it
	// for each chunk's rows, on the chunk's goroutine, before the chunk reads
	// them.
	Fill func(r0, r1 int)
	// Update, if not nil, receives elements [lo, hi) of parameter tensor i
	// once their gradient is final but for the L2 term, on the goroutine
	// that finished them, while other blocks are still being computed; it
	// may change those parameters (and nothing else Eval reads). lam is the
	// L2 term's λ for a weight tensor and 0 for a bias or without the term:
	// the gradient is g + lam·w, which Update must form as l2Add does (a
	// float32 multiplication, then an addition) before it uses it, so that
	// the L2 term needs no pass over the weights of its own. The calls cover
	// every parameter exactly once per Eval, in no fixed order. With Update
	// set the gradients Eval leaves in grads lack the L2 term.
	Update func(i, lo, hi int, lam float32)
}

// plainChunk is one row chunk's scratch.
type plainChunk struct {
	r0, r1 int         // rows [r0, r1) of the batch
	z      []float32   // rows×K logits, then dZ
	at, a  []float32   // activations Aᵀ (H×rows) and A (rows×H) (mlp)
	da     []float32   // their gradient dAᵀ (H×rows) (mlp)
	tout   []float32   // the transpose of dZ (K×rows)
	xnt    []float32   // its input rows packed by packNT (mlp with packNT)
	g      [][]float32 // gradient shares of the shared tensors (chunk 0: the caller's)
	loss   float64     // Σ over its rows of −log p(y), not yet divided by B
}

// paramRange is elements [lo, hi) of parameter tensor i.
type paramRange struct{ i, lo, hi int }

// reduceRange is the length of one reduction unit: large enough that handing
// out a unit costs nothing beside summing it, small enough that the units
// spread over a handful of workers. plainHiddenBlock is the row count of one
// dW1 unit: 128 rows give a 512-unit layer 4 units, while each unit's
// product is still big enough that packing Xᵀ for it is a small overhead.
// plainForwardBlock is the row count of one unit of an mlp's hidden
// forward pass: 64 rows of W1 (276 KB at 1,077 features) stay in a 512 KB
// L2 cache beside a chunk's packed inputs while the chunks pass, and a
// 512-unit layer gets 8 units.
const (
	reduceRange       = 1 << 14
	plainHiddenBlock  = 128
	plainForwardBlock = 64
)

// NewPlain validates s (which must be float32) and allocates the engine.
// team runs the work units and may be nil (all on the caller); Plain does
// not close it.
func NewPlain(s Spec, k Kernels, team *Team) (*Plain, error) {
	if err := s.validate(); err != nil {
		return nil, err
	}
	if s.Float64 {
		return nil, fmt.Errorf("nn: the plain engine is float32 only")
	}
	if k.NT == nil {
		k.NT = GemmNTGonum
	}
	if k.NN == nil {
		k.NN = GemmNNGonum
	}
	if (k.PackNN == nil) != (k.NNPacked == nil) || (k.PackNT == nil) != (k.NTPacked == nil) {
		return nil, fmt.Errorf("nn: Kernels.PackNN and NNPacked, PackNT and NTPacked must be set together")
	}
	p := &Plain{spec: s, gemm: k.NT, gemmNN: k.NN, team: team,
		x: make([]float32, s.Batch*s.In),
		y: make([]float32, s.Batch*s.Out),
	}
	if s.Hidden > 0 && k.PackNN != nil {
		p.packNN, p.nnPacked = k.PackNN, k.NNPacked
		p.xnn = make([]float32, (s.In+15)/16*16*s.Batch)
	}
	if s.Hidden > 0 && k.PackNT != nil {
		p.packNT, p.ntPacked = k.PackNT, k.NTPacked
	}
	for i, sh := range s.ParamShapes() {
		n := 1
		for _, v := range sh {
			n *= v
		}
		p.params = append(p.params, make([]float32, n))
		p.shared = append(p.shared, s.Hidden == 0 || i >= 2)
		for lo := 0; lo < n; lo += reduceRange {
			r := paramRange{i, lo, min(n, lo+reduceRange)}
			if p.shared[i] {
				p.ranges = append(p.ranges, r)
			}
			if s.L2 > 0 && (i == 0 || i == 2) {
				p.wsq = append(p.wsq, r)
			}
		}
	}
	p.sq = make([]float64, len(p.wsq))
	if s.Hidden > 0 {
		p.w2t = make([]float32, s.Hidden*s.Out)
		p.dat = make([]float32, s.Hidden*s.Batch)
	}
	nc := s.chunks()
	for c := 0; c < nc; c++ {
		ch := plainChunk{r0: c * s.Batch / nc, r1: (c + 1) * s.Batch / nc}
		rows := ch.r1 - ch.r0
		ch.z = make([]float32, rows*s.Out)
		ch.tout = make([]float32, s.Out*rows)
		if p.packNT != nil {
			ch.xnt = make([]float32, (rows+15)/16*16*s.In)
		}
		if s.Hidden > 0 {
			ch.a = make([]float32, rows*s.Hidden)
			ch.at = make([]float32, rows*s.Hidden)
			ch.da = make([]float32, rows*s.Hidden)
		}
		if c > 0 {
			for i, q := range p.params {
				var share []float32
				if p.shared[i] {
					share = make([]float32, len(q))
				}
				ch.g = append(ch.g, share)
			}
		}
		p.chunks = append(p.chunks, ch)
	}
	p.firstFn, p.secondFn, p.forwardFn, p.chunkFn = p.first, p.second, p.forward, p.chunkTail
	return p, nil
}

// SetHooks installs h for the following Evals (the zero Hooks removes them).
func (p *Plain) SetHooks(h Hooks) { p.hooks = h }

// hiddenBlocks returns the number of dW1 units (0 for softmax).
func (p *Plain) hiddenBlocks() int {
	return (p.spec.Hidden + plainHiddenBlock - 1) / plainHiddenBlock
}

func (p *Plain) Spec() Spec            { return p.spec }
func (p *Plain) Params32() [][]float32 { return p.params }
func (p *Plain) X32() []float32        { return p.x }
func (p *Plain) Y32() []float32        { return p.y }
func (p *Plain) Close() error          { return nil }

// transpose sets dst[c·ld + r] = src[r·cols + c] for row-major src
// (rows×cols): dst (cols×rows) = srcᵀ when ld = rows, or a column block of a
// wider matrix with ld columns. The SIMD build replaces it by 8×8 register
// transposes (a copy either way).
var transpose = transposeGo

func transposeGo(dst, src []float32, rows, cols, ld int) {
	const tile = 32
	for r0 := 0; r0 < rows; r0 += tile {
		r1 := min(rows, r0+tile)
		for c0 := 0; c0 < cols; c0 += tile {
			c1 := min(cols, c0+tile)
			for r := r0; r < r1; r++ {
				row := src[r*cols : (r+1)*cols]
				for c := c0; c < c1; c++ {
					dst[c*ld+r] = row[c]
				}
			}
		}
	}
}

// rowSums sets dst[j] = Σ of row j (length n) of the row-major m.
func rowSums(dst, m []float32, n int) {
	for j := range dst {
		var s float32
		for _, v := range m[j*n : (j+1)*n] {
			s += v
		}
		dst[j] = s
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
	p.grads = g
	p.team.Run(len(p.chunks)+len(p.wsq), p.firstFn)
	if s.Hidden > 0 {
		transpose(p.w2t, p.params[2], s.Out, s.Hidden, s.Out)
		p.team.Run((s.Hidden+plainForwardBlock-1)/plainForwardBlock, p.forwardFn)
		p.team.Run(len(p.chunks), p.chunkFn)
	}
	p.team.Run(p.hiddenBlocks()+len(p.ranges), p.secondFn)
	p.grads = nil
	var ce, sq float64
	for _, ch := range p.chunks {
		ce += ch.loss
	}
	for _, v := range p.sq {
		sq += v
	}
	loss := ce / float64(s.Batch)
	if s.L2 > 0 {
		loss += s.L2 / 2 * sq
	}
	if math.IsNaN(loss) || math.IsInf(loss, 0) {
		return loss, ErrNonFinite
	}
	return loss, nil
}

// first runs unit u of Eval's first Run: chunk u (an mlp's: its input
// only, and its rows of the packed input), or Σ w² of a weight range.
func (p *Plain) first(u int) {
	if u < len(p.chunks) {
		ch := &p.chunks[u]
		if p.hooks.Fill != nil {
			p.hooks.Fill(ch.r0, ch.r1)
		}
		if p.spec.Hidden == 0 {
			p.evalChunk(u)
		} else {
			D := p.spec.In
			if p.packNN != nil {
				p.packNN(p.xnn, p.x, p.spec.Batch, D, ch.r0, ch.r1)
			}
			if p.packNT != nil {
				p.packNT(ch.xnt, p.x[ch.r0*D:ch.r1*D], ch.r1-ch.r0, D)
			}
		}
		return
	}
	r := p.wsq[u-len(p.chunks)]
	p.sq[u-len(p.chunks)] = l2Sq(p.params[r.i][r.lo:r.hi])
}

// second runs unit u of Eval's second Run: a dW1 block, or a range of a
// shared tensor; then the L2 gradient and the Update hook for what it
// finished.
func (p *Plain) second(u int) {
	if nh := p.hiddenBlocks(); u < nh {
		p.hiddenBlock(u)
		s := p.spec
		h0, h1 := u*plainHiddenBlock, min(s.Hidden, (u+1)*plainHiddenBlock)
		p.finish(0, h0*s.In, h1*s.In)
		p.finish(1, h0, h1)
		return
	}
	r := p.ranges[u-p.hiddenBlocks()]
	p.reduce(r)
	p.finish(r.i, r.lo, r.hi)
}

// finish adds the L2 term's gradient λ·W to elements [lo, hi) of the
// gradient of tensor i (weight tensors 0 and 2 only), or hands them to the
// Update hook, which adds it.
func (p *Plain) finish(i, lo, hi int) {
	var lam float32
	if p.spec.L2 > 0 && (i == 0 || i == 2) {
		lam = float32(p.spec.L2)
	}
	if p.hooks.Update != nil {
		p.hooks.Update(i, lo, hi, lam)
		return
	}
	if lam != 0 {
		l2Add(p.grads[i][lo:hi], p.params[i][lo:hi], lam)
	}
}

// evalChunk runs chunk c's forward and backward pass of a softmax
// regression (see Plain).
func (p *Plain) evalChunk(c int) {
	s := p.spec
	ch := &p.chunks[c]
	g := ch.g
	if c == 0 {
		g = p.grads
	}
	B, D, K := ch.r1-ch.r0, s.In, s.Out
	x, y := p.x[ch.r0*D:ch.r1*D], p.y[ch.r0*K:ch.r1*K]
	invB := 1 / float64(s.Batch)
	tout := ch.tout[:K*B]
	p.forwardAffine(ch.z, x, p.params[0], p.params[1], B, D, K)
	ch.loss = softmaxCE(ch.z, y, B, K, invB)
	transpose(tout, ch.z, B, K, B)
	p.gemmNN(g[0], tout, x, K, D, B)
	rowSums(g[1], tout, B)
}

// forward runs unit u of an mlp's forward Run: rows [u·plainForwardBlock,
// …) of every chunk's hidden activations. The hidden layer runs
// transposed, Aᵀ = W1·Xᵀ (H×rows): the product kernel then packs the
// chunk's rows rather than the block of W1.
func (p *Plain) forward(u int) {
	s := p.spec
	D := s.In
	h0, h1 := u*plainForwardBlock, min(s.Hidden, (u+1)*plainForwardBlock)
	w1 := p.params[0][h0*D : h1*D]
	for c := range p.chunks {
		ch := &p.chunks[c]
		B := ch.r1 - ch.r0
		at := ch.at[h0*B : h1*B]
		if p.ntPacked != nil {
			p.ntPacked(at, w1, ch.xnt, h1-h0, B, D)
		} else {
			p.gemm(at, w1, p.x[ch.r0*D:ch.r1*D], h1-h0, B, D)
		}
		biasReLURows(at, p.params[1][h0:h1], B)
	}
}

// chunkTail runs chunk c's passes after the hidden activations (mlp).
func (p *Plain) chunkTail(c int) {
	s := p.spec
	ch := &p.chunks[c]
	g := ch.g
	if c == 0 {
		g = p.grads
	}
	B, H, K := ch.r1-ch.r0, s.Hidden, s.Out
	y := p.y[ch.r0*K : ch.r1*K]
	invB := 1 / float64(s.Batch)
	tout := ch.tout[:K*B]
	at := ch.at
	transpose(ch.a, at, H, B, H)
	p.forwardAffine(ch.z, ch.a, p.params[2], p.params[3], B, H, K)
	ch.loss = softmaxCE(ch.z, y, B, K, invB)
	// dW2 share = dZᵀ·A = (dZᵀ)·(Aᵀ)ᵀ; db2 share = column sums of dZ.
	transpose(tout, ch.z, B, K, B)
	p.gemm(g[2], tout, at, K, H, B)
	rowSums(g[3], tout, B)
	// dAᵀ = W2ᵀ·dZᵀ = (W2ᵀ)·(dZ)ᵀ, masked by the ReLU, into the chunk's
	// columns of the whole-batch dAᵀ.
	da := ch.da
	p.gemm(da, p.w2t, ch.z, H, B, K)
	Bw := s.Batch
	for h := 0; h < H; h++ {
		maskReLU(p.dat[h*Bw+ch.r0:h*Bw+ch.r1], da[h*B:(h+1)*B], at[h*B:(h+1)*B])
	}
}

// hiddenBlock computes rows [u·plainHiddenBlock, …) of dW1 = dAᵀ·X and of
// db1 = row sums of dAᵀ, over the whole batch.
func (p *Plain) hiddenBlock(u int) {
	s := p.spec
	B, D := s.Batch, s.In
	h0, h1 := u*plainHiddenBlock, min(s.Hidden, (u+1)*plainHiddenBlock)
	dat := p.dat[h0*B : h1*B]
	if p.nnPacked != nil {
		p.nnPacked(p.grads[0][h0*D:h1*D], dat, p.xnn, h1-h0, D, B)
	} else {
		p.gemmNN(p.grads[0][h0*D:h1*D], dat, p.x, h1-h0, D, B)
	}
	rowSums(p.grads[1][h0:h1], dat, B)
}

// reduce sums the chunks' gradient shares over range r of a shared tensor
// in chunk order.
func (p *Plain) reduce(r paramRange) {
	dst := p.grads[r.i][r.lo:r.hi]
	for _, ch := range p.chunks[1:] {
		for j, v := range ch.g[r.i][r.lo:r.hi] {
			dst[j] += v
		}
	}
}

// softmaxCE returns −Σ_i Σ_k Y_ik log softmax(Z_i)_k over the B rows of z and
// overwrites z with dloss/dZ = (softmax(Z) − Y)·invB, invB = 1/(whole batch
// size). Sums run in float64.
func softmaxCE(z, y []float32, B, K int, invB float64) float64 {
	var loss float64
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
	return loss
}
