package pipeline

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sync"
	"sync/atomic"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// FitOptions are the run-time options of Fit; none of them changes the
// fitted model.
type FitOptions struct {
	// Workers is the number of goroutines for feature extraction; ≤ 0 means 1.
	Workers int
	// Progress receives the steps of each phase (a message names the phase);
	// nil is silent. Step is called from Fit's own goroutine.
	Progress learn.Progress
	// Unlabeled, if not nil, is the set the unsupervised stages are fitted
	// on (its labels are never read). Otherwise they are fitted on training
	// images with their labels ignored.
	Unlabeled *datasets.Set
	// Limits bounds the fit's work size (FitWork with the training rows,
	// the unlabeled images and Workers), checked before the first large
	// allocation; the zero value is DefaultMaxWorkBytes.
	Limits Limits
}

// FitReport describes a finished fit. It is not stored in model files.
type FitReport struct {
	BankTime     time.Duration // learning the bank (LearnBank)
	Unsupervised time.Duration // fitting the template layers
	Features     time.Duration // extracting the training features
	HeadTime     time.Duration // fitting the head
	Total        time.Duration
	Head         learn.HeadReport
	Bank         *learn.BankReport // nil unless the bank was learned
	NTrain       int
	FeatureLen   int // features the head sees (after the guard)
}

// Fit fits a pipeline: first the unsupervised stages on unlabeled images
// (opts.Unlabeled, or cfg.Unlabeled training images taken without labels),
// then the features of every training image, then the head on those
// features and train's labels. The same cfg (Seed included) and data give a
// bit-identical model file whatever opts.Workers is. It is NewPlan(cfg)
// followed by Plan.Fit.
func Fit(cfg Config, train *datasets.Set, opts FitOptions) (*Model, error) {
	m, _, err := FitReported(cfg, train, opts)
	return m, err
}

// FitReported is Fit that also returns timings and the head's report.
func FitReported(cfg Config, train *datasets.Set, opts FitOptions) (*Model, FitReport, error) {
	p, err := NewPlanLimits(cfg, opts.Limits)
	if err != nil {
		return nil, FitReport{}, err
	}
	return p.Fit(train, opts)
}

// Fit fits the planned pipeline (see the function Fit) and returns the
// model, timings and the head's report.
func (p *Plan) Fit(train *datasets.Set, opts FitOptions) (*Model, FitReport, error) {
	start := time.Now()
	var rep FitReport
	cfg := p.Config()
	if err := checkSet(train, "training set"); err != nil {
		return nil, rep, err
	}
	if len(train.Classes) < 2 {
		return nil, rep, fmt.Errorf("pipeline: training set %q has %d classes; a classifier needs at least 2", train.Name, len(train.Classes))
	}
	if opts.Unlabeled != nil {
		if err := checkSet(opts.Unlabeled, "unlabeled set"); err != nil {
			return nil, rep, err
		}
	}
	if cfg.Head.Seed == 0 {
		cfg.Head.Seed = stageSeed(cfg.Seed, seedHead)
	}
	rep.NTrain = train.N
	if err := p.checkFit(train, opts); err != nil {
		return nil, rep, err
	}

	if p.bankPending {
		t0 := time.Now()
		bank, brep, err := learnBank(*cfg.LearnBank, stageSeed(cfg.Seed, seedBank), opts.Workers, opts.Progress)
		if err != nil {
			return nil, rep, err
		}
		cfg.Front.Bank = bank
		cfg.Front.Gabor.Disable = true
		if p, err = NewPlanLimits(cfg, opts.Limits); err != nil {
			return nil, rep, fmt.Errorf("pipeline: the learned bank does not fit the pipeline: %w", err)
		}
		rep.Bank = brep
		rep.BankTime = time.Since(t0)
	}

	if cfg.Input.Deblur == DeblurAuto && cfg.Input.DeblurRef == 0 {
		cfg.Input.DeblurRef = measureDeblurRef(p, train, opts.Workers)
	}
	t0 := time.Now()
	var tmpl *templateStage
	for i := range cfg.Templates {
		if cfg.Templates[i].Seed == 0 {
			cfg.Templates[i].Seed = stageSeed(cfg.Seed, seedTemplates+uint64(i)<<8)
		}
	}
	p = p.withConfig(cfg)
	if len(cfg.Templates) > 0 {
		src := train
		if opts.Unlabeled != nil {
			src = opts.Unlabeled
		}
		idx := unlabeledIndices(src.N, cfg.Unlabeled, stageSeed(cfg.Seed, seedUnlabeled))
		maps := make([]v1layer.Maps, len(idx))
		p.eachImage(src, idx, nil, opts.Workers, opts.Progress, "front end (unlabeled)", nil, func(i int, in []float32, w *work) {
			p.frontTo(&maps[i], w, in)
		})
		var err error
		if tmpl, err = fitTemplates(p, cfg.Templates, maps, opts.Workers, opts.Progress); err != nil {
			return nil, rep, err
		}
	}
	rep.Unsupervised = time.Since(t0)

	t0 = time.Now()
	d := p.featureLen(tmpl)
	rows, labels := train.N, train.Labels
	if cfg.Mirror { // rows [N, 2N) are the mirror images of rows [0, N)
		rows, labels = 2*train.N, append(append([]int(nil), train.Labels...), train.Labels...)
	}
	X := make([]float32, rows*d)
	extractSet := func(s *datasets.Set, X []float32, msg string) {
		p.eachImage(s, nil, nil, opts.Workers, opts.Progress, msg, nil, func(i int, in []float32, w *work) {
			p.features(X[i*d:i*d:(i+1)*d], in, tmpl, w)
		})
	}
	extractSet(train, X[:train.N*d], "features")
	if cfg.Mirror {
		extractSet(train.Mirrored(), X[train.N*d:], "mirrored features")
	}
	g := fitGuard(cfg.Guard, X, rows, d)
	k := g.out()
	for i := 0; i < rows; i++ { // compact in place: see guard.apply
		g.apply(X[i*k:(i+1)*k], X[i*d:(i+1)*d])
	}
	X = X[:rows*k]
	rep.FeatureLen = k
	rep.Features = time.Since(t0)

	cfg.Head = withMinSteps(cfg.Head, rows, cfg.HeadMinSteps)
	t0 = time.Now()
	head, hrep, err := cfg.Head.FitWith(X, labels, len(train.Classes), learn.HeadFitOptions{Workers: opts.Workers, Progress: opts.Progress})
	rep.Head = hrep
	if err != nil {
		return nil, rep, fmt.Errorf("pipeline: fitting the head: %w", err)
	}
	rep.HeadTime = time.Since(t0)
	m, err := newModel(p.withConfig(cfg), train.Classes, tmpl, g, head)
	rep.Total = time.Since(start)
	return m, rep, err
}

// checkFit checks the fit's work size with the data's sizes known.
func (p *Plan) checkFit(train *datasets.Set, opts FitOptions) error {
	rows := train.N
	if p.cfg.Mirror {
		rows *= 2
	}
	src := train
	if opts.Unlabeled != nil {
		src = opts.Unlabeled
	}
	nu := src.N
	if p.cfg.Unlabeled >= 0 {
		nu = min(nu, p.cfg.Unlabeled)
	}
	w, err := p.FitWork(rows, nu, opts.Workers)
	if err != nil {
		return err
	}
	return w.check(opts.Limits)
}

func checkSet(s *datasets.Set, what string) error {
	if s == nil {
		return fmt.Errorf("pipeline: %s is nil", what)
	}
	if err := s.Validate(); err != nil {
		return fmt.Errorf("pipeline: %s: %w", what, err)
	}
	if s.N < 2 || s.H < 1 || s.W < 1 {
		return fmt.Errorf("pipeline: %s %q has %d images of %d×%d; want at least 2 non-empty images", what, s.Name, s.N, s.H, s.W)
	}
	return nil
}

// Seed tags: each fitted stage draws from its own stream.
const (
	seedHead      = 1
	seedTemplates = 2
	seedUnlabeled = 3
	seedBank      = 4
)

// stageSeed derives the seed of one stage from the pipeline seed
// (SplitMix64 finaliser; Steele, Lea & Flood 2014).
func stageSeed(seed, tag uint64) uint64 {
	z := seed + tag*0x9e3779b97f4a7c15
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9
	z = (z ^ (z >> 27)) * 0x94d049bb133111eb
	z ^= z >> 31
	if z == 0 {
		z = 1
	}
	return z
}

// unlabeledIndices picks n images of a set of size total by a seeded
// permutation (all of them, in order, when n is -1 or ≥ total).
func unlabeledIndices(total, n int, seed uint64) []int {
	if n < 0 || n >= total {
		idx := make([]int, total)
		for i := range idx {
			idx[i] = i
		}
		return idx
	}
	return rand.New(rand.NewPCG(seed, 0x756e_6c61_6265_6c64)).Perm(total)[:n]
}

// eachImage calls fn(i, in, w) for i in [0, n), in being image idx[i] of
// s (image i when idx is nil) at the plan's input size, first altered by
// perturb(i) when perturb is not nil. It runs over workers goroutines,
// each with its own scratch (from pool when not nil), and reports progress
// (nil is silent) from the calling goroutine every 250 ms.
func (p *Plan) eachImage(s *datasets.Set, idx []int, perturb Perturb, workers int, prog learn.Progress, msg string, pool *sync.Pool, fn func(i int, in []float32, w *work)) {
	n := s.N
	if idx != nil {
		n = len(idx)
	}
	get, put := func() *work { return new(work) }, func(*work) {}
	if pool != nil {
		get, put = func() *work { return pool.Get().(*work) }, func(w *work) { pool.Put(w) }
	}
	var done atomic.Int64
	fin := make(chan struct{})
	go func() {
		defer close(fin)
		parallelFor(n, workers, get, put, func(i int, w *work) {
			j := i
			if idx != nil {
				j = idx[i]
			}
			fn(i, p.setInput(w, s, i, j, perturb), w)
			done.Add(1)
		})
	}()
	if prog == nil {
		<-fin
		return
	}
	tick := time.NewTicker(250 * time.Millisecond)
	defer tick.Stop()
	for {
		select {
		case <-fin:
			prog.Step(n, n, msg)
			return
		case <-tick.C:
			prog.Step(int(done.Load()), n, msg)
		}
	}
}

// Defaults of learn.HeadConfig that withMinSteps needs to count steps and
// configFromV1 to read old model files (see learn.HeadConfig: Batch 0 means
// 128, ValFrac 0 means 0.1, Epochs 0 means 30, Hidden 0 means 256).
const (
	learnDefaultHidden  = 256
	learnDefaultBatch   = 128
	learnDefaultValFrac = 0.1
	learnDefaultEpochs  = 30
	maxHeadEpochs       = 1 << 16 // learn's limit on HeadConfig.Epochs
)

// withMinSteps raises h.Epochs so that training on n rows takes at least
// minSteps minibatch steps (learn drops the last partial batch of an epoch).
func withMinSteps(h learn.HeadConfig, n, minSteps int) learn.HeadConfig {
	if minSteps <= 0 {
		return h
	}
	batch, vf, epochs := h.Batch, h.ValFrac, h.Epochs
	if batch == 0 {
		batch = learnDefaultBatch
	}
	if vf == 0 {
		vf = learnDefaultValFrac
	}
	if epochs == 0 {
		epochs = learnDefaultEpochs
	}
	nVal := 0
	if vf > 0 {
		nVal = max(1, min(int(math.Round(vf*float64(n))), n-1))
	}
	nTrain := n - nVal
	steps := max(1, nTrain/max(1, min(batch, nTrain)))
	if need := (minSteps + steps - 1) / steps; need > epochs {
		h.Epochs = min(need, maxHeadEpochs)
		// A set this small is trained for many passes; it stops once its
		// training loss has converged (learn.HeadConfig.ConvergeTol: the
		// relative-reduction test of L-BFGS-B, Byrd et al. 1995, on window
		// means of the epoch losses) instead of running every raised epoch.
		if h.ConvergeTol == 0 {
			h.ConvergeTol = smallSetConvergeTol
		}
	}
	return h
}

// smallSetConvergeTol is the convergence tolerance withMinSteps sets when it
// raises the epoch count of a small set: a relative reduction of the
// window-mean training loss of 0.1% (on the scale max(|f|, 1), so an absolute
// 0.001 nats once the loss is below 1) between two windows of at least 100
// steps.
const smallSetConvergeTol = 1e-3
