package learn

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"time"

	"github.com/striate/striate/learn/internal/nn"
)

// Head kinds and optimisers (values of HeadConfig.Kind and .Optimizer).
const (
	KindSoftmax = "softmax"
	KindMLP     = "mlp"
	OptAdam     = "adam"
	OptSGD      = "sgd"

	ScheduleConstant = "constant"
	ScheduleCosine   = "cosine"

	EngineGo       = "go"
	EngineGorgonia = "gorgonia"
)

// Adam's moment decay rates and denominator offset, the values recommended by
// Kingma & Ba (2015), "Adam: a method for stochastic optimization", Algorithm 1.
const (
	adamBeta1 = 0.9
	adamBeta2 = 0.999
	adamEps   = 1e-8
)

// Limits of HeadConfig fields, chosen so that a typo fails loudly rather than
// allocating gigabytes.
const (
	maxHidden = 1 << 14
	maxEpochs = 1 << 16
)

// HeadConfig holds the hyper-parameters of a supervised head. The zero value
// is a usable default; every field documents its zero-value meaning. It
// round-trips through encoding/json.
type HeadConfig struct {
	// Kind is "softmax" (multinomial logistic regression; default) or "mlp"
	// (one hidden ReLU layer).
	Kind string `json:"kind,omitempty"`
	// Hidden is the number of hidden units of an mlp; 0 means 256. Ignored for softmax.
	Hidden int `json:"hidden,omitempty"`
	// Epochs is the maximum number of passes over the training rows; 0 means 30.
	Epochs int `json:"epochs,omitempty"`
	// Batch is the minibatch size; 0 means 128. It is clipped to the number of
	// training rows; a last partial minibatch of each epoch is skipped (the
	// rows it would hold are different every epoch).
	Batch int `json:"batch,omitempty"`
	// Optimizer is "adam" (default; Kingma & Ba 2015) or "sgd" (with momentum).
	Optimizer string `json:"optimizer,omitempty"`
	// LR is the learning rate; 0 means 1e-3 for adam and 0.05 for sgd.
	LR float64 `json:"lr,omitempty"`
	// Momentum is the sgd momentum μ in v ← μv + g, p ← p − lr·v; 0 means 0.9,
	// a negative value means none. Ignored by adam.
	Momentum float64 `json:"momentum,omitempty"`
	// Schedule is "constant" (default) or "cosine": lr·(1 + cos(π·e/Epochs))/2
	// in epoch e = 0, 1, ...
	Schedule string `json:"schedule,omitempty"`
	// L2 is λ in the loss term (λ/2)·Σ||W||² over the weight matrices (not the
	// biases) of the standardised-feature model; 0 means 1e-4, negative means none.
	// With n training rows this matches scikit-learn's LogisticRegression with
	// C = 1/(λ·n).
	L2 float64 `json:"l2,omitempty"`
	// ValFrac is the fraction of rows held out (seeded, at random) for
	// validation and early stopping; 0 means 0.1, negative means no validation
	// (the head is then the last epoch's weights).
	ValFrac float64 `json:"val_frac,omitempty"`
	// Patience is the number of epochs without a lower validation loss after
	// which training stops; 0 means 5, negative means never stop early. With
	// validation the head holds the weights of the epoch with the lowest
	// validation loss.
	Patience int `json:"patience,omitempty"`
	// Engine computes the minibatch gradients: "go" (default; a hand-written
	// backward pass on gonum's float32 BLAS) or "gorgonia" (gorgonia's
	// symbolic differentiation on a graph built once per fit). Both compute the
	// same loss (package tests check their gradients against each other and
	// gorgonia's against finite differences); "go" is about twice as fast at
	// 60,000×2,000 (see doc.go), the results differ by float32 rounding.
	Engine string `json:"engine,omitempty"`
	// Seed drives the validation split, the initial weights and the minibatch
	// order; the same seed, data and config give bit-identical heads.
	Seed uint64 `json:"seed,omitempty"`
	// ConvergeTol > 0 ends training once the training loss has stopped
	// falling; 0 (the default) means off: the run lasts Epochs epochs, or
	// until validation early stopping (Patience) ends it. The test is the
	// relative-reduction stopping test of L-BFGS-B (Byrd, Lu, Nocedal & Zhu
	// 1995, "A limited memory algorithm for bound constrained optimization",
	// SIAM J. Sci. Comput. 16(5); SciPy's ftol), applied to window means
	// because minibatch losses are noisy: after epoch e ≥ 2P, with f₁ the
	// mean of the epoch-mean training losses (TrainLoss) of epochs
	// e−2P+1 … e−P and f₂ that of epochs e−P+1 … e, training stops when
	//
	//	(f₁ − f₂) / max(|f₁|, |f₂|, 1) ≤ ConvergeTol.
	//
	// HeadReport.StopReason is then "converged". The loss includes the L2
	// term, so on separable data it levels off at a positive floor rather
	// than creeping towards zero. Valid values are [0, 1).
	ConvergeTol float64 `json:"converge_tol,omitempty"`
	// ConvergeWindow is the window P of the convergence test, in epochs; 0
	// means the fewest whole epochs that hold at least headConvergeSteps
	// (100) minibatch steps, so one-step epochs of a small set are not judged
	// on single noisy minibatches. Ignored while ConvergeTol is 0.
	ConvergeWindow int `json:"converge_window,omitempty"`
}

// headConvergeSteps is the least number of minibatch steps a default
// convergence window holds (HeadConfig.ConvergeWindow 0): enough that the
// mean loss of a window averages out minibatch noise, few next to the
// thousands of steps a full fit takes.
const headConvergeSteps = 100

// Stop reasons (HeadReport.StopReason).
const (
	StopPatience  = "patience"  // validation loss did not improve for Patience epochs
	StopConverged = "converged" // the convergence test of HeadConfig.ConvergeTol passed
)

// resolved returns c with defaults filled in, or an error naming the bad field.
func (c HeadConfig) resolved() (HeadConfig, error) {
	r := c
	switch r.Kind {
	case "":
		r.Kind = KindSoftmax
	case KindSoftmax, KindMLP:
	default:
		return r, cfgErr(c, "Kind", "%q: want %q or %q", c.Kind, KindSoftmax, KindMLP)
	}
	if r.Kind == KindMLP {
		if r.Hidden == 0 {
			r.Hidden = 256
		}
		if r.Hidden < 1 || r.Hidden > maxHidden {
			return r, cfgErr(c, "Hidden", "%d outside [1, %d]", c.Hidden, maxHidden)
		}
	} else {
		r.Hidden = 0
	}
	if r.Epochs == 0 {
		r.Epochs = 30
	}
	if r.Epochs < 1 || r.Epochs > maxEpochs {
		return r, cfgErr(c, "Epochs", "%d outside [1, %d]", c.Epochs, maxEpochs)
	}
	if r.Batch == 0 {
		r.Batch = 128
	}
	if r.Batch < 1 {
		return r, cfgErr(c, "Batch", "%d: want ≥ 1 (0 means 128)", c.Batch)
	}
	switch r.Optimizer {
	case "":
		r.Optimizer = OptAdam
	case OptAdam, OptSGD:
	default:
		return r, cfgErr(c, "Optimizer", "%q: want %q or %q", c.Optimizer, OptAdam, OptSGD)
	}
	if r.LR == 0 {
		r.LR = 1e-3
		if r.Optimizer == OptSGD {
			r.LR = 0.05
		}
	}
	if !(r.LR > 0 && r.LR < 100) {
		return r, cfgErr(c, "LR", "%g outside (0, 100)", c.LR)
	}
	if r.Momentum == 0 {
		r.Momentum = 0.9
	}
	if r.Momentum < 0 {
		r.Momentum = -1 // none; negative sentinels stay so that resolving again is the identity
	}
	if r.Momentum >= 1 || math.IsNaN(r.Momentum) {
		return r, cfgErr(c, "Momentum", "%g: want < 1", c.Momentum)
	}
	switch r.Schedule {
	case "":
		r.Schedule = ScheduleConstant
	case ScheduleConstant, ScheduleCosine:
	default:
		return r, cfgErr(c, "Schedule", "%q: want %q or %q", c.Schedule, ScheduleConstant, ScheduleCosine)
	}
	if r.L2 == 0 {
		r.L2 = 1e-4
	}
	if r.L2 < 0 {
		r.L2 = -1 // none
	}
	if math.IsNaN(r.L2) || math.IsInf(r.L2, 0) {
		return r, cfgErr(c, "L2", "%g is not finite", c.L2)
	}
	if r.ValFrac == 0 {
		r.ValFrac = 0.1
	}
	if r.ValFrac < 0 {
		r.ValFrac = -1 // no validation
	}
	if !(r.ValFrac < 0.9) {
		return r, cfgErr(c, "ValFrac", "%g: want < 0.9 (negative: no validation hold-out)", c.ValFrac)
	}
	switch r.Engine {
	case "":
		r.Engine = EngineGo
	case EngineGo, EngineGorgonia:
	default:
		return r, cfgErr(c, "Engine", "%q: want %q or %q", c.Engine, EngineGo, EngineGorgonia)
	}
	if r.Patience == 0 {
		r.Patience = 5
	}
	if r.Patience < 0 {
		r.Patience = -1 // never stop
	}
	if !(r.ConvergeTol >= 0 && r.ConvergeTol < 1) {
		return r, fmt.Errorf("learn: HeadConfig.ConvergeTol %g outside [0, 1) (0 means no convergence test; try 1e-3)", c.ConvergeTol)
	}
	if r.ConvergeWindow < 0 || r.ConvergeWindow > maxEpochs {
		return r, fmt.Errorf("learn: HeadConfig.ConvergeWindow %d outside [0, %d] (0 means enough epochs for %d steps)", c.ConvergeWindow, maxEpochs, headConvergeSteps)
	}
	return r, nil
}

// Validate checks every field of c, zero fields taking their defaults, as
// Fit does before it looks at any data. A bad field gives a *ConfigError
// naming it (Go name and JSON key) and its valid values.
func (c HeadConfig) Validate() error {
	_, err := c.resolved()
	return err
}

// HeadFitOptions carries the run-time (non-model) options of HeadConfig.FitWith.
type HeadFitOptions struct {
	// Workers is the number of goroutines of each training step (the "go"
	// engine's gradient chunks, the minibatch assembly and the optimiser
	// update); 0 or less means 1. The fitted head and the report's losses do
	// not depend on it, bit for bit.
	Workers int
	// Progress receives one Step per epoch; nil is silent.
	Progress Progress
	// CheckpointEvery > 0 calls Checkpoint after every that many epochs.
	CheckpointEvery int
	// Checkpoint receives the training state. If it returns an error the fit
	// stops there and FitWith returns that error (wrapped): this is how a run
	// is interrupted on purpose. The checkpoint is not retained by the fit.
	Checkpoint func(*HeadCheckpoint) error
	// Resume, if not nil, continues the run a checkpoint recorded. The data and
	// config must be those of the interrupted run; the result is then
	// bit-identical to an uninterrupted run.
	Resume *HeadCheckpoint
}

// HeadReport describes a finished fit.
type HeadReport struct {
	Config         HeadConfig // with defaults filled in (negative "none" values kept as −1; Fit of it gives the same head)
	NTrain, NVal   int        // rows used for training and validation
	Batch          int        // effective minibatch size
	StepsPerEpoch  int
	Epochs         int       // epochs run, including those before a resume
	BestEpoch      int       // 1-based epoch whose weights the head holds
	Stopped        bool      // early stopping ended the run before Config.Epochs
	StopReason     string    // why it stopped early: StopPatience or StopConverged ("" if it did not)
	ConvergeWindow int       // the convergence test's window in epochs (0 without the test)
	TrainLoss      []float64 // per epoch: mean minibatch loss, L2 term included
	ValLoss        []float64 // per epoch: mean cross-entropy on validation (nil without)
	ValAcc         []float64 // per epoch: validation accuracy (nil without)
	Elapsed        time.Duration
}

// Fit trains a head on n = len(y) feature vectors X (row-major n×d, d =
// len(X)/n) with labels y in [0, nClasses). progress may be nil.
func (c HeadConfig) Fit(X []float32, y []int, nClasses int, progress Progress) (*Head, HeadReport, error) {
	return c.FitWith(X, y, nClasses, HeadFitOptions{Progress: progress})
}

// FitWith is Fit with checkpointing and resumption.
func (c HeadConfig) FitWith(X []float32, y []int, nClasses int, opt HeadFitOptions) (*Head, HeadReport, error) {
	start := time.Now()
	cfg, err := c.resolved()
	rep := HeadReport{Config: cfg}
	if err != nil {
		return nil, rep, err
	}
	n := len(y)
	if n < 2 {
		return nil, rep, fmt.Errorf("learn: head fit: %d labelled rows, need at least 2", n)
	}
	if len(X)%n != 0 || len(X) == 0 {
		return nil, rep, fmt.Errorf("learn: head fit: len(X) = %d is not a positive multiple of len(y) = %d", len(X), n)
	}
	d := len(X) / n
	if nClasses < 2 {
		return nil, rep, fmt.Errorf("learn: head fit: nClasses %d, need at least 2", nClasses)
	}
	for i, v := range y {
		if v < 0 || v >= nClasses {
			return nil, rep, &HeadDataError{Field: "y", Index: i, Msg: fmt.Sprintf("label %d outside [0, %d)", v, nClasses)}
		}
	}
	for i, v := range X {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return nil, rep, &HeadDataError{Field: "X", Index: i, Msg: fmt.Sprintf("feature %d of row %d is %g", i%d, i/d, v)}
		}
	}
	if opt.CheckpointEvery < 0 {
		return nil, rep, fmt.Errorf("learn: HeadFitOptions.CheckpointEvery %d: want ≥ 0", opt.CheckpointEvery)
	}

	// Validation split: a seeded permutation, the first nVal rows held out.
	perm := rand.New(rand.NewPCG(cfg.Seed, 0x7661_6c69_6461_7465)).Perm(n)
	nVal := 0
	if cfg.ValFrac > 0 {
		nVal = int(math.Round(cfg.ValFrac * float64(n)))
		nVal = max(1, min(nVal, n-1))
	}
	val, train := perm[:nVal], append([]int(nil), perm[nVal:]...)
	nTrain := len(train)
	batch := min(cfg.Batch, nTrain)
	steps := nTrain / batch
	rep.NTrain, rep.NVal, rep.Batch, rep.StepsPerEpoch = nTrain, nVal, batch, steps

	if cfg.ConvergeTol > 0 {
		rep.ConvergeWindow = cfg.ConvergeWindow
		if rep.ConvergeWindow == 0 {
			rep.ConvergeWindow = (headConvergeSteps + steps - 1) / steps
		}
	}

	mean, std := standardize(X, d, train)

	spec := nn.Spec{In: d, Hidden: cfg.Hidden, Out: nClasses, Batch: batch, L2: max(0, cfg.L2), Chunks: headChunks(batch)}
	team := nn.NewTeam(opt.Workers)
	defer team.Close()
	var net nn.Engine
	if cfg.Engine == EngineGorgonia {
		net, err = nn.New(spec)
	} else {
		net, err = nn.NewPlain(spec, headKernels(), team)
	}
	if err != nil {
		return nil, rep, fmt.Errorf("learn: head fit: %w", err)
	}
	defer net.Close()
	params := net.Params32()
	st, grads := newHeadState(params, cfg.Optimizer == OptAdam)
	// The fingerprint hashes all of X (a noticeable share of a short fit on
	// a big set), so it is computed only when a checkpoint needs it.
	var fp [32]byte
	if opt.Resume != nil || (opt.CheckpointEvery > 0 && opt.Checkpoint != nil) {
		cfgJSON, _ := json.Marshal(cfg)
		fp = headFingerprint(cfgJSON, X, y, nClasses)
	}
	if opt.Resume != nil {
		if err := opt.Resume.restore(st, params, fp); err != nil {
			return nil, rep, err
		}
	} else {
		headInit(params, cfg, d, nClasses)
		st.bestLoss = math.Inf(1)
	}

	valX := headGatherRows(nil, X, d, val)
	valY := make([]int, nVal)
	for i, r := range val {
		valY[i] = y[r]
	}
	var gradsAny any = grads // converted once: a conversion per step would allocate
	stepper := newHeadStepper(team, X, y, d, nClasses, mean, std, net.X32(), net.Y32(), params, grads, st, cfg)
	plain, fused := net.(*nn.Plain) // the minibatch and the optimiser step run inside its Runs
	if fused {
		plain.SetHooks(stepper.hooks())
	}
	var probs, scratch []float32
	for epoch := st.epoch; epoch < cfg.Epochs; epoch++ {
		lr := cfg.LR
		if cfg.Schedule == ScheduleCosine {
			lr = cfg.LR * 0.5 * (1 + math.Cos(math.Pi*float64(epoch)/float64(cfg.Epochs)))
		}
		order := rand.New(rand.NewPCG(cfg.Seed, uint64(epoch)+1)).Perm(nTrain)
		var lossSum float64
		for s := 0; s < steps; s++ {
			for b := range stepper.rows {
				stepper.rows[b] = train[order[s*batch+b]]
			}
			st.t++
			if fused {
				stepper.prepare(lr)
			} else {
				stepper.fillBatch()
			}
			loss, err := net.Eval(gradsAny)
			if err != nil {
				return nil, rep, fmt.Errorf("learn: head fit: epoch %d step %d: %w (lower HeadConfig.LR)", epoch+1, s+1, err)
			}
			lossSum += loss
			if !fused {
				stepper.apply(lr)
			}
		}
		st.trainLoss = append(st.trainLoss, lossSum/float64(steps))
		st.epoch = epoch + 1
		msg := fmt.Sprintf("epoch %d loss %.4f", epoch+1, lossSum/float64(steps))
		if nVal > 0 {
			hd := headFromParams(cfg, d, nClasses, mean, std, params, false)
			if len(scratch) < hd.ScratchLen(nVal) {
				scratch = make([]float32, hd.ScratchLen(nVal))
			}
			probs = hd.PredictBatch(probs, valX, scratch)
			vl, va := headCrossEntropy(probs, valY, nClasses)
			st.valLoss = append(st.valLoss, vl)
			st.valAcc = append(st.valAcc, va)
			msg += fmt.Sprintf(" val %.4f acc %.4f", vl, va)
			if vl < st.bestLoss {
				st.bestLoss, st.bestEpoch, st.bad = vl, epoch+1, 0
				st.best = headCopyParams(st.best, params)
			} else {
				st.bad++
			}
		} else {
			st.bestEpoch = epoch + 1
		}
		if opt.Progress != nil {
			opt.Progress.Step(epoch+1, cfg.Epochs, msg)
		}
		reason := ""
		if nVal > 0 && cfg.Patience > 0 && st.bad >= cfg.Patience {
			reason = StopPatience
		} else if rep.ConvergeWindow > 0 && headConverged(st.trainLoss, rep.ConvergeWindow, cfg.ConvergeTol) {
			reason = StopConverged
		}
		stop := reason != ""
		if stop {
			st.stopped, st.reason = true, reason
		}
		if opt.CheckpointEvery > 0 && opt.Checkpoint != nil && (epoch+1)%opt.CheckpointEvery == 0 && !stop && epoch+1 < cfg.Epochs {
			if err := opt.Checkpoint(st.snapshot(params, fp)); err != nil {
				st.fill(&rep)
				rep.Elapsed = time.Since(start)
				return nil, rep, fmt.Errorf("learn: head fit stopped by the checkpoint callback after epoch %d: %w", epoch+1, err)
			}
		}
		if stop {
			break
		}
	}
	st.fill(&rep)
	final := params
	if nVal > 0 && st.best != nil {
		final = st.best
	}
	rep.Elapsed = time.Since(start)
	return headFromParams(cfg, d, nClasses, mean, std, final, true), rep, nil
}

// HeadDataError reports bad training data.
type HeadDataError struct {
	Field string // "X" or "y"
	Index int    // flat index of the offending value
	Msg   string
}

func (e *HeadDataError) Error() string {
	return fmt.Sprintf("learn: bad %s at index %d: %s", e.Field, e.Index, e.Msg)
}

// headState is everything a checkpoint must carry besides the parameters.
type headState struct {
	epoch, t        int         // epochs done, optimiser steps done
	opt1, opt2      [][]float32 // adam m, v; sgd velocity in opt1
	best            [][]float32 // parameters at bestEpoch (validation only)
	bestLoss        float64
	bestEpoch, bad  int
	stopped         bool
	reason          string // StopReason when stopped (not stored in checkpoints: a checkpoint is never taken at a stop)
	trainLoss       []float64
	valLoss, valAcc []float64
}

// newHeadState returns zeroed optimiser state for params (Adam's second
// moments only when adam) and a zeroed gradient buffer of the same shapes.
func newHeadState(params [][]float32, adam bool) (*headState, [][]float32) {
	st := &headState{}
	grads := make([][]float32, len(params))
	for i, p := range params {
		grads[i] = make([]float32, len(p))
		st.opt1 = append(st.opt1, make([]float32, len(p)))
		if adam {
			st.opt2 = append(st.opt2, make([]float32, len(p)))
		}
	}
	return st, grads
}

func (st *headState) fill(rep *HeadReport) {
	rep.Epochs, rep.BestEpoch, rep.Stopped, rep.StopReason = st.epoch, st.bestEpoch, st.stopped, st.reason
	rep.TrainLoss = append([]float64(nil), st.trainLoss...)
	if rep.NVal > 0 {
		rep.ValLoss = append([]float64(nil), st.valLoss...)
		rep.ValAcc = append([]float64(nil), st.valAcc...)
	}
}

// headConverged reports whether the training losses (one per epoch) pass
// the convergence test of HeadConfig.ConvergeTol with window p.
func headConverged(loss []float64, p int, tol float64) bool {
	e := len(loss)
	if e < 2*p {
		return false
	}
	var f1, f2 float64
	for _, v := range loss[e-2*p : e-p] {
		f1 += v
	}
	for _, v := range loss[e-p:] {
		f2 += v
	}
	f1, f2 = f1/float64(p), f2/float64(p)
	return (f1-f2)/math.Max(math.Max(math.Abs(f1), math.Abs(f2)), 1) <= tol
}

// headInit sets the starting weights: zero for softmax regression (the loss
// is convex, so the start only affects speed), He-normal N(0, 2/fan-in) for
// the ReLU layer (He et al. 2015) and N(0, 1/fan-in) for the output layer of an
// mlp; biases zero.
func headInit(params [][]float32, cfg HeadConfig, d, k int) {
	for _, p := range params {
		clear(p)
	}
	if cfg.Kind != KindMLP {
		return
	}
	rng := rand.New(rand.NewPCG(cfg.Seed, 0x696e_6974))
	s1 := math.Sqrt(2 / float64(d))
	for j := range params[0] {
		params[0][j] = float32(s1 * rng.NormFloat64())
	}
	s2 := math.Sqrt(1 / float64(cfg.Hidden))
	for j := range params[2] {
		params[2][j] = float32(s2 * rng.NormFloat64())
	}
}

func headCopyParams(dst, src [][]float32) [][]float32 {
	if dst == nil {
		dst = make([][]float32, len(src))
	}
	for i, s := range src {
		dst[i] = append(dst[i][:0], s...)
	}
	return dst
}

// headFromParams builds a head; own=false copies the parameter slices.
func headFromParams(cfg HeadConfig, d, k int, mean, std []float32, p [][]float32, own bool) *Head {
	cp := func(s []float32) []float32 {
		if own {
			return s
		}
		return append([]float32(nil), s...)
	}
	m, sd := append([]float32(nil), mean...), append([]float32(nil), std...)
	if cfg.Kind == KindMLP {
		return newHead(KindMLP, d, cfg.Hidden, k, m, sd, cp(p[0]), cp(p[1]), cp(p[2]), cp(p[3]))
	}
	return newHead(KindSoftmax, d, 0, k, m, sd, cp(p[0]), cp(p[1]), nil, nil)
}

func headGatherRows(dst, X []float32, d int, rows []int) []float32 {
	dst = dst[:0]
	for _, r := range rows {
		dst = append(dst, X[r*d:(r+1)*d]...)
	}
	return dst
}

// headCrossEntropy returns the mean −log p(y) (probabilities floored at 1e-30 so a
// confident mistake costs 69 nats, not +Inf) and the accuracy.
func headCrossEntropy(probs []float32, y []int, k int) (loss, acc float64) {
	for i, c := range y {
		row := probs[i*k : (i+1)*k]
		loss -= math.Log(math.Max(float64(row[c]), 1e-30))
		best := 0
		for j, v := range row {
			if v > row[best] {
				best = j
			}
		}
		if best == c {
			acc++
		}
	}
	return loss / float64(len(y)), acc / float64(len(y))
}

// fingerprint identifies a (config, data) pair so a checkpoint is not resumed
// on something else.
func headFingerprint(cfgJSON []byte, X []float32, y []int, k int) [32]byte {
	h := sha256.New()
	h.Write(cfgJSON)
	var buf [8 << 10]byte
	put := func(vals int, at func(i int) uint32) {
		for i := 0; i < vals; {
			j := 0
			for ; j+4 <= len(buf) && i < vals; i, j = i+1, j+4 {
				binary.LittleEndian.PutUint32(buf[j:], at(i))
			}
			h.Write(buf[:j])
		}
	}
	put(len(X), func(i int) uint32 { return math.Float32bits(X[i]) })
	put(len(y), func(i int) uint32 { return uint32(y[i]) })
	binary.LittleEndian.PutUint32(buf[:4], uint32(k))
	h.Write(buf[:4])
	var out [32]byte
	copy(out[:], h.Sum(nil))
	return out
}

// ErrHeadCheckpointMismatch reports a checkpoint resumed with other data or config.
var ErrHeadCheckpointMismatch = errors.New("learn: checkpoint was written for a different config or data set")
