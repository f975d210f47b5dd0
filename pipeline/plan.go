package pipeline

import (
	"errors"
	"fmt"

	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// Plan is a configuration checked and resolved once: every default filled
// in field by field, every stage's configuration validated (learn's
// template, head and dictionary configurations included), the front end
// built (kernels, separable-filter plans) and the shape after each stage
// worked out. Fit runs it, and the Model it returns extracts, predicts,
// scores and saves through the same plan and the same stage path. A Plan
// is immutable and safe for concurrent use.
type Plan struct {
	cfg   Config // resolved
	front *v1layer.FrontEnd
	// c×oh×ow is the front end's output; c×ph×pw the grid-pooled maps.
	c, oh, ow int
	ph, pw    int
	// bankPending: Config.LearnBank is set and Front.Bank empty, so front is
	// a stand-in with the learned kernels' size until Fit has learned them.
	bankPending bool
}

// NewPlan resolves and validates c. An error names the first bad field by
// its JSON path (input.denoise, templates[0].method, head.kind,
// learn_bank.dict.atoms) with the valid values, or the stages that do not
// fit together. A configuration whose work size (see PredictWork and
// FitWork; the fit on Config.Unlabeled images when that is a count) is
// above DefaultMaxWorkBytes gives a *WorkSizeError naming the fields that
// drive it; NewPlanLimits raises the limit.
func NewPlan(c Config) (*Plan, error) { return NewPlanLimits(c, Limits{}) }

// NewPlanLimits is NewPlan with the work-size limit of lim.
func NewPlanLimits(c Config, lim Limits) (*Plan, error) {
	p, err := newPlan(c)
	if err != nil {
		return nil, err
	}
	if err := p.checkWork(lim); err != nil {
		return nil, err
	}
	return p, nil
}

// newPlan is NewPlan without the work-size check.
func newPlan(c Config) (*Plan, error) {
	c = c.withDefaults()
	in := c.Input
	if in.Height < minSide || in.Height > maxSide || in.Width < minSide || in.Width > maxSide {
		return nil, fmt.Errorf("pipeline: input size %d×%d; want each side in [%d, %d] (0 means %d)", in.Height, in.Width, minSide, maxSide, defaultSide)
	}
	if err := in.validate(); err != nil {
		return nil, err
	}
	if err := c.Guard.validate(); err != nil {
		return nil, err
	}
	if err := c.Pool.validate(); err != nil {
		return nil, err
	}
	if c.Unlabeled < -1 {
		return nil, fmt.Errorf("pipeline: unlabeled %d; want -1 (all), 0 (default %d) or a positive count", c.Unlabeled, defaultUnlabeled)
	}
	if err := c.Head.Validate(); err != nil {
		return nil, learnErr("head", err)
	}
	if len(c.Templates) > maxTemplateLayers {
		return nil, fmt.Errorf("pipeline: %d template layers; want at most %d", len(c.Templates), maxTemplateLayers)
	}
	for i, tc := range c.Templates {
		path := fmt.Sprintf("templates[%d]", i)
		if err := tc.Validate(); err != nil {
			return nil, learnErr(path, err)
		}
		if tc.Sparse != nil {
			if err := noRunOptions(path+".sparse", *tc.Sparse); err != nil {
				return nil, err
			}
		}
	}
	p := &Plan{cfg: c}
	fc := c.Front
	if lb := c.LearnBank; lb != nil {
		if err := lb.validate(); err != nil {
			return nil, err
		}
		if fc.Bank == nil {
			// Shapes and work sizes are checked with a stand-in bank until
			// Fit has learned the real one: as many kernels as atoms, of
			// the learned kernels' size, none of them paired. A learned
			// atom without a quadrature partner gives two channels (on and
			// off half-waves) and a pair gives one, so the stand-in's
			// channel count, and the work size, bound the real bank's.
			fc.Bank = standInBank(lb.Dict.Atoms, lb.PatchSize)
			fc.Gabor.Disable = true
			p.bankPending = true
		}
	}
	fe, err := v1layer.New(fc)
	if err != nil {
		return nil, fmt.Errorf("pipeline: front: %w", err)
	}
	p.front = fe
	if p.c, p.oh, p.ow, err = fe.OutShape(in.Height, in.Width); err != nil {
		return nil, fmt.Errorf("pipeline: front end does not fit input %d×%d: %w", in.Height, in.Width, err)
	}
	for i, tc := range c.Templates {
		if tc.PatchSize > p.oh || tc.PatchSize > p.ow {
			return nil, fmt.Errorf("pipeline: templates[%d].patch_size %d is larger than the front end's %d×%d maps; use a smaller patch or a larger input", i, tc.PatchSize, p.oh, p.ow)
		}
	}
	p.ph, p.pw = poolLen(p.oh, c.Pool.Size, c.Pool.Stride), poolLen(p.ow, c.Pool.Size, c.Pool.Stride)
	if p.ph < 1 || p.pw < 1 {
		return nil, fmt.Errorf("pipeline: pool.size %d is larger than the front end's %d×%d maps; use a smaller pool.size", c.Pool.Size, p.oh, p.ow)
	}
	return p, nil
}

// Config returns the resolved configuration: every default filled in. The
// template list and the learned-bank settings are copies; Front.Bank, when
// set, is shared and must not be modified.
func (p *Plan) Config() Config {
	c := p.cfg
	c.Templates = make([]learn.TemplateConfig, len(p.cfg.Templates)) // never nil: nil means the default layers
	copy(c.Templates, p.cfg.Templates)
	if c.LearnBank != nil {
		lb := *c.LearnBank
		c.LearnBank = &lb
	}
	return c
}

// withConfig returns a copy of p holding c, which must differ from p's
// configuration only in what does not change a shape (stage seeds, the
// head's epoch count).
func (p *Plan) withConfig(c Config) *Plan {
	q := *p
	q.cfg = c
	return &q
}

func (p PoolConfig) validate() error {
	switch p.Op {
	case "avg", "max":
	default:
		return fmt.Errorf("pipeline: pool.op %q; want \"avg\" (default) or \"max\"", p.Op)
	}
	if p.Size < 1 || p.Size > maxPoolSize {
		return fmt.Errorf("pipeline: pool.size %d; want [1, %d] (0 means %d; 1 is no pooling)", p.Size, maxPoolSize, DefaultPool.Size)
	}
	if p.Stride < 1 || p.Stride > p.Size {
		return fmt.Errorf("pipeline: pool.stride %d; want [1, pool.size = %d] (0 means pool.size)", p.Stride, p.Size)
	}
	return nil
}

// learnErr names a bad field of one of learn's configurations by its JSON
// path in a pipeline configuration: path is where the configuration sits
// ("templates[0]"), the field's own key comes from the *learn.ConfigError.
func learnErr(path string, err error) error {
	var ce *learn.ConfigError
	if errors.As(err, &ce) {
		return fmt.Errorf("pipeline: %s.%s %s", path, ce.Key, ce.Detail)
	}
	return fmt.Errorf("pipeline: %s: %w", path, err)
}

// noRunOptions rejects the run-time knobs of a learn.DictConfig held in a
// pipeline configuration: they would be saved in model files, and Fit's
// FitOptions already carries them.
func noRunOptions(path string, d learn.DictConfig) error {
	switch {
	case d.Workers != 0:
		return fmt.Errorf("pipeline: %s.workers %d: the number of goroutines is a run-time option, not part of a model; leave it 0 and set FitOptions.Workers", path, d.Workers)
	case d.Coder.Workers != 0:
		return fmt.Errorf("pipeline: %s.coder.workers %d: the number of goroutines is a run-time option, not part of a model; leave it 0 and set FitOptions.Workers", path, d.Coder.Workers)
	case d.CheckpointEvery != 0 || d.OnCheckpoint != nil:
		return fmt.Errorf("pipeline: %s.checkpoint_every %d: checkpoints are a run-time option, not part of a model; leave it 0", path, d.CheckpointEvery)
	}
	return nil
}

// poolLen is the number of windows of size k, stride s over n cells, the
// last one clipped: ceil((n−k)/s)+1 for n ≥ k.
func poolLen(n, k, s int) int {
	if n < k {
		return 0
	}
	return (n-k+s-1)/s + 1
}

// standInBank returns atoms unpaired kernels of the size package learn gives
// a learned atom of side patch (the next odd size), each a unit impulse.
func standInBank(atoms, patch int) *v1layer.Bank {
	ks := patch | 1
	b := &v1layer.Bank{Kernels: make([]v1layer.Kernel, atoms)}
	for i := range b.Kernels {
		w := make([]float32, ks*ks)
		w[ks*ks/2] = 1
		b.Kernels[i] = v1layer.Kernel{Size: ks, W: w, Meta: v1layer.Channel{Kind: v1layer.KindLearned, Pair: -1}}
	}
	return b
}
