package pipeline

import (
	"encoding/json"
	"fmt"
	"io"
	"os"

	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// Config describes a pipeline: the ordered stages an image goes through and
// the supervised head. It is a plain value that round-trips through JSON
// (it is stored in every model file); every field's zero value means the
// documented default, so Config{} is the default recognizer. Build it in Go
// or read it with ParseConfig / LoadConfig, which reject unknown keys.
//
// Stages, in order:
//
//	input      any image → grey (BT.601 luma) → resized to Input.Height×Input.Width
//	front      v1layer front end (hand-set Gabor bank, or the bank in Front.Bank)
//	templates  learned templates over complex-cell patches, pooled (learn)   [optional]
//	pool       pooling of the front end's maps onto a grid, when there are no templates
//	guard      drop near-constant features, clip to the training range
//	head       softmax or MLP on standardised features (learn)
type Config struct {
	// Input sets the size every image is converted to before the front end.
	Input InputConfig `json:"input"`
	// Front is the front end; its zero value is v1layer's default. A learned
	// bank goes in Front.Bank (with Front.Gabor.Disable set).
	Front v1layer.Config `json:"front"`
	// LearnBank, when set and Front.Bank is empty, makes Fit learn the
	// simple-cell bank from natural photographs (see LearnBankConfig) and
	// put it in Front.Bank (with Front.Gabor.Disable set). When Front.Bank is
	// already filled (a fitted model's Config), that bank is used as is.
	LearnBank *LearnBankConfig `json:"learn_bank,omitempty"`
	// Templates lists the template layers, fitted without labels. nil (JSON
	// null or absent) means DefaultTemplates; an empty list means none (the
	// pooled front-end maps are then the features). Each layer after the
	// first is fitted on the previous layer's response maps. In each layer
	// a zero field means DefaultTemplates[0]'s value for it (method
	// "kmeans", k 64, patch_size 5) or, for the fields DefaultTemplates
	// leaves zero, learn's default (see learn.TemplateConfig).
	Templates []learn.TemplateConfig `json:"templates"`
	// Pool is the grid pooling of the front end's maps, the features when no
	// template layer follows and, unless Pool.Keep is false, appended to the
	// template features. Each zero field means its default (DefaultPool).
	Pool PoolConfig `json:"pool"`
	// Guard drops near-constant features and clips the rest to their
	// training range before the head (see GuardConfig).
	Guard GuardConfig `json:"guard"`
	// Head is the supervised head. A zero field means DefaultHead's value
	// for it (kind "mlp", hidden 512, epochs 15, schedule "cosine", val_frac
	// −1: no hold-out) or, for the fields DefaultHead leaves zero, learn's
	// default (see learn.HeadConfig); {"epochs": 5} is the default MLP
	// trained for 5 epochs. Hidden is ignored by a softmax head. To get
	// learn's hold-out with early stopping, set val_frac (0.1 is learn's).
	Head learn.HeadConfig `json:"head"`
	// Mirror is for classes that look the same mirrored left to right
	// (garments, shoes, bags; not digits or letters): the head is trained on
	// every training image and on its mirror image, and Predict averages the
	// class probabilities of an image and of its mirror image (Extract is
	// unchanged). It doubles the head's training time and the cost of a
	// prediction. On Fashion-MNIST (validation images from the training
	// split) it raised the accuracy from 91.83% to 92.12%.
	Mirror bool `json:"mirror,omitempty"`
	// HeadMinSteps is the number of minibatch steps a small training set's
	// head is given room for: when Head.Epochs passes give fewer steps, Fit
	// raises the epoch count to reach it and, unless Head.ConvergeTol is
	// set, turns on the convergence stop at 0.001 (the head then stops as
	// soon as its training loss has converged; see learn.HeadConfig). The
	// fitted model's Config records both. 0 means 3000; negative means no
	// minimum.
	HeadMinSteps int `json:"head_min_steps,omitempty"`
	// Unlabeled is the number of unlabeled images (taken without their
	// labels) the unsupervised stages are fitted on: 0 means 10000, -1 means
	// all of them. Ignored when no stage is unsupervised.
	Unlabeled int `json:"unlabeled,omitempty"`
	// Seed seeds every fitted stage whose own Seed is 0 (each stage gets a
	// different seed derived from this one). The same Seed and data give a
	// bit-identical model file.
	Seed uint64 `json:"seed,omitempty"`
}

// InputConfig sets the image size the pipeline works at. Images of any other
// size are resized (datasets.ToGray: x/image/draw, bilinear).
type InputConfig struct {
	// Height and Width in pixels; 0 means 28 (MNIST, Fashion-MNIST). Range [8, 1024].
	Height int `json:"height,omitempty"`
	Width  int `json:"width,omitempty"`
	// Normalize is "minmax" (default: stretch each image's grey values to
	// span [0,1], which undoes a global contrast change) or "none".
	Normalize string `json:"normalize,omitempty"`
	// Denoise is "auto" (default), "smooth", "adaptive", "median3" or
	// "none". "median3" applies a 3×3 median filter first, which removes
	// most of strong pixel noise at a small cost in fine detail; "auto"
	// estimates each image's noise level (Donoho & Johnstone's wavelet MAD)
	// and filters only noisy images: none below an estimated σ of 0.13,
	// once up to 0.185, twice above, each time followed by a grey-level
	// coring that sets what is within a multiple of σ̂ of black or white to
	// black or white. Clean MNIST and Fashion-MNIST images are left
	// untouched. "adaptive" first applies a grey-level area
	// opening and closing (Vincent 1993), which remove bright and dark
	// detail of fewer than 8 and 4 pixels (at 28×28; scaled with the image
	// area) whatever its contrast — impulses, specks, the dashes of a dotted
	// line — without moving any larger contour, then does what "auto" does
	// on what is left, with the noise estimated after the area filters.
	// "smooth" is "auto" without its steps: the number of median passes
	// s ∈ [0, 2] is the straight line through the middle of each of
	// "auto"'s steps (0 up to σ̂ = 0.1025, 0.5 at 0.13, 1.5 at 0.185, 2 from
	// 0.2125), a fraction of a pass blends the images on either side of it
	// (v + f·(median(v) − v)), and the coring width follows s, so the
	// output changes continuously with the noise level.
	Denoise string `json:"denoise,omitempty"`
	// Deskew is "none" (default) or "shear": shear each image's rows so that
	// the slant of its grey mass (the regression slope μ11/μ02 of x on y) is
	// removed, the deskewing of the classic MNIST benchmarks. For handwriting,
	// where slant is a habit of the writer rather than a property of the
	// class; on MNIST validation images (training split) it raised the
	// accuracy from 99.28% to 99.33% with all labels and from 98.52% to
	// 98.80% with 1,000 per class. Not for garments: on Fashion-MNIST it cost
	// half a point.
	Deskew string `json:"deskew,omitempty"`
	// Upright is "none" (default) or "vertical": after centring, a shape
	// whose principal axis (of its second moments) is tilted 15°-40° from
	// vertical and which is elongated is rotated about the centre so that
	// the axis is vertical. For objects that stand upright when they are
	// seen the usual way (garments); shapes nearer horizontal or diagonal,
	// and round ones, are left alone, and so are images in which Denoise
	// "auto" found noise (noise corrupts the moments). On Fashion-MNIST
	// validation images it raised the accuracy under a ±30° rotation from
	// 29% to 71% for 0.1 points of clean accuracy (with Mirror and Pool.Sqrt).
	Upright string `json:"upright,omitempty"`
	// Center is "mass" (default: shift each image by whole pixels so that
	// its centre of mass is at the image centre, as MNIST's makers did),
	// "robust" (the same shift computed on the image's 3×3 grey opening, so
	// lines and specks narrower than 3 px crossing or beside the item do not
	// pull it; the image itself is shifted unfiltered), "attend" (attend
	// to the item first: ink is what lies above the image's own Otsu
	// threshold, the 8-connected ink component of largest grey mass is the
	// item, and every other component below half its mass — a fragment of
	// another item, a speck, a dash — is cleared to the background's grey
	// before the grey stretch and the centre of mass, so both are the
	// item's; stray ink touching the item stays) or "none".
	Center string `json:"center,omitempty"`
	// Deblur is "none" (default) or "auto": estimate the blur of each
	// image's edges after Denoise (the re-blur gradient ratio of Zhuo & Sim
	// 2011) and, when it exceeds DeblurRef, undo the excess σₑ = √(σ̂² −
	// ref²) by Richardson-Lucy deconvolution with a Gaussian of σₑ (12
	// iterations). Images no blurrier than the training images are left
	// exactly as they are.
	Deblur string `json:"deblur,omitempty"`
	// DeblurRef is the edge blur, in pixels, that Deblur "auto" leaves
	// alone: 0 means Fit measures it on the training images (the 0.9
	// quantile of their estimates) and stores it in the model's
	// configuration. Range [0, 4].
	DeblurRef float64 `json:"deblur_ref,omitempty"`
}

// PoolConfig pools the front end's C×H×W maps onto a coarser grid: each
// output cell is the mean (or max) of a Size×Size window, windows Stride
// apart, clipped at the border. Size 1 keeps the maps as they are. Sqrt
// replaces every pooled value v ≥ 0 by sqrt(v) (a variance-stabilising
// compression of energy responses; common practice). Every zero field means
// the default beside it, whatever the other fields hold.
type PoolConfig struct {
	// Op is "avg" (default) or "max".
	Op string `json:"op,omitempty"`
	// Size of the window in cells; 0 means 2. Range [1, 16]; 1 is no pooling.
	Size int `json:"size,omitempty"`
	// Stride between windows; 0 means Size. Range [1, Size].
	Stride int `json:"stride,omitempty"`
	// Sqrt compresses the pooled values by a square root.
	Sqrt bool `json:"sqrt,omitempty"`
	// Keep says whether the pooled front-end maps are appended to the
	// template features when there are template layers (ignored without
	// them). nil (absent) means true, the default; false (in Go new(false))
	// leaves the template features alone. It is a pointer because its
	// default is true. (In model files of format version 1 an absent keep
	// meant false; Load reads them so.)
	Keep *bool `json:"keep,omitempty"`
}

// keep reports the resolved Keep (nil means true).
func (p PoolConfig) keep() bool { return p.Keep == nil || *p.Keep }

// Defaults and ranges of Config fields.
const (
	defaultSide      = 28
	minSide, maxSide = 8, 1024
	defaultUnlabeled = 10000
	// defaultHeadMinSteps: 3000 Adam steps of 128 rows is about 6 passes
	// over MNIST; below that a head on a few hundred rows is undertrained.
	defaultHeadMinSteps = 3000
	maxPoolSize         = 16
	// maxTemplateLayers bounds the stack; deeper stacks shrink 28×28 inputs
	// to nothing long before.
	maxTemplateLayers = 4
)

// The tuned defaults (chosen on MNIST and Fashion-MNIST; see the accuracy
// figures in the package's long tests).
var (
	// DefaultTemplates is one layer of 64 spherical k-means templates over
	// 5×5 patches of the complex-cell maps, soft-threshold code, max-pooled
	// on a 2×2 grid.
	DefaultTemplates = []learn.TemplateConfig{{Method: learn.MethodKMeans, K: 64, PatchSize: 5}}
	// DefaultPool is 2×2 average pooling, kept beside the template features.
	DefaultPool = PoolConfig{Op: "avg", Size: 2, Stride: 2, Keep: new(true)}
	// DefaultHead is a one-hidden-layer MLP of 512 ReLU units trained for 15
	// epochs with Adam and a cosine learning-rate schedule on every labelled
	// training image (ValFrac −1: no validation hold-out, no early stopping;
	// the schedule ends the run). It was chosen over learn's default of a 10%
	// hold-out with early stopping, which cost accuracy on both datasets and
	// most where labels are few.
	DefaultHead = learn.HeadConfig{Kind: learn.KindMLP, Hidden: 512, Epochs: 15, Schedule: learn.ScheduleCosine, ValFrac: -1}
)

// withDefaults fills every zero field with its documented default, field
// by field: a field set by hand never changes the meaning of another.
func (c Config) withDefaults() Config {
	if c.Templates == nil {
		c.Templates = DefaultTemplates
	}
	tc := make([]learn.TemplateConfig, len(c.Templates))
	for i, t := range c.Templates {
		tc[i] = templateDefaults(t)
	}
	c.Templates = tc
	c.Pool = c.Pool.withDefaults()
	c.Head = headDefaults(c.Head)
	c.Input = c.Input.withDefaults()
	c.Guard = c.Guard.withDefaults()
	if c.LearnBank != nil {
		lb := c.LearnBank.withDefaults()
		c.LearnBank = &lb
	}
	orDefault(&c.HeadMinSteps, defaultHeadMinSteps)
	orDefault(&c.Unlabeled, defaultUnlabeled)
	return c
}

// templateDefaults fills the zero fields of t that DefaultTemplates[0]
// sets; learn fills the rest when the layer is fitted.
func templateDefaults(t learn.TemplateConfig) learn.TemplateConfig {
	d := DefaultTemplates[0]
	orDefault(&t.Method, d.Method)
	orDefault(&t.K, d.K)
	orDefault(&t.PatchSize, d.PatchSize)
	return t
}

// headDefaults fills the zero fields of h that DefaultHead sets; learn
// fills the rest when the head is fitted.
func headDefaults(h learn.HeadConfig) learn.HeadConfig {
	d := DefaultHead
	orDefault(&h.Kind, d.Kind)
	if h.Kind == learn.KindMLP {
		orDefault(&h.Hidden, d.Hidden)
	}
	orDefault(&h.Epochs, d.Epochs)
	orDefault(&h.Schedule, d.Schedule)
	orDefault(&h.ValFrac, d.ValFrac)
	return h
}

func (p PoolConfig) withDefaults() PoolConfig {
	d := DefaultPool
	orDefault(&p.Op, d.Op)
	orDefault(&p.Size, d.Size)
	orDefault(&p.Stride, p.Size)
	if p.Keep == nil {
		p.Keep = new(*d.Keep)
	}
	return p
}

func (c InputConfig) withDefaults() InputConfig {
	orDefault(&c.Height, defaultSide)
	orDefault(&c.Width, defaultSide)
	orDefault(&c.Normalize, NormalizeMinMax)
	orDefault(&c.Denoise, DenoiseAuto)
	orDefault(&c.Center, CenterMass)
	orDefault(&c.Deskew, DeskewNone)
	orDefault(&c.Upright, UprightNone)
	orDefault(&c.Deblur, DeblurNone)
	return c
}

// orDefault sets *v to d when *v is its type's zero value.
func orDefault[T comparable](v *T, d T) {
	var zero T
	if *v == zero {
		*v = d
	}
}

// Validate checks every field of every stage, learn's configurations
// included, and that the stages fit together (the input is large enough for
// the front end, the pooled maps are not empty), by building the Plan and
// discarding it; NewPlan keeps it. It returns the first problem found,
// naming the field by its JSON path (templates[0].method) and the valid
// values.
func (c Config) Validate() error {
	_, err := NewPlan(c)
	return err
}

// ParseConfig reads a JSON configuration from r. Unknown keys are an error
// that names the key and the keys valid at its level; missing keys keep their
// zero-value defaults. Keys match case-sensitively ("Head" is refused, with
// the right spelling); a key given twice in one object, a null document, a
// null for a number, string, boolean or object key, and a UTF-8 byte-order
// mark are errors naming the JSON path. null is accepted for lists and
// optional objects (templates, learn_bank, pool.keep, grids...) and means
// the same as leaving the key out. The result is validated, its work size
// included (see NewPlan); ParseConfigLimits sets the work-size limit.
func ParseConfig(r io.Reader) (Config, error) { return ParseConfigLimits(r, Limits{}) }

// ParseConfigLimits is ParseConfig with the work-size limit of lim.
func ParseConfigLimits(r io.Reader, lim Limits) (Config, error) {
	b, err := io.ReadAll(io.LimitReader(r, MaxHeaderBytes+1))
	if err != nil {
		return Config{}, fmt.Errorf("pipeline: reading config: %w", err)
	}
	if len(b) > MaxHeaderBytes {
		return Config{}, fmt.Errorf("pipeline: config is larger than %d bytes", MaxHeaderBytes)
	}
	var c Config
	if err := decodeStrict(b, &c, "config"); err != nil {
		return Config{}, err
	}
	if _, err := NewPlanLimits(c, lim); err != nil {
		return Config{}, err
	}
	return c, nil
}

// LoadConfig is ParseConfig on the named file; errors name the file.
func LoadConfig(path string) (Config, error) {
	f, err := os.Open(path)
	if err != nil {
		return Config{}, fmt.Errorf("pipeline: %w", err)
	}
	defer f.Close()
	c, err := ParseConfig(f)
	if err != nil {
		return Config{}, fmt.Errorf("%w (in %s)", err, path)
	}
	return c, nil
}

// DefaultConfig returns the default pipeline with every default spelled
// out: what Config{} means, in a form that can be edited and saved.
func DefaultConfig() Config { return Config{}.withDefaults() }

// MarshalIndent returns the configuration as indented JSON, the form
// ParseConfig reads.
func (c Config) MarshalIndent() ([]byte, error) {
	return json.MarshalIndent(c, "", "  ")
}
