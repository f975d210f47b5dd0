package learn

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sync"

	"github.com/striate/striate/learn/internal/nn"
	"github.com/striate/striate/v1layer"
)

// Template methods, encoders and pooling operators (values of TemplateConfig fields).
const (
	MethodKMeans = "kmeans"
	MethodSparse = "sparse"

	EncodeSoft     = "soft"
	EncodeTriangle = "triangle"

	PoolMax = "max"
	PoolAvg = "avg"
)

// Limits on TemplateConfig, so a typo fails instead of allocating gigabytes.
const (
	maxTemplates   = 4096
	maxPatchSize   = 32
	maxPatchDim    = 4096 // C·p·p: the whitening matrix is dim×dim float64
	maxTrainPatch  = 1 << 22
	maxGrid        = 16
	maxScales      = 8
	maxKMeansIters = 1000
)

// TemplateConfig holds the hyper-parameters of a template layer: K templates
// over C×p×p patches of complex-cell maps, learned without labels, applied
// convolutionally, rectified and pooled. The zero value is a usable default;
// every field documents its zero-value meaning. It round-trips through JSON.
type TemplateConfig struct {
	// Method learns the templates: "kmeans" (default; spherical k-means on
	// normalised, whitened patches, Coates & Ng 2011) or "sparse" (the atoms of
	// a sparse-coding dictionary, DictConfig, learned on the same patches).
	Method string `json:"method,omitempty"`
	// K is the number of templates; 0 means 64.
	K int `json:"k,omitempty"`
	// PatchSize p is the side of a patch in map pixels; 0 means 5.
	PatchSize int `json:"patch_size,omitempty"`
	// Stride is the step between encoded positions; 0 means 1.
	Stride int `json:"stride,omitempty"`
	// Patches is the number of training patches sampled (seeded, uniformly
	// over maps and positions); 0 means 20000.
	Patches int `json:"patches,omitempty"`
	// NormEps regularises the per-patch normalisation
	// x̂ = (x − mean x)/sqrt(var x + ε) with ε = NormEps·(mean patch variance
	// of the training patches); 0 means 0.1; negative turns the normalisation
	// off (x̂ = x).
	NormEps float64 `json:"norm_eps,omitempty"`
	// WhitenEps regularises ZCA whitening W = U·diag(1/sqrt(λ_i + ε))·Uᵀ with
	// ε = WhitenEps·(mean eigenvalue); 0 means 0.1; negative turns whitening
	// off (W = I).
	WhitenEps float64 `json:"whiten_eps,omitempty"`
	// Iters is the number of spherical k-means iterations; 0 means 20.
	Iters int `json:"iters,omitempty"`
	// Sparse configures the dictionary of Method "sparse" (its Atoms is set
	// to K and its Seed, when 0, to Seed); nil means DictConfig{}'s defaults.
	Sparse *DictConfig `json:"sparse,omitempty"`
	// Encoder is the non-linearity: "soft" (default) gives the 2K features
	// max(0, r_k − α) and max(0, −r_k − α) of the template responses
	// r_k = t_k·W(x̂ − μ); "triangle" gives the K features
	// max(0, mean_j z_j − z_k), z_k = ||u − t_k|| with u = W(x̂ − μ)/||W(x̂ − μ)||
	// (Coates, Lee & Ng 2011).
	Encoder string `json:"encoder,omitempty"`
	// Alpha sets the soft threshold α = Alpha·(RMS of r_k over the training
	// patches); 0 means 0.5, negative means α = 0.
	Alpha float64 `json:"alpha,omitempty"`
	// Pool is the pooling over positions within a grid cell: "max" (default)
	// or "avg".
	Pool string `json:"pool,omitempty"`
	// Grids lists the pooling grids of the spatial pyramid: g splits the
	// response maps into g×g cells; nil means [2]. Each entry in [1, 16].
	Grids []int `json:"grids,omitempty"`
	// Scales lists the scale factors the maps are resampled to (bilinear)
	// before encoding; the pooled features are then max-pooled over scale. nil
	// means [1] (no scale pooling). Each in [0.25, 4].
	Scales []float64 `json:"scales,omitempty"`
	// MapPool is the side of the max pooling (stride = side) EncodeMaps
	// applies to its response maps, for stacking layers; 0 means 1 (none).
	MapPool int `json:"map_pool,omitempty"`
	// Seed drives patch sampling and the k-means start.
	Seed uint64 `json:"seed,omitempty"`
}

func (c TemplateConfig) resolved() (TemplateConfig, error) {
	r := c
	if c.Sparse != nil {
		sp := *c.Sparse // not shared with the caller
		r.Sparse = &sp
	}
	switch r.Method {
	case "":
		r.Method = MethodKMeans
	case MethodKMeans, MethodSparse:
	default:
		return r, cfgErr(c, "Method", "%q: want %q or %q", c.Method, MethodKMeans, MethodSparse)
	}
	def := func(v *int, d int, name string, lo, hi int) error {
		if *v == 0 {
			*v = d
		}
		if *v < lo || *v > hi {
			return cfgErr(c, name, "%d outside [%d, %d] (0 means %d)", *v, lo, hi, d)
		}
		return nil
	}
	for _, e := range []error{
		def(&r.K, 64, "K", 1, maxTemplates),
		def(&r.PatchSize, 5, "PatchSize", 1, maxPatchSize),
		def(&r.Stride, 1, "Stride", 1, maxPatchSize),
		def(&r.Patches, 20000, "Patches", 1, maxTrainPatch),
		def(&r.Iters, 20, "Iters", 1, maxKMeansIters),
		def(&r.MapPool, 1, "MapPool", 1, maxPatchSize),
	} {
		if e != nil {
			return r, e
		}
	}
	if r.Patches < r.K {
		return r, cfgErr(c, "Patches", "%d is below K = %d; sample at least K patches", r.Patches, r.K)
	}
	fdef := func(v *float64, d float64, name string) error {
		if math.IsNaN(*v) || math.IsInf(*v, 0) {
			return cfgErr(c, name, "is %g, want a finite number", *v)
		}
		if *v == 0 {
			*v = d
		}
		if *v < 0 {
			*v = 0
		}
		return nil
	}
	for _, e := range []error{fdef(&r.NormEps, 0.1, "NormEps"), fdef(&r.WhitenEps, 0.1, "WhitenEps"), fdef(&r.Alpha, 0.5, "Alpha")} {
		if e != nil {
			return r, e
		}
	}
	if c.NormEps < 0 {
		r.NormEps = -1 // off
	}
	if c.WhitenEps < 0 {
		r.WhitenEps = -1 // off
	}
	if c.Alpha < 0 {
		r.Alpha = -1 // α = 0; kept negative so that resolving again is the identity
	}
	switch r.Encoder {
	case "":
		r.Encoder = EncodeSoft
	case EncodeSoft, EncodeTriangle:
	default:
		return r, cfgErr(c, "Encoder", "%q: want %q or %q", c.Encoder, EncodeSoft, EncodeTriangle)
	}
	switch r.Pool {
	case "":
		r.Pool = PoolMax
	case PoolMax, PoolAvg:
	default:
		return r, cfgErr(c, "Pool", "%q: want %q or %q", c.Pool, PoolMax, PoolAvg)
	}
	if len(r.Grids) == 0 {
		r.Grids = []int{2}
	}
	if len(r.Grids) > maxGrid {
		return r, cfgErr(c, "Grids", "has %d entries, at most %d", len(r.Grids), maxGrid)
	}
	r.Grids = append([]int(nil), r.Grids...)
	for i, g := range r.Grids {
		if g < 1 || g > maxGrid {
			return r, cfgErr(c, fmt.Sprintf("Grids[%d]", i), "= %d outside [1, %d]", g, maxGrid)
		}
	}
	if len(r.Scales) == 0 {
		r.Scales = []float64{1}
	}
	if len(r.Scales) > maxScales {
		return r, cfgErr(c, "Scales", "has %d entries, at most %d", len(r.Scales), maxScales)
	}
	r.Scales = append([]float64(nil), r.Scales...)
	for i, s := range r.Scales {
		if !(s >= 0.25 && s <= 4) {
			return r, cfgErr(c, fmt.Sprintf("Scales[%d]", i), "= %g outside [0.25, 4]", s)
		}
	}
	if r.Sparse != nil {
		sp := *r.Sparse
		sp.Atoms = r.K // as Fit sets it
		if err := sp.Validate(); err != nil {
			return r, within(c, "Sparse", err)
		}
	}
	return r, nil
}

// Validate checks every field of c, zero fields taking their defaults, as
// Fit does before it looks at any data. A bad field gives a *ConfigError
// naming it (Go name and JSON key) and its valid values.
func (c TemplateConfig) Validate() error {
	_, err := c.resolved()
	return err
}

// Templates is a fitted template layer. It is immutable and safe for
// concurrent use; Encode keeps its scratch in a sync.Pool.
type Templates struct {
	cfg     TemplateConfig // resolved
	c, p    int            // input channels, patch side
	dim     int            // c·p·p
	k       int
	mean    []float32 // μ, dim: mean of the normalised training patches
	whiten  []float32 // W, dim×dim (symmetric)
	cent    []float32 // t_k, k×dim, unit norm, in whitened space
	alpha   float32   // absolute soft threshold
	normEps float32   // absolute ε of the per-patch normalisation; < 0 = off

	filt []float32 // F = t·W (k×dim): responses r = F·(x̂ − μ) for the soft encoder
	fmu  []float32 // F·μ (k): the soft encoder's per-template offset
	pool sync.Pool
}

// TemplateFitReport describes a template fit.
type TemplateFitReport struct {
	Config    TemplateConfig // with defaults filled in (negative "off" values kept as −1)
	Patches   int            // patches used
	Dim       int            // C·p·p
	Empty     int            // k-means clusters re-seeded because they emptied (summed over iterations)
	Objective []float64      // k-means: mean cosine of each patch to its template, per iteration
}

// TemplateFitOptions carries the run-time (non-model) options of
// TemplateConfig.FitWith.
type TemplateFitOptions struct {
	// Workers is the number of goroutines of the whitening, the k-means
	// steps and the soft threshold's responses; 0 or less means 1. The
	// fitted templates do not depend on it, bit for bit.
	Workers int
	// Progress receives the fit's steps; nil is silent.
	Progress Progress
}

// Fit learns the templates from unlabeled complex-cell maps (all with the
// same channel count; sizes may differ, each at least PatchSize square).
// progress may be nil.
func (c TemplateConfig) Fit(maps []v1layer.Maps, progress Progress) (*Templates, TemplateFitReport, error) {
	return c.FitWith(maps, TemplateFitOptions{Progress: progress})
}

// FitWith is Fit on opt.Workers goroutines.
func (c TemplateConfig) FitWith(maps []v1layer.Maps, opt TemplateFitOptions) (*Templates, TemplateFitReport, error) {
	progress := opt.Progress
	cfg, err := c.resolved()
	rep := TemplateFitReport{Config: cfg}
	if err != nil {
		return nil, rep, err
	}
	if len(maps) == 0 {
		return nil, rep, fmt.Errorf("learn: template fit: no maps")
	}
	C, p := maps[0].C, cfg.PatchSize
	for i := range maps {
		m := &maps[i]
		if m.C != C || m.C < 1 {
			return nil, rep, fmt.Errorf("learn: template fit: map %d has %d channels, map 0 has %d", i, m.C, C)
		}
		if m.H < p || m.W < p {
			return nil, rep, fmt.Errorf("learn: template fit: map %d is %d×%d, smaller than PatchSize %d", i, m.H, m.W, p)
		}
		if len(m.Pix) != m.Len() {
			return nil, rep, fmt.Errorf("learn: template fit: map %d has %d values, want C·H·W = %d", i, len(m.Pix), m.Len())
		}
	}
	dim := C * p * p
	if dim > maxPatchDim {
		return nil, rep, fmt.Errorf("learn: template fit: patch dimension C·p·p = %d·%d·%d = %d exceeds %d; lower PatchSize", C, p, p, dim, maxPatchDim)
	}
	n := cfg.Patches
	rep.Patches, rep.Dim = n, dim
	rng := rand.New(rand.NewPCG(cfg.Seed, 0x7061_7463_68))
	X := make([]float32, n*dim)
	for i := 0; i < n; i++ {
		m := &maps[rng.IntN(len(maps))]
		y0, x0 := rng.IntN(m.H-p+1), rng.IntN(m.W-p+1)
		extractPatch(X[i*dim:(i+1)*dim], m, y0, x0, p)
	}
	for _, v := range X {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return nil, rep, fmt.Errorf("learn: template fit: the maps hold a non-finite value")
		}
	}
	t := &Templates{cfg: cfg, c: C, p: p, dim: dim, k: cfg.K}
	// Per-patch normalisation.
	t.normEps = -1
	if cfg.NormEps >= 0 {
		var mv float64
		for i := 0; i < n; i++ {
			_, v := meanVar(X[i*dim : (i+1)*dim])
			mv += v
		}
		mv /= float64(n)
		t.normEps = float32(cfg.NormEps * mv)
		if t.normEps <= 0 {
			t.normEps = 1e-12 // blank training maps: avoid 0/0
		}
		for i := 0; i < n; i++ {
			normalizePatch(X[i*dim:(i+1)*dim], t.normEps)
		}
	}
	// Centre and whiten.
	team := nn.NewTeam(opt.Workers)
	defer team.Close()
	t.mean, t.whiten, err = fitWhitening(X, n, dim, cfg.WhitenEps, team)
	if err != nil {
		return nil, rep, err
	}
	Xw := make([]float32, n*dim)
	applyWhitening(Xw, X, n, dim, t.mean, t.whiten, team)
	if progress != nil {
		progress.Step(0, cfg.Iters, "patches whitened")
	}
	switch cfg.Method {
	case MethodKMeans:
		init := make([]float32, cfg.K*dim)
		for j, r := range rng.Perm(n)[:cfg.K] {
			copy(init[j*dim:(j+1)*dim], Xw[r*dim:(r+1)*dim])
		}
		res := sphericalKMeans(Xw, n, dim, cfg.K, cfg.Iters, init, rng, progress, team)
		t.cent, rep.Empty, rep.Objective = res.centroids, res.empty, res.objective
	case MethodSparse:
		var dc DictConfig
		if cfg.Sparse != nil {
			dc = *cfg.Sparse
		}
		dc.Atoms = cfg.K
		if dc.Seed == 0 {
			dc.Seed = cfg.Seed
		}
		d, err := dc.Fit(Xw, dim, progress)
		if err != nil {
			return nil, rep, fmt.Errorf("learn: template fit (sparse): %w", err)
		}
		t.cent = d.Weights()
	}
	t.derive()
	// Soft threshold relative to the RMS template response on training patches.
	// The responses are computed in blocks of rows on the team and summed
	// in row order, as on one goroutine.
	if cfg.Encoder == EncodeSoft && cfg.Alpha > 0 {
		const rows = 256
		m := min(n, 5000)
		r := make([]float32, m*cfg.K)
		team.Run((m+rows-1)/rows, func(u int) {
			for i := u * rows; i < min(m, (u+1)*rows); i++ {
				row := Xw[i*dim : (i+1)*dim]
				for k := 0; k < cfg.K; k++ {
					r[i*cfg.K+k] = dot32(t.cent[k*dim:(k+1)*dim], row)
				}
			}
		})
		var ss float64
		for _, v := range r {
			ss += float64(v) * float64(v)
		}
		t.alpha = float32(cfg.Alpha * math.Sqrt(ss/float64(m*cfg.K)))
	}
	return t, rep, nil
}

// derive computes the folded filters F = T·W from the learned tensors.
func (t *Templates) derive() {
	t.filt = make([]float32, t.k*t.dim)
	for k := 0; k < t.k; k++ {
		ck := t.cent[k*t.dim : (k+1)*t.dim]
		fk := t.filt[k*t.dim : (k+1)*t.dim]
		// (t_k W)_j = Σ_i t_ki W_ij; W is symmetric.
		acc := make([]float64, t.dim)
		for i, v := range ck {
			if v == 0 {
				continue
			}
			row := t.whiten[i*t.dim : (i+1)*t.dim]
			for j, w := range row {
				acc[j] += float64(v) * float64(w)
			}
		}
		for j := range fk {
			fk[j] = float32(acc[j])
		}
	}
	t.fmu = make([]float32, t.k)
	for k := range t.fmu {
		var s float64
		for j, f := range t.filt[k*t.dim : (k+1)*t.dim] {
			s += float64(f) * float64(t.mean[j])
		}
		t.fmu[k] = float32(s)
	}
}

// extractPatch copies the C×p×p patch at (y0, x0) of m into dst, index
// (c·p + dy)·p + dx.
func extractPatch(dst []float32, m *v1layer.Maps, y0, x0, p int) {
	i := 0
	for c := 0; c < m.C; c++ {
		for dy := 0; dy < p; dy++ {
			off := (c*m.H+y0+dy)*m.W + x0
			copy(dst[i:i+p], m.Pix[off:off+p])
			i += p
		}
	}
}

func meanVar(x []float32) (mean, variance float64) {
	var s float64
	for _, v := range x {
		s += float64(v)
	}
	mean = s / float64(len(x))
	var q float64
	for _, v := range x {
		e := float64(v) - mean
		q += e * e
	}
	return mean, q / float64(len(x))
}

// normalizePatch applies x ← (x − mean x)/sqrt(var x + eps) in place.
func normalizePatch(x []float32, eps float32) {
	m, v := meanVar(x)
	inv := 1 / math.Sqrt(v+float64(eps))
	for i, u := range x {
		x[i] = float32((float64(u) - m) * inv)
	}
}

func dot32(a, b []float32) float32 {
	var s float32
	for i, v := range a {
		s += v * b[i]
	}
	return s
}

// K returns the number of templates.
func (t *Templates) K() int { return t.k }

// Config returns the resolved config.
func (t *Templates) Config() TemplateConfig {
	c := t.cfg
	c.Grids = append([]int(nil), c.Grids...)
	c.Scales = append([]float64(nil), c.Scales...)
	if c.Sparse != nil {
		sp := *c.Sparse
		c.Sparse = &sp
	}
	return c
}

// Channels returns the number of input channels C the templates expect.
func (t *Templates) Channels() int { return t.c }

// Features returns the number of response maps per position: 2K (soft) or K (triangle).
func (t *Templates) Features() int {
	if t.cfg.Encoder == EncodeSoft {
		return 2 * t.k
	}
	return t.k
}

// Template copies template k (C×p×p, in whitened patch space, unit norm)
// into dst and returns it.
func (t *Templates) Template(dst []float32, k int) []float32 {
	return append(dst[:0], t.cent[k*t.dim:(k+1)*t.dim]...)
}
