package learn

import (
	"math"
	"reflect"

	"github.com/striate/striate/learn/internal/nn"
	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas32"
)

// One optimiser step of the "go" engine is spread over HeadFitOptions.Workers
// goroutines in three kinds of work, each cut into units fixed by the data
// and the config alone (never by the number of workers), every unit writing
// its own output, so a fit is bit-identical whatever Workers is:
//
//  1. the minibatch rows are standardised into the engine's input, row by
//     row;
//  2. the engine evaluates headChunks(batch) row chunks of the minibatch and
//     sums their gradient shares in chunk order (nn.Plain);
//  3. the optimiser updates the parameters element by element (Adam and
//     SGD act element by element).
//
// With the "go" engine 1 and 3 run inside the engine's two Runs (nn.Hooks):
// each chunk standardises its own rows, and each block of the gradient is
// stepped by the unit that finished it. The gorgonia engine runs them as
// Runs of their own, in blocks of headFillRows rows and headUpdateRange
// elements.

// headChunkRows is the target row count of one gradient chunk: 32 rows keep
// the products' inner dimension long enough for the packed SIMD kernel while
// a 128-row minibatch (the default) still feeds 4 workers. headMaxChunks caps
// the chunk count, since each chunk beyond the first holds a full copy of the
// gradient (8 × 2.2 MB at 1,085 features and 512 hidden units).
const (
	headChunkRows   = 32
	headMaxChunks   = 8
	headFillRows    = 16
	headUpdateRange = 1 << 14
)

// headChunks returns the number of gradient chunks of a minibatch of the
// given size: ⌈batch/headChunkRows⌉, at most headMaxChunks.
func headChunks(batch int) int {
	return max(1, min(headMaxChunks, (batch+headChunkRows-1)/headChunkRows))
}

// headStepper holds one fit's step phases 1 and 3 (see above) and their
// scratch, so that a step allocates nothing.
type headStepper struct {
	team *nn.Team
	// phase 1: rows[b] is the training row of minibatch row b
	X, mean, std []float32
	y            []int
	d, k         int
	rows         []int
	xb, yb       []float32
	// phase 3
	params, grads [][]float32
	st            *headState
	adam          bool
	units         []headRange
	step, eps, mu float32 // adam step size and ε̂; sgd momentum (step is then lr)

	fillFn, updateFn func(int)
	rowsFn           func(b0, b1 int)
	rangeFn          func(i, lo, hi int, lam float32)
}

// headRange is elements [lo, hi) of parameter tensor i.
type headRange struct{ i, lo, hi int }

func newHeadStepper(team *nn.Team, X []float32, y []int, d, k int, mean, std, xb, yb []float32,
	params, grads [][]float32, st *headState, cfg HeadConfig) *headStepper {
	s := &headStepper{team: team, X: X, y: y, d: d, k: k, mean: mean, std: std,
		rows: make([]int, len(yb)/k), xb: xb, yb: yb,
		params: params, grads: grads, st: st, adam: cfg.Optimizer == OptAdam,
		mu: float32(max(0, cfg.Momentum))}
	for i, p := range params {
		for lo := 0; lo < len(p); lo += headUpdateRange {
			s.units = append(s.units, headRange{i, lo, min(len(p), lo+headUpdateRange)})
		}
	}
	s.fillFn, s.updateFn = s.fill, s.update
	s.rowsFn, s.rangeFn = s.fillRows, s.updateRange
	return s
}

// hooks returns the engine hooks that fold phases 1 and 3 into nn.Plain's
// Runs; prepare must be called before each Eval.
func (s *headStepper) hooks() nn.Hooks { return nn.Hooks{Fill: s.rowsFn, Update: s.rangeFn} }

// fillBatch standardises the training rows s.rows into the engine's input
// and writes their one-hot targets.
func (s *headStepper) fillBatch() {
	s.team.Run((len(s.rows)+headFillRows-1)/headFillRows, s.fillFn)
}

func (s *headStepper) fill(u int) {
	s.fillRows(u*headFillRows, min(len(s.rows), (u+1)*headFillRows))
}

// fillRows standardises minibatch rows [b0, b1) and writes their targets.
func (s *headStepper) fillRows(b0, b1 int) {
	d, k := s.d, s.k
	clear(s.yb[b0*k : b1*k])
	for b := b0; b < b1; b++ {
		r := s.rows[b]
		row := s.X[r*d : (r+1)*d]
		standardizeRow(s.xb[b*d:(b+1)*d], row, s.mean, s.std)
		s.yb[b*k+s.y[r]] = 1
	}
}

// standardizeRow sets dst[j] = (x[j] − mean[j]) / std[j], a float32
// subtraction and division per element. The SIMD build replaces it by an
// 8-lane version; IEEE 754 rounds both operations correctly in either, so
// the bits are the same (TestStandardizeRowMatchesScalar).
var standardizeRow = standardizeRowGo

func standardizeRowGo(dst, x, mean, std []float32) {
	dst, mean, std = dst[:len(x)], mean[:len(x)], std[:len(x)]
	for j, v := range x {
		dst[j] = (v - mean[j]) / std[j]
	}
}

// apply performs one optimiser step with learning rate lr (st.t already
// counts it) on the whole gradient.
func (s *headStepper) apply(lr float64) {
	s.prepare(lr)
	s.team.Run(len(s.units), s.updateFn)
}

// prepare sets the step sizes of the optimiser step st.t with learning rate lr.
func (s *headStepper) prepare(lr float64) {
	if s.adam {
		// Kingma & Ba (2015), Algorithm 1, with the bias corrections folded
		// into the step size: α_t = α·sqrt(1−β2^t)/(1−β1^t) and ε̂ = ε·sqrt(1−β2^t).
		t := float64(s.st.t)
		c2 := math.Sqrt(1 - math.Pow(adamBeta2, t))
		s.step = float32(lr * c2 / (1 - math.Pow(adamBeta1, t)))
		s.eps = float32(adamEps * c2)
	} else {
		s.step = float32(lr)
	}
}

func (s *headStepper) update(u int) {
	r := s.units[u]
	s.updateRange(r.i, r.lo, r.hi, 0)
}

// updateRange steps elements [lo, hi) of parameter tensor i on the
// gradient g + lam·p (see nn.Hooks.Update; lam 0: g as it is).
func (s *headStepper) updateRange(i, lo, hi int, lam float32) {
	p, g := s.params[i][lo:hi], s.grads[i][lo:hi]
	m := s.st.opt1[i][lo:hi]
	if s.adam {
		if lam != 0 {
			adamL2Range(p, g, m, s.st.opt2[i][lo:hi], lam, s.step, s.eps)
		} else {
			adamRange(p, g, m, s.st.opt2[i][lo:hi], s.step, s.eps)
		}
		return
	}
	mu, a := s.mu, s.step
	g, m = g[:len(p)], m[:len(p)]
	if lam != 0 {
		for j := range p {
			m[j] = mu*m[j] + (g[j] + float32(lam*p[j]))
			p[j] -= a * m[j]
		}
		return
	}
	for j := range p {
		m[j] = mu*m[j] + g[j]
		p[j] -= a * m[j]
	}
}

// adamRange applies one Adam step (Kingma & Ba 2015, Algorithm 1, the bias
// corrections folded into step and eps, see apply) to the parameters p with
// gradients g and moments m, v, all of one length. The SIMD build replaces
// it by 8-lane code doing the same float32 operations in the same order
// (float32 square roots are correctly rounded either way), so both give the
// same bits (TestAdamRangeMatchesScalar).
var (
	adamRange   = adamRangeGo
	adamL2Range = adamL2RangeGo
)

func adamRangeGo(p, g, m, v []float32, step, eps float32) {
	const b1, b2 = float32(adamBeta1), float32(adamBeta2)
	g, m, v = g[:len(p)], m[:len(p)], v[:len(p)]
	for j := range p {
		gj := g[j]
		m[j] = b1*m[j] + (1-b1)*gj
		v[j] = b2*v[j] + (1-b2)*gj*gj
		p[j] -= step * m[j] / (float32(math.Sqrt(float64(v[j]))) + eps)
	}
}

// adamL2RangeGo is adamRangeGo on the gradient g + lam·p, formed as the
// L2 term's own pass would (nn's l2Add: the product rounded to float32,
// then the sum), in the same loop.
func adamL2RangeGo(p, g, m, v []float32, lam, step, eps float32) {
	const b1, b2 = float32(adamBeta1), float32(adamBeta2)
	g, m, v = g[:len(p)], m[:len(p)], v[:len(p)]
	for j := range p {
		gj := g[j] + float32(lam*p[j])
		m[j] = b1*m[j] + (1-b1)*gj
		v[j] = b2*v[j] + (1-b2)*gj*gj
		p[j] -= step * m[j] / (float32(math.Sqrt(float64(v[j]))) + eps)
	}
}

// headKernels returns the product kernels of the "go" engine. In the SIMD
// build they are the package's gemmNT and gemmNN (AVX2 + FMA, six-row
// assembly tiles) for every product, the small ones of the output layer
// included (BenchmarkHeadStep: at 1,085 features, 10 classes, minibatches
// of 128, they took a softmax step from 0.36 to 0.20 ms and an mlp-512
// step from 4.7 to 4.3 ms of CPU against gonum's blas32 for products with
// fewer than 16 rows or columns). Elsewhere they are gonum's, always on one
// goroutine (headGemmSerial, headGemmNNSerial): the head's own workers run
// the chunks in parallel.
func headKernels() nn.Kernels {
	if reflect.ValueOf(gemmNT).Pointer() == reflect.ValueOf(gemmNTGonum).Pointer() {
		return nn.Kernels{NT: headGemmSerial, NN: headGemmNNSerial}
	}
	return nn.Kernels{NT: gemmNT, NN: gemmNN, PackNN: packNN, NNPacked: gemmNNPacked, PackNT: packNTb, NTPacked: gemmNTPacked}
}

// gonum's Sgemm splits a product with at least 4 blocks of 64×64 outputs
// over new goroutines (and allocates for them); products cut into tiles of
// at most headTileRows × headTileCols outputs (1×3 blocks) stay on the
// caller. Each output is still one dot product over the whole inner
// dimension, so the tiling does not change the result.
const (
	headTileRows = 64
	headTileCols = 192
)

// headGemmSerial computes c = a·bᵀ (a m×p, b n×p, c m×n, row-major) with
// gonum's blas32 on the calling goroutine.
func headGemmSerial(c, a, b []float32, m, n, p int) {
	headTiles(m, n, func(i0, mi, j0, nj int) {
		blas32.Gemm(blas.NoTrans, blas.Trans, 1,
			blas32.General{Rows: mi, Cols: p, Stride: p, Data: a[i0*p : (i0+mi)*p]},
			blas32.General{Rows: nj, Cols: p, Stride: p, Data: b[j0*p : (j0+nj)*p]},
			0, blas32.General{Rows: mi, Cols: nj, Stride: n, Data: c[i0*n+j0 : (i0+mi-1)*n+j0+nj]})
	})
}

// headGemmNNSerial computes c = a·b (a m×p, b p×n, c m×n, row-major) with
// gonum's blas32 on the calling goroutine.
func headGemmNNSerial(c, a, b []float32, m, n, p int) {
	headTiles(m, n, func(i0, mi, j0, nj int) {
		blas32.Gemm(blas.NoTrans, blas.NoTrans, 1,
			blas32.General{Rows: mi, Cols: p, Stride: p, Data: a[i0*p : (i0+mi)*p]},
			blas32.General{Rows: p, Cols: nj, Stride: n, Data: b[j0 : (p-1)*n+j0+nj]},
			0, blas32.General{Rows: mi, Cols: nj, Stride: n, Data: c[i0*n+j0 : (i0+mi-1)*n+j0+nj]})
	})
}

// headTiles calls f(i0, mi, j0, nj) for the tiles of an m×n product.
func headTiles(m, n int, f func(i0, mi, j0, nj int)) {
	for i0 := 0; i0 < m; i0 += headTileRows {
		mi := min(headTileRows, m-i0)
		for j0 := 0; j0 < n; j0 += headTileCols {
			f(i0, mi, j0, min(headTileCols, n-j0))
		}
	}
}
