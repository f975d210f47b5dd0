// Package nn is the one place in striate that imports gorgonia. It evaluates
// the minibatch loss of a softmax regression or a one-hidden-layer ReLU network
// and its gradients with respect to the parameters, by two engines with one
// interface (Engine):
//
//   - Graph: gorgonia's expression graph, built once for a fixed minibatch
//     size, differentiated symbolically (reverse mode) and run on a tape
//     machine. It is the reference: its gradients are checked against central
//     finite differences.
//   - Plain: the same loss with a hand-written backward pass in which every
//     matrix product is one call of a pluggable c = a·bᵀ or c = a·b kernel
//     (gonum's blas32 by default, package learn's AVX2 kernels in its SIMD
//     build). At
//     the full-MNIST head's shapes it is 2-4× faster than Graph because it
//     skips the input gradient and gorgonia's per-op allocations. It splits
//     a batch into a fixed number of row chunks whose gradient shares are
//     computed in parallel (on a Team) and summed in a fixed order, so the
//     result does not depend on the number of workers. Its gradients are
//     checked against Graph's.
//
// Parameter updates, data handling and inference live in package learn;
// nothing of gorgonia's types leaves this package.
//
// Model (B = batch, D = inputs, H = hidden units, K = classes; Y one-hot B×K;
// weight matrices are stored out×in, row-major):
//
//	softmax: Z = X·Wᵀ + 1·bᵀ                        W: K×D, b: K
//	mlp:     A = max(0, X·W1ᵀ + 1·b1ᵀ), Z = A·W2ᵀ + 1·b2ᵀ   W1: H×D, b1: H, W2: K×H, b2: K
//	loss   = −(1/B) Σ_i Σ_k Y_ik log softmax(Z_i)_k + (λ/2) Σ_W ||W||²_F
//
// The L2 term covers weight matrices only, never biases (common practice; it is
// also what scikit-learn's LogisticRegression does with its intercept).
// Engines are not safe for concurrent use.
package nn

import (
	"errors"
	"fmt"

	"gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// Spec fixes the shape of a network.
type Spec struct {
	In, Hidden, Out int     // Hidden 0 = softmax regression
	Batch           int     // rows per evaluation
	L2              float64 // λ of the weight penalty
	Float64         bool    // float64 graph (gradient checks); default float32
	// Chunks is the number of row chunks the plain engine splits a batch
	// into (see Plain); 0 means 1. The graph ignores it.
	Chunks int
}

// chunks returns the number of row chunks, at least 1.
func (s Spec) chunks() int { return max(1, s.Chunks) }

// Engine evaluates the loss and gradients of one minibatch. The caller fills
// X32/Y32 (or X64/Y64) and updates the parameters in place between calls.
type Engine interface {
	Spec() Spec
	Params32() [][]float32
	X32() []float32
	Y32() []float32
	// Eval returns the loss and copies the gradients, in parameter order, into
	// grads ([][]float32 for float32 engines, [][]float64 for float64).
	Eval(grads any) (float64, error)
	Close() error
}

// Net is a compiled gorgonia graph plus its bound tensors.
type Net struct {
	spec   Spec
	g      *gorgonia.ExprGraph
	vm     gorgonia.VM
	x, y   *gorgonia.Node
	xT, yT *tensor.Dense
	params []*gorgonia.Node
	pT     []*tensor.Dense
	grads  gorgonia.Nodes
	cost   *gorgonia.Node
}

// ParamShapes lists the parameter shapes in the order Params uses:
// softmax [K×D, K]; mlp [H×D, H, K×H, K].
func (s Spec) ParamShapes() [][]int {
	if s.Hidden == 0 {
		return [][]int{{s.Out, s.In}, {s.Out}}
	}
	return [][]int{{s.Hidden, s.In}, {s.Hidden}, {s.Out, s.Hidden}, {s.Out}}
}

func (s Spec) validate() error {
	if s.In < 1 || s.Out < 2 || s.Hidden < 0 || s.Batch < 1 || !(s.L2 >= 0) || s.Chunks < 0 || s.Chunks > s.Batch {
		return fmt.Errorf("nn: bad spec %+v (need In ≥ 1, Out ≥ 2, Hidden ≥ 0, Batch ≥ 1, L2 ≥ 0, 0 ≤ Chunks ≤ Batch)", s)
	}
	return nil
}

// New validates s and builds the gorgonia graph.
func New(s Spec) (n *Net, err error) {
	if err := s.validate(); err != nil {
		return nil, err
	}
	defer func() {
		// gorgonia reports some shape problems by panicking; turn them into errors.
		if r := recover(); r != nil {
			n, err = nil, fmt.Errorf("nn: building graph: %v", r)
		}
	}()
	dt := tensor.Float32
	if s.Float64 {
		dt = tensor.Float64
	}
	n = &Net{spec: s, g: gorgonia.NewGraph()}
	g := n.g
	n.xT = tensor.New(tensor.WithShape(s.Batch, s.In), tensor.Of(dt))
	n.yT = tensor.New(tensor.WithShape(s.Batch, s.Out), tensor.Of(dt))
	n.x = gorgonia.NewMatrix(g, dt, gorgonia.WithShape(s.Batch, s.In), gorgonia.WithName("x"), gorgonia.WithValue(n.xT))
	n.y = gorgonia.NewMatrix(g, dt, gorgonia.WithShape(s.Batch, s.Out), gorgonia.WithName("y"), gorgonia.WithValue(n.yT))
	names := []string{"w", "b"}
	if s.Hidden > 0 {
		names = []string{"w1", "b1", "w2", "b2"}
	}
	for i, sh := range s.ParamShapes() {
		t := tensor.New(tensor.WithShape(sh...), tensor.Of(dt))
		var node *gorgonia.Node
		if len(sh) == 2 {
			node = gorgonia.NewMatrix(g, dt, gorgonia.WithShape(sh...), gorgonia.WithName(names[i]), gorgonia.WithValue(t))
		} else {
			node = gorgonia.NewVector(g, dt, gorgonia.WithShape(sh...), gorgonia.WithName(names[i]), gorgonia.WithValue(t))
		}
		n.params = append(n.params, node)
		n.pT = append(n.pT, t)
	}
	scalar := func(v float64) *gorgonia.Node {
		if s.Float64 {
			return gorgonia.NewConstant(v)
		}
		return gorgonia.NewConstant(float32(v))
	}
	affine := func(a, w, b *gorgonia.Node) (*gorgonia.Node, error) {
		wt, err := gorgonia.Transpose(w)
		if err != nil {
			return nil, err
		}
		m, err := gorgonia.Mul(a, wt)
		if err != nil {
			return nil, err
		}
		return gorgonia.BroadcastAdd(m, b, nil, []byte{0})
	}
	var z *gorgonia.Node
	var weights []*gorgonia.Node
	if s.Hidden == 0 {
		if z, err = affine(n.x, n.params[0], n.params[1]); err != nil {
			return nil, fmt.Errorf("nn: %w", err)
		}
		weights = []*gorgonia.Node{n.params[0]}
	} else {
		h, err := affine(n.x, n.params[0], n.params[1])
		if err != nil {
			return nil, fmt.Errorf("nn: %w", err)
		}
		if h, err = gorgonia.Rectify(h); err != nil {
			return nil, fmt.Errorf("nn: %w", err)
		}
		if z, err = affine(h, n.params[2], n.params[3]); err != nil {
			return nil, fmt.Errorf("nn: %w", err)
		}
		weights = []*gorgonia.Node{n.params[0], n.params[2]}
	}
	must := func(v *gorgonia.Node, e error) *gorgonia.Node {
		if e != nil {
			panic(e)
		}
		return v
	}
	ls := must(gorgonia.LogSoftMax(z))
	ce := must(gorgonia.Sum(must(gorgonia.HadamardProd(n.y, ls))))
	cost := must(gorgonia.Mul(ce, scalar(-1/float64(s.Batch))))
	if s.L2 > 0 {
		for _, w := range weights {
			sq := must(gorgonia.Sum(must(gorgonia.HadamardProd(w, w))))
			cost = must(gorgonia.Add(cost, must(gorgonia.Mul(sq, scalar(s.L2/2)))))
		}
	}
	n.cost = cost
	if n.grads, err = gorgonia.Grad(cost, n.params...); err != nil {
		return nil, fmt.Errorf("nn: gradient graph: %w", err)
	}
	n.vm = gorgonia.NewTapeMachine(g)
	return n, nil
}

// Spec returns the spec the net was built with.
func (n *Net) Spec() Spec { return n.spec }

// Params32 returns the parameter tensors' backing slices (float32 nets). The
// caller updates them in place between evaluations.
func (n *Net) Params32() [][]float32 {
	out := make([][]float32, len(n.pT))
	for i, t := range n.pT {
		out[i] = t.Data().([]float32)
	}
	return out
}

// Params64 is Params32 for float64 nets.
func (n *Net) Params64() [][]float64 {
	out := make([][]float64, len(n.pT))
	for i, t := range n.pT {
		out[i] = t.Data().([]float64)
	}
	return out
}

// X32 and Y32 return the input batch (B×D row-major) and one-hot target (B×K)
// buffers the caller fills before Eval (float32 nets); X64/Y64 for float64.
func (n *Net) X32() []float32 { return n.xT.Data().([]float32) }
func (n *Net) Y32() []float32 { return n.yT.Data().([]float32) }
func (n *Net) X64() []float64 { return n.xT.Data().([]float64) }
func (n *Net) Y64() []float64 { return n.yT.Data().([]float64) }

// ErrNonFinite reports a loss that is NaN or ±Inf.
var ErrNonFinite = errors.New("nn: loss is not finite")

// Eval runs the forward and backward pass on the current batch and
// parameters. It returns the loss; the gradients, in Params order, are copied
// into grads (float32 nets: [][]float32, float64 nets: [][]float64).
func (n *Net) Eval(grads any) (loss float64, err error) {
	defer n.vm.Reset()
	if err := n.vm.RunAll(); err != nil {
		return 0, fmt.Errorf("nn: run: %w", err)
	}
	switch v := n.cost.Value().Data().(type) {
	case float32:
		loss = float64(v)
	case float64:
		loss = v
	default:
		return 0, fmt.Errorf("nn: unexpected cost type %T", v)
	}
	for i, gn := range n.grads {
		switch dst := grads.(type) {
		case [][]float32:
			src, ok := gn.Value().Data().([]float32)
			if !ok || len(src) != len(dst[i]) {
				return 0, fmt.Errorf("nn: gradient %d: type %T or length mismatch", i, gn.Value().Data())
			}
			copy(dst[i], src)
		case [][]float64:
			src, ok := gn.Value().Data().([]float64)
			if !ok || len(src) != len(dst[i]) {
				return 0, fmt.Errorf("nn: gradient %d: type %T or length mismatch", i, gn.Value().Data())
			}
			copy(dst[i], src)
		default:
			return 0, fmt.Errorf("nn: grads must be [][]float32 or [][]float64, got %T", grads)
		}
	}
	if loss != loss || loss > 1e300 || loss < -1e300 {
		return loss, ErrNonFinite
	}
	return loss, nil
}

// Close releases the machine.
func (n *Net) Close() error { return n.vm.Close() }
