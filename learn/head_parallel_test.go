package learn

import (
	"math"
	"testing"

	"github.com/striate/striate/learn/internal/nn"
)

// TestHeadWorkersBitIdentical: the step's work units are fixed by the data
// and config, so 1, 2 and 3 workers must give the same head and the same
// losses bit for bit, for both head kinds, both optimisers, with and
// without validation, and with a batch that does not divide into equal
// chunks.
func TestHeadWorkersBitIdentical(t *testing.T) {
	X, y := blobs(700, 40, 5, 0.5, 21)
	for _, cfg := range []HeadConfig{
		{Kind: KindMLP, Hidden: 48, Epochs: 3, Batch: 100, Seed: 5},
		{Kind: KindSoftmax, Epochs: 3, Batch: 128, Seed: 6, ValFrac: -1},
		{Kind: KindMLP, Hidden: 20, Epochs: 2, Batch: 250, Optimizer: OptSGD, Seed: 7, ValFrac: -1},
		{Kind: KindMLP, Hidden: 200, Epochs: 1, Batch: 64, Seed: 8, ValFrac: -1}, // two hidden blocks
	} {
		var ref *Head
		var refRep HeadReport
		for _, w := range []int{1, 2, 3} {
			hd, rep, err := cfg.FitWith(X, y, 5, HeadFitOptions{Workers: w})
			if err != nil {
				t.Fatal(err)
			}
			if w == 1 {
				ref, refRep = hd, rep
				continue
			}
			if !sameTensors(ref.Tensors(), hd.Tensors()) {
				t.Errorf("%+v: weights with %d workers differ from 1 worker", cfg, w)
			}
			for e := range rep.TrainLoss {
				if math.Float64bits(rep.TrainLoss[e]) != math.Float64bits(refRep.TrainLoss[e]) {
					t.Errorf("%+v: epoch %d loss %v with %d workers, %v with 1", cfg, e+1, rep.TrainLoss[e], w, refRep.TrainLoss[e])
				}
			}
		}
	}
}

// TestHeadStepAllocatesNothing: a training step (minibatch assembly,
// chunked gradient, Adam update) on two workers reuses all its scratch.
func TestHeadStepAllocatesNothing(t *testing.T) {
	if raceOn {
		t.Skip("the race detector makes sync.Pool (the SIMD kernels' packing buffers) drop items at random")
	}
	n, d, h, k, batch := 300, 96, 64, 10, 128
	X, y := blobs(n, d, k, 1, 3)
	cfg, err := HeadConfig{Kind: KindMLP, Hidden: h}.resolved()
	if err != nil {
		t.Fatal(err)
	}
	all := make([]int, n)
	for i := range all {
		all[i] = i
	}
	mean, std := standardize(X, d, all)
	team := nn.NewTeam(2)
	defer team.Close()
	net, err := nn.NewPlain(nn.Spec{In: d, Hidden: h, Out: k, Batch: batch, L2: cfg.L2, Chunks: headChunks(batch)}, headKernels(), team)
	if err != nil {
		t.Fatal(err)
	}
	params := net.Params32()
	st, grads := newHeadState(params, true)
	headInit(params, cfg, d, k)
	s := newHeadStepper(team, X, y, d, k, mean, std, net.X32(), net.Y32(), params, grads, st, cfg)
	for b := range s.rows {
		s.rows[b] = b
	}
	var ga any = grads
	step := func() {
		s.fillBatch()
		if _, err := net.Eval(ga); err != nil {
			t.Fatal(err)
		}
		st.t++
		s.apply(cfg.LR)
	}
	if allocs := testing.AllocsPerRun(20, step); allocs != 0 {
		t.Errorf("a training step allocates %v times, want 0 (kernels: %s)", allocs, kernelBuild)
	}
}

// TestHeadConvergeStopsOnSeparable: a small separable set with one
// minibatch step per epoch, given 3,000 epochs as the pipeline's step
// minimum would, must stop on the convergence test well before, report
// why, and keep what the long run learns.
func TestHeadConvergeStopsOnSeparable(t *testing.T) {
	all, ally := blobs(1150, 8, 3, 3, 31)
	X, y := all[:150*8], ally[:150]
	Xt, yt := all[150*8:], ally[150:]
	cfg := HeadConfig{Kind: KindMLP, Hidden: 32, Epochs: 3000, ValFrac: -1, Seed: 4, ConvergeTol: 1e-3}
	hd, rep, err := cfg.Fit(X, y, 3, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !rep.Stopped || rep.StopReason != StopConverged || rep.Epochs >= 1500 {
		t.Fatalf("want a convergence stop well before 3000 epochs: stopped %v (%q) after %d", rep.Stopped, rep.StopReason, rep.Epochs)
	}
	if rep.ConvergeWindow != headConvergeSteps || rep.StepsPerEpoch != 1 {
		t.Errorf("window %d epochs of %d steps, want %d one-step epochs", rep.ConvergeWindow, rep.StepsPerEpoch, headConvergeSteps)
	}
	// The stop is the documented test: it passes after the last epoch and
	// at no earlier one.
	for e := 2 * rep.ConvergeWindow; e <= rep.Epochs; e++ {
		if got := headConverged(rep.TrainLoss[:e], rep.ConvergeWindow, cfg.ConvergeTol); got != (e == rep.Epochs) {
			t.Fatalf("convergence test after epoch %d: %v (stopped after %d)", e, got, rep.Epochs)
		}
	}
	// Three classes whose centres lie ~3·√(2·8) = 12σ apart are separable
	// to within ~1e-9 by the Bayes rule (Gaussian tail beyond 6σ, from
	// memory: 1e-9); the training set is learnt exactly and the held-out
	// accuracy floor of 0.99 fails a head stopped before it has learnt.
	if acc := accuracy(hd, X, y); acc != 1 {
		t.Errorf("training accuracy %.3f at the convergence stop, want 1", acc)
	}
	if acc := accuracy(hd, Xt, yt); acc < 0.99 {
		t.Errorf("held-out accuracy %.3f at the convergence stop, want ≥ 0.99", acc)
	}
	t.Logf("stopped after %d of 3000 epochs, loss %.4g → %.4g", rep.Epochs, rep.TrainLoss[0], rep.TrainLoss[rep.Epochs-1])
}

// TestHeadConvergeNotWhileFalling: random labels cannot be separated by
// features drawn independently of them, but a wide enough MLP memorises
// them, so its training loss keeps falling by more than the tolerance
// every window: the run must last all its epochs.
func TestHeadConvergeNotWhileFalling(t *testing.T) {
	X, y := noiseRows(300, 20, 2, 8)
	cfg := HeadConfig{Kind: KindMLP, Hidden: 64, Epochs: 60, Batch: 16, ValFrac: -1, Seed: 2, ConvergeTol: 1e-3}
	_, rep, err := cfg.Fit(X, y, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Stopped || rep.Epochs != cfg.Epochs {
		t.Fatalf("stopped (%q) after %d of %d epochs while the loss still fell: %v", rep.StopReason, rep.Epochs, cfg.Epochs, rep.TrainLoss)
	}
	// The premise: the loss did fall by more than the tolerance over every
	// pair of windows (else a run to the end would prove nothing).
	p := rep.ConvergeWindow
	worst := math.Inf(1)
	for e := 2 * p; e <= rep.Epochs; e++ {
		l := rep.TrainLoss[:e]
		var f1, f2 float64
		for i := e - 2*p; i < e-p; i++ {
			f1 += l[i] / float64(p)
		}
		for i := e - p; i < e; i++ {
			f2 += l[i] / float64(p)
		}
		worst = math.Min(worst, (f1-f2)/math.Max(math.Max(f1, f2), 1))
	}
	if !(worst > cfg.ConvergeTol) {
		t.Errorf("smallest window-to-window reduction %.3g ≤ tolerance %g: the problem does not test the rule", worst, cfg.ConvergeTol)
	}
	t.Logf("window %d epochs; loss %.4g → %.4g; smallest relative reduction %.3g", p, rep.TrainLoss[0], rep.TrainLoss[rep.Epochs-1], worst)
}

// TestHeadFusedStepMatchesPhases: the step with the minibatch assembly and
// the optimiser update folded into the engine's Runs (nn.Hooks, what
// FitWith does with the go engine) leaves the parameters and losses of
// the step done in separate phases (fill, Eval, update), bit for bit, for
// both optimisers and head kinds, on one and on three workers.
func TestHeadFusedStepMatchesPhases(t *testing.T) {
	n, d, k, batch := 300, 70, 6, 96
	X, y := blobs(n, d, k, 1, 9)
	all := make([]int, n)
	for i := range all {
		all[i] = i
	}
	mean, std := standardize(X, d, all)
	for _, hc := range []HeadConfig{{Kind: KindMLP, Hidden: 150}, {Kind: KindSoftmax}, {Kind: KindMLP, Hidden: 40, Optimizer: OptSGD}} {
		cfg, err := hc.resolved()
		if err != nil {
			t.Fatal(err)
		}
		for _, workers := range []int{1, 3} {
			var ref [][]float32
			var refLoss []float64
			for _, fused := range []bool{false, true} {
				team := nn.NewTeam(workers)
				net, err := nn.NewPlain(nn.Spec{In: d, Hidden: cfg.Hidden, Out: k, Batch: batch, L2: cfg.L2, Chunks: headChunks(batch)}, headKernels(), team)
				if err != nil {
					t.Fatal(err)
				}
				params := net.Params32()
				st, grads := newHeadState(params, true)
				headInit(params, HeadConfig{Kind: cfg.Kind, Hidden: cfg.Hidden, Seed: 3}, d, k)
				if cfg.Kind == KindSoftmax { // a zero start would hide the L2 term
					for i := range params[0] {
						params[0][i] = 0.01 * float32(i%11-5)
					}
				}
				s := newHeadStepper(team, X, y, d, k, mean, std, net.X32(), net.Y32(), params, grads, st, cfg)
				if fused {
					net.SetHooks(s.hooks())
				}
				var losses []float64
				for step := 0; step < 5; step++ {
					for b := range s.rows {
						s.rows[b] = (step*37 + b*7) % n
					}
					st.t++
					if fused {
						s.prepare(cfg.LR)
					} else {
						s.fillBatch()
					}
					l, err := net.Eval(grads)
					if err != nil {
						t.Fatal(err)
					}
					if !fused {
						s.apply(cfg.LR)
					}
					losses = append(losses, l)
				}
				team.Close()
				if !fused {
					ref, refLoss = headCopyParams(nil, params), losses
					continue
				}
				for i := range params {
					for j := range params[i] {
						if math.Float32bits(params[i][j]) != math.Float32bits(ref[i][j]) {
							t.Fatalf("%s %s, %d workers: parameter %d[%d] %v fused, %v in phases", cfg.Kind, cfg.Optimizer, workers, i, j, params[i][j], ref[i][j])
						}
					}
				}
				for e := range losses {
					if math.Float64bits(losses[e]) != math.Float64bits(refLoss[e]) {
						t.Fatalf("%s %s, %d workers: step %d loss %v fused, %v in phases", cfg.Kind, cfg.Optimizer, workers, e+1, losses[e], refLoss[e])
					}
				}
			}
		}
	}
}
