package v1layer

import (
	"github.com/striate/striate/internal/raster"

	"fmt"
	"math"
	"slices"
	"sync"
	"sync/atomic"
)

// SaliencyConfig sets up bottom-up saliency after Itti, Koch & Niebur
// (1998, IEEE PAMI 20:1254-1259) on grey frames, built from this package's
// own front end (see Saliency for the method). The zero value is the default;
// each zero field means its own default, whatever else is set.
type SaliencyConfig struct {
	// Centres are the centre levels c of the frame's pyramid (level k has
	// 2^−k of the frame's side). Default [1, 2, 3]: with the default
	// kernels, DoG centres of 2, 4 and 8 frame px and Gabor wavelengths
	// of 8, 16 and 32 frame px, matched to the strokes, parts and
	// outlines of items 20-45 px across; the model's own [2, 3, 4] suits
	// larger objects. Increasing, at most 4 levels, each in [0, 6].
	Centres []int `json:"centres,omitempty"`
	// Deltas δ set the surround levels s = c + δ. Default [3, 4], the
	// model's. Increasing, at most 3, each in [1, 5].
	Deltas []int `json:"deltas,omitempty"`
	// Level is the pyramid level of the saliency map, where the
	// across-scale addition lands. Default: the coarsest centre level (the
	// model's choice, level 4 for its centres). Range [1, 8].
	Level int `json:"level,omitempty"`
	// DoGSigma is the centre σ of the on/off DoG at every level, in pixels
	// of that level. Default 1 (the front end's finest DoG); range [0.5, 4].
	DoGSigma float64 `json:"dog_sigma,omitempty"`
	// Orientations of the complex cells (quadrature energy of a Gabor
	// pair), θ_k = k·π/n. Default 4 (0°, 45°, 90°, 135°, as in the model);
	// range [1, 16].
	Orientations int `json:"orientations,omitempty"`
	// Wavelength λ of the Gabor pairs at every level, in pixels of that
	// level. Default 4 (the front end's finest); range [2, 16].
	Wavelength float64 `json:"wavelength,omitempty"`
	// MinPeak: local maxima below MinPeak·M do not count as "other local
	// maxima" in N(·), so that the ripples of an empty background do not
	// dilute the mean of the real peaks (common practice; the paper does
	// not say). Default 0.1; range (0, 1).
	MinPeak float64 `json:"min_peak,omitempty"`
}

// Limits on the pyramid levels a SaliencyConfig may name.
const (
	maxSalLevel   = 8 // the model's deepest level (1:256)
	maxSalCentres = 4
	maxSalDeltas  = 3
)

// Below these maxima a map is treated as empty: N(·) would otherwise
// stretch float32 rounding to the full range. Feature maps are in the
// front end's response units, where a step of one grey level (1/255)
// gives 3e-3 at the σ_c = 1 DoG and rounding on a uniform frame ≤ 2.2e-7
// (both builds); the centre-surround maps are differences of these;
// conspicuity maps are sums of N(·) outputs, dimensionless in [0, n].
const (
	salFeatureFloor = 1e-5
	salMapFloor     = 1e-6
)

// salFlat is the relative spread below which N(·) treats a map as
// constant: 100× the ~1e-6 relative rounding the float32 stages leave.
const salFlat = 1e-4

func (c SaliencyConfig) withDefaults() SaliencyConfig {
	if len(c.Centres) == 0 {
		c.Centres = []int{1, 2, 3}
	} else {
		c.Centres = slices.Clone(c.Centres)
	}
	if len(c.Deltas) == 0 {
		c.Deltas = []int{3, 4}
	} else {
		c.Deltas = slices.Clone(c.Deltas)
	}
	if c.Level == 0 && len(c.Centres) > 0 {
		c.Level = c.Centres[len(c.Centres)-1]
	}
	if c.DoGSigma == 0 {
		c.DoGSigma = 1
	}
	if c.Orientations == 0 {
		c.Orientations = 4
	}
	if c.Wavelength == 0 {
		c.Wavelength = 4
	}
	if c.MinPeak == 0 {
		c.MinPeak = 0.1
	}
	return c
}

func (c SaliencyConfig) validate() error {
	if len(c.Centres) > maxSalCentres {
		return fmt.Errorf("v1layer: SaliencyConfig.Centres has %d levels; at most %d (default [1 2 3])", len(c.Centres), maxSalCentres)
	}
	for i, v := range c.Centres {
		if v < 0 || v > 6 || (i > 0 && v <= c.Centres[i-1]) {
			return fmt.Errorf("v1layer: SaliencyConfig.Centres %v; want increasing levels in [0,6] (default [1 2 3])", c.Centres)
		}
	}
	if len(c.Deltas) > maxSalDeltas {
		return fmt.Errorf("v1layer: SaliencyConfig.Deltas has %d offsets; at most %d (default [3 4])", len(c.Deltas), maxSalDeltas)
	}
	for i, v := range c.Deltas {
		if v < 1 || v > 5 || (i > 0 && v <= c.Deltas[i-1]) {
			return fmt.Errorf("v1layer: SaliencyConfig.Deltas %v; want increasing offsets in [1,5] (default [3 4])", c.Deltas)
		}
	}
	if c.Level < 1 || c.Level > maxSalLevel {
		return fmt.Errorf("v1layer: SaliencyConfig.Level %d out of range [1,%d]; the default is the coarsest centre level", c.Level, maxSalLevel)
	}
	if !(c.DoGSigma >= 0.5 && c.DoGSigma <= 4) {
		return fmt.Errorf("v1layer: SaliencyConfig.DoGSigma %g px out of range [0.5,4]; 1 is the default", c.DoGSigma)
	}
	if c.Orientations < 1 || c.Orientations > 16 {
		return fmt.Errorf("v1layer: SaliencyConfig.Orientations %d out of range [1,16]; 4 is the default", c.Orientations)
	}
	if !(c.Wavelength >= 2 && c.Wavelength <= 16) {
		return fmt.Errorf("v1layer: SaliencyConfig.Wavelength %g px out of range [2,16] (2 px is the Nyquist limit); 4 is the default", c.Wavelength)
	}
	if !(c.MinPeak > 0 && c.MinPeak < 1) {
		return fmt.Errorf("v1layer: SaliencyConfig.MinPeak %g out of range (0,1); 0.1 is the default", c.MinPeak)
	}
	return nil
}

// Saliency computes bottom-up saliency maps of grey frames after Itti,
// Koch & Niebur (1998, "A model of saliency-based visual attention for
// rapid scene analysis", IEEE PAMI 20:1254-1259) from this package's own
// front end. Frames are grey, so the model's colour channel is left out
// and its intensity and orientation channels remain.
//
// # Pyramid
//
// Level 0 is the frame; level k+1 is level k correlated along rows and
// columns with the binomial [1 5 10 10 5 1]/32 and sampled every second
// pixel, centred between samples 2i and 2i+1 (Burt & Adelson 1983's
// Gaussian pyramid with an even kernel), half-sample reflection at the
// edges. Level k is ceil(n/2^k) pixels a side and its pixel i lies at
// frame position (i+0.5)·2^k − 0.5, so every level keeps the frame's
// mirror symmetry.
//
// # Features
//
// At each centre level c the front end (New) runs on the level-c image
// with a reflect border and no pooling, giving the intensity features —
// the on- and off-centre DoG maps (σ_c = DoGSigma, σ_s = 1.6·σ_c, in
// pixels of that level) — and the orientation features — the quadrature
// energy of a Gabor pair (λ = Wavelength, 1 octave) at each of the
// Orientations orientations. Call them F_c.
//
// # Centre-surround differences
//
//	F(c, s) = |F_c ⊖ R^(s−c) F_c|,  s = c + δ,  δ ∈ Deltas
//
// R is one pyramid step and ⊖ the model's across-scale difference: the
// coarse map is interpolated (bilinearly, on the grid above) back to level
// c and subtracted point by point. The model computes its surround
// feature on the level-s image; here it is the centre's own feature map
// reduced s−c levels, the local mean of the same feature over a region
// 2^δ times wider. For the model's intensity channel the two are the same
// thing (its intensity pyramid is the reduction), and this way the front
// end's kernels never meet levels too small to hold them (level 7 of a
// 256-px frame is 2 px wide).
//
// # Combination
//
// The model's conspicuity and saliency maps without colour, ⊕ being
// across-scale addition (each map brought to the map level Level — pyramid steps down,
// bilinear interpolation up — and added point by point):
//
//	Ī = ⊕_c ⊕_s [N(F_on(c,s)) + N(F_off(c,s))]
//	Ō = Σ_θ N(⊕_c ⊕_s N(F_θ(c,s)))
//	S = (N(Ī) + N(Ō)) / 2
//
// N is the model's normalisation operator: scale the map to [0, M],
// M = 1, by its maximum (zero stays zero); find the global maximum M and
// the mean m̄ of the other local maxima (those ≥ MinPeak·M); multiply by
// (M − m̄)². One isolated peak keeps the range, many equal peaks cancel.
// Maps of rounding size, and maps flat to 1e-4 of their maximum, are
// cleared. S lies in [0, 1] and is 1 only where one location dominates
// every map.
//
// # Properties
//
// A single bar of odd orientation among many pops out; a uniform texture
// that continues across the frame's edges gives the zero map (every
// centre-surround map is then periodic or constant, and N sends both to
// zero); k equal items each hold 1/k of the saliency and pull the peak
// down; a blank frame gives the zero map. A texture that does not
// continue across an edge has a seam in its reflection there, which is
// salient like any other discontinuity: frame edges of a textured belt
// stand out.
//
// # Sizes
//
// With the defaults (Centres [1 2 3], Deltas [3 4], Level 3) the map has
// one pixel per 8×8 frame pixels, and a frame must be at least 57 px a
// side so that level 3 holds the 15-px Gabor kernels (MinSide). Scratch
// takes about 60 bytes per frame pixel (17 MB at 640×480) for each frame
// size in use; the largest frame side is MaxSide.
//
// A Saliency is immutable and safe for concurrent use; Map spreads one
// frame over any number of workers with bit-identical results.
type Saliency struct {
	cfg     SaliencyConfig
	fes     []*FrontEnd // per centre level
	nDoG    int         // leading front-end channels that are DoG on/off
	nc      int         // front-end channels
	deep    int         // deepest pyramid level any map reaches
	scratch sync.Pool
}

// NewSaliency validates cfg once and builds the saliency plan.
func NewSaliency(cfg SaliencyConfig) (*Saliency, error) {
	cfg = cfg.withDefaults()
	if err := cfg.validate(); err != nil {
		return nil, err
	}
	s := &Saliency{cfg: cfg}
	fc := Config{
		DoG:    DoGConfig{Sigmas: []float64{cfg.DoGSigma}},
		Gabor:  GaborConfig{Orientations: cfg.Orientations, Wavelength: cfg.Wavelength, Scales: 1},
		Pool:   PoolConfig{Size: 1, Stride: 1},
		Border: BorderReflect,
	}
	for range cfg.Centres {
		fe, err := New(fc)
		if err != nil {
			return nil, fmt.Errorf("v1layer: SaliencyConfig: %w", err)
		}
		s.fes = append(s.fes, fe)
	}
	for _, ch := range s.fes[0].Channels() {
		if ch.Kind == KindDoG {
			s.nDoG++
		}
		s.nc++
	}
	s.deep = max(cfg.Centres[len(cfg.Centres)-1]+cfg.Deltas[len(cfg.Deltas)-1], cfg.Level)
	return s, nil
}

// Config returns the configuration with every default filled in.
func (s *Saliency) Config() SaliencyConfig {
	c := s.cfg
	c.Centres, c.Deltas = slices.Clone(c.Centres), slices.Clone(c.Deltas)
	return c
}

// halve is the side of the next pyramid level: ceil(n/2).
func halve(n int) int { return (n + 1) / 2 }

// levelSide returns the side of pyramid level k of an n-pixel side.
func levelSide(n, k int) int {
	for ; k > 0; k-- {
		n = halve(n)
	}
	return n
}

// MinSide is the smallest frame side accepted: the coarsest centre level
// must still hold the front end's largest kernel (FrontEnd.MinSide).
func (s *Saliency) MinSide() int {
	m := s.fes[0].MinSide()
	c := s.cfg.Centres[len(s.cfg.Centres)-1]
	return (m-1)<<c + 1
}

// Scale is the frame pixels per map pixel along each axis, 2^Level. Map
// pixel (i, j) is centred on frame position x = (j+0.5)·Scale − 0.5,
// y = (i+0.5)·Scale − 0.5 (pixel centres at integers).
func (s *Saliency) Scale() int { return 1 << s.cfg.Level }

// MapShape returns the saliency map's size for an h×w frame, or an error
// if the frame is too small or too large.
func (s *Saliency) MapShape(h, w int) (mh, mw int, err error) {
	if m := s.MinSide(); h < m || w < m {
		c := s.cfg.Centres[len(s.cfg.Centres)-1]
		return 0, 0, fmt.Errorf("v1layer: saliency frame %d×%d is smaller than %d×%d, the minimum for centre level %d (its %d×%d image must hold the %d-px kernels); use a larger frame, or lower SaliencyConfig.Centres",
			h, w, m, m, c, levelSide(h, c), levelSide(w, c), 2*s.fes[0].MinSide()-1)
	}
	if h > MaxSide || w > MaxSide {
		return 0, 0, fmt.Errorf("v1layer: saliency frame %d×%d is larger than the %d px limit (MaxSide); downscale it first", h, w, MaxSide)
	}
	return levelSide(h, s.cfg.Level), levelSide(w, s.cfg.Level), nil
}

// salScratch holds one call's buffers for one frame size.
type salScratch struct {
	h, w    int
	lh, lw  []int       // level sizes, levels 0..deep
	pyr     [][]float32 // frame pyramid, levels 0..max centre (pyr[0]: the frame, during a call)
	feat    []Maps      // front-end maps per centre
	contrib [][]float32 // per (centre, channel): its map-level contribution
	inten   []float32
	orient  []float32
	theta   []float32
	tmp     []float32
	work    []*salWork
}

// salWork is one worker's buffers for the centre-surround stage.
type salWork struct {
	chain [][]float32 // a feature map's pyramid, levels c..deep
	sur   []float32   // a surround expanded to level c
	acc   []float32   // Σ over δ of N(|F ⊖ surround|) at level c
	tmp   []float32
	idx   []int32 // interpolation indices and weights (expand)
	wt    []float32
}

func growF(b []float32, n int) []float32 {
	if cap(b) < n {
		return make([]float32, n)
	}
	return b[:n]
}

func (s *Saliency) getScratch(h, w, workers int) *salScratch {
	sc, _ := s.scratch.Get().(*salScratch)
	if sc == nil {
		sc = &salScratch{}
	}
	cfg := &s.cfg
	if sc.h != h || sc.w != w {
		sc.lh, sc.lw = sc.lh[:0], sc.lw[:0]
		for k := 0; k <= s.deep; k++ {
			sc.lh, sc.lw = append(sc.lh, levelSide(h, k)), append(sc.lw, levelSide(w, k))
		}
		top := cfg.Centres[len(cfg.Centres)-1]
		if len(sc.pyr) != top+1 {
			sc.pyr = make([][]float32, top+1)
		}
		for k := 1; k <= top; k++ {
			sc.pyr[k] = growF(sc.pyr[k], sc.lh[k]*sc.lw[k])
		}
		if len(sc.feat) != len(cfg.Centres) {
			sc.feat = make([]Maps, len(cfg.Centres))
		}
		if len(sc.contrib) != len(cfg.Centres)*s.nc {
			sc.contrib = make([][]float32, len(cfg.Centres)*s.nc)
		}
		mn := sc.lh[cfg.Level] * sc.lw[cfg.Level]
		for i := range sc.contrib {
			sc.contrib[i] = growF(sc.contrib[i], mn)
		}
		sc.inten, sc.orient = growF(sc.inten, mn), growF(sc.orient, mn)
		sc.theta = growF(sc.theta, mn)
		sc.tmp = growF(sc.tmp, h*w)
		for _, wk := range sc.work {
			s.sizeWork(wk, sc)
		}
		sc.h, sc.w = h, w
	}
	for len(sc.work) < workers {
		wk := &salWork{}
		s.sizeWork(wk, sc)
		sc.work = append(sc.work, wk)
	}
	return sc
}

// sizeWork sizes a worker's buffers for the finest level it works on: the
// finest centre level or the map level, whichever is finer.
func (s *Saliency) sizeWork(wk *salWork, sc *salScratch) {
	c0 := min(s.cfg.Centres[0], s.cfg.Level)
	n := sc.lh[c0] * sc.lw[c0]
	if len(wk.chain) != s.deep+1 {
		wk.chain = make([][]float32, s.deep+1)
	}
	for k := c0 + 1; k <= s.deep; k++ {
		wk.chain[k] = growF(wk.chain[k], sc.lh[k]*sc.lw[k])
	}
	wk.sur, wk.acc, wk.tmp = growF(wk.sur, n), growF(wk.acc, n), growF(wk.tmp, n)
	side := max(sc.lh[c0], sc.lw[c0])
	if cap(wk.idx) < side {
		wk.idx, wk.wt = make([]int32, side), make([]float32, side)
	}
	wk.idx, wk.wt = wk.idx[:side], wk.wt[:side]
}

// Map writes the saliency map of the h×w row-major grey frame img (values
// in [0,1]) to dst as one channel of MapShape(h, w), resizing it:
//
//	S = (N(Ī) + N(Ō))/2
//
// (Saliency gives Ī, Ō and N). The work is spread over workers
// goroutines (≤ 0 means 1); the result is bit-identical for any number.
// It returns an error, and leaves dst alone, if the frame is too small
// or too large for MapShape, img holds fewer than h·w pixels, or a pixel
// is NaN or infinite. It is safe for concurrent use; on one worker it
// allocates nothing once scratch for the frame size exists (more workers
// start their goroutines on each call).
func (s *Saliency) Map(dst *Maps, img []float32, h, w, workers int) error {
	mh, mw, err := s.MapShape(h, w)
	if err != nil {
		return err
	}
	if len(img) < h*w {
		return fmt.Errorf("v1layer: saliency frame has %d pixels, want %d×%d = %d; pass the whole row-major frame", len(img), h, w, h*w)
	}
	for i, v := range img[:h*w] {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return fmt.Errorf("v1layer: saliency frame pixel (row %d, column %d) is %v; want finite grey values in [0,1]", i/w, i%w, v)
		}
	}
	cfg := &s.cfg
	workers = max(1, min(workers, len(cfg.Centres)*s.nc)) // no more than the jobs
	sc := s.getScratch(h, w, workers)
	defer s.scratch.Put(sc)

	// The frame's pyramid, up to the coarsest centre level.
	sc.pyr[0] = img[:h*w]
	defer func() { sc.pyr[0] = nil }() // keep no reference to the caller's frame
	for k := 1; k < len(sc.pyr); k++ {
		pyrReduce(sc.pyr[k], sc.pyr[k-1], sc.lh[k-1], sc.lw[k-1], sc.tmp)
	}
	// Front-end maps at each centre level, then the centre-surround maps,
	// N(·) and across-scale addition, one job per (centre, channel).
	s.spread(sc, stageFrontEnd, len(cfg.Centres), workers)
	s.spread(sc, stageCentreSurround, len(cfg.Centres)*s.nc, workers)

	// Conspicuity maps and their combination, in a fixed order.
	mn := mh * mw
	inten, orient, theta := sc.inten[:mn], sc.orient[:mn], sc.theta[:mn]
	clear(inten)
	clear(orient)
	for i := range cfg.Centres {
		for ch := 0; ch < s.nDoG; ch++ {
			addTo(inten, sc.contrib[i*s.nc+ch])
		}
	}
	for ch := s.nDoG; ch < s.nc; ch++ {
		clear(theta)
		for i := range cfg.Centres {
			addTo(theta, sc.contrib[i*s.nc+ch])
		}
		salNorm(theta, mh, mw, cfg.MinPeak, salMapFloor)
		addTo(orient, theta)
	}
	salNorm(inten, mh, mw, cfg.MinPeak, salMapFloor)
	salNorm(orient, mh, mw, cfg.MinPeak, salMapFloor)
	dst.Resize(1, mh, mw)
	for k, v := range inten {
		dst.Pix[k] = (v + orient[k]) / 2
	}
	return nil
}

// centreSurround writes to out (map level) the across-scale sum over δ of
// N(|F(c) ⊖ F(c+δ)|) for channel ch of centre i, where F(c+δ) is the
// feature map reduced δ levels.
func (s *Saliency) centreSurround(out []float32, sc *salScratch, wk *salWork, i, ch int) {
	cfg := &s.cfg
	c := cfg.Centres[i]
	hc, wc := sc.lh[c], sc.lw[c]
	n := hc * wc
	f := sc.feat[i].Channel(ch)
	last := c + cfg.Deltas[len(cfg.Deltas)-1]
	for k, src := c+1, f; k <= last; k++ {
		pyrReduce(wk.chain[k], src, sc.lh[k-1], sc.lw[k-1], wk.tmp)
		src = wk.chain[k]
	}
	acc := wk.acc[:n]
	clear(acc)
	for _, d := range cfg.Deltas {
		sur := wk.sur[:n]
		pyrExpand(sur, hc, wc, wk.chain[c+d], sc.lh[c+d], sc.lw[c+d], d, wk)
		sur = sur[:len(f)]
		top, low := float32(0), float32(math.Inf(1))
		for k, v := range f {
			d := v - sur[k]
			d = max(d, -d)
			sur[k] = d
			top, low = max(top, d), min(low, d)
		}
		g := normGain(sur, hc, wc, top, low, cfg.MinPeak, salFeatureFloor)
		if g == 0 {
			continue
		}
		for k, v := range sur {
			acc[k] += v * g
		}
	}
	// Across-scale addition: bring the sum to the map level.
	L := cfg.Level
	switch {
	case c == L:
		copy(out, acc)
	case c < L:
		src := acc
		for k := c + 1; k <= L; k++ {
			dstk := wk.chain[k] // the chain's buffers are free again
			if k == L {
				dstk = out
			}
			pyrReduce(dstk, src, sc.lh[k-1], sc.lw[k-1], wk.tmp)
			src = dstk
		}
	default:
		pyrExpand(out, sc.lh[L], sc.lw[L], acc, hc, wc, c-L, wk)
	}
}

func addTo(dst, src []float32) {
	src = src[:len(dst)]
	for k, v := range src {
		dst[k] += v
	}
}

// The stages Map spreads over workers.
const (
	stageFrontEnd       = iota // job i: the front end at centre level i
	stageCentreSurround        // job j: centre j/C, channel j%C (centreSurround)
)

// do runs job j of a stage as worker wi. Every job writes only its own
// buffers (its centre's maps, or its contribution), so the order in which
// jobs run does not change any value.
func (s *Saliency) do(sc *salScratch, stage, wi, j int) {
	if stage == stageFrontEnd {
		c := s.cfg.Centres[j]
		s.fes[j].Apply(&sc.feat[j], sc.pyr[c], sc.lh[c], sc.lw[c])
		return
	}
	s.centreSurround(sc.contrib[j], sc, sc.work[wi], j/s.nc, j%s.nc)
}

// spread runs jobs 0..n−1 of a stage over up to workers goroutines.
func (s *Saliency) spread(sc *salScratch, stage, n, workers int) {
	workers = min(workers, n)
	if workers <= 1 {
		for j := 0; j < n; j++ {
			s.do(sc, stage, 0, j)
		}
		return
	}
	var next atomic.Int64
	var wg sync.WaitGroup
	for wi := 0; wi < workers; wi++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				j := int(next.Add(1) - 1)
				if j >= n {
					return
				}
				s.do(sc, stage, wi, j)
			}
		}()
	}
	wg.Wait()
}

// pyrTaps is the 6-tap binomial [1 5 10 10 5 1]/32 of the pyramid, a
// sampled Gaussian of variance 5/4 (px of the finer level).
var pyrTaps = [6]float32{1. / 32, 5. / 32, 10. / 32, 10. / 32, 5. / 32, 1. / 32}

// pyrReduce writes the next pyramid level of the h×w map src to dst
// (halve(h)×halve(w)): the binomial pyrTaps centred between samples 2i and
// 2i+1, so coarse sample i sits at fine position 2i+0.5, with half-sample
// reflection at the edges. Every level then keeps the frame's mirror
// symmetry (exactly when the sides are divisible by 2^level). tmp holds
// h·halve(w) values.
func pyrReduce(dst, src []float32, h, w int, tmp []float32) {
	oh, ow := halve(h), halve(w)
	t := tmp[:h*ow]
	c0, c1, c2 := pyrTaps[0], pyrTaps[1], pyrTaps[2]
	// Outputs j in [j0, j1) read 2j−2 .. 2j+3 inside the row.
	j0, j1 := 1, max(1, (w-4)/2+1)
	if w < 6 {
		j0, j1 = ow, ow
	}
	for y := 0; y < h; y++ {
		row := src[y*w : y*w+w]
		out := t[y*ow : y*ow+ow]
		for j := j0; j < j1; j++ {
			r := row[2*j-2 : 2*j+4 : 2*j+4]
			out[j] = c0*(r[0]+r[5]) + c1*(r[1]+r[4]) + c2*(r[2]+r[3])
		}
		for j := range out {
			if j >= j0 && j < j1 {
				continue
			}
			var v float32
			for k, c := range pyrTaps {
				v += c * row[raster.Reflect(2*j-2+k, w)]
			}
			out[j] = v
		}
	}
	for i := 0; i < oh; i++ {
		out := dst[i*ow : i*ow+ow]
		var r [6][]float32
		for k := range r {
			r[k] = t[raster.Reflect(2*i-2+k, h)*ow:][:ow]
		}
		r0, r1, r2, r3, r4, r5 := r[0][:len(out)], r[1][:len(out)], r[2][:len(out)], r[3][:len(out)], r[4][:len(out)], r[5][:len(out)]
		for j := range out {
			out[j] = c0*(r0[j]+r5[j]) + c1*(r1[j]+r4[j]) + c2*(r2[j]+r3[j])
		}
	}
}

// pyrExpand writes to dst (h×w, level c) the bilinear interpolation of the
// map src (sh×sw, level c+d): level-c pixel i sits at level-(c+d)
// position (i+0.5)/2^d − 0.5, the grid of pyrReduce; beyond the outermost
// samples the value is held, which is what half-sample reflection gives
// for linear interpolation.
func pyrExpand(dst []float32, h, w int, src []float32, sh, sw, d int, wk *salWork) {
	f := float64(int(1) << d)
	weights := func(n, sn int) {
		for i := 0; i < n; i++ {
			p := (float64(i)+0.5)/f - 0.5
			i0 := int(math.Floor(p))
			a := p - float64(i0)
			if i0 < 0 {
				i0, a = 0, 0
			}
			if i0 >= sn-1 {
				i0, a = sn-1, 0
			}
			wk.idx[i], wk.wt[i] = int32(i0), float32(a)
		}
	}
	// Along rows into tmp (sh×w), then along columns into dst.
	t := wk.tmp[:sh*w]
	weights(w, sw)
	for y := 0; y < sh; y++ {
		row := src[y*sw : y*sw+sw]
		out := t[y*w : y*w+w]
		for x := range out {
			i0, a := wk.idx[x], wk.wt[x]
			v := row[i0]
			if a != 0 {
				v += a * (row[i0+1] - v)
			}
			out[x] = v
		}
	}
	weights(h, sh)
	for y := 0; y < h; y++ {
		i0, a := int(wk.idx[y]), wk.wt[y]
		out := dst[y*w : y*w+w]
		r0 := t[i0*w : i0*w+w]
		if a == 0 {
			copy(out, r0)
			continue
		}
		r1 := t[(i0+1)*w : (i0+1)*w+w]
		for x := range out {
			out[x] = r0[x] + a*(r1[x]-r0[x])
		}
	}
}

// salNorm applies the normalisation operator N(·) of Itti, Koch & Niebur
// (1998) in place to the h×w map m (values ≥ 0):
//
//  1. scale the map to the fixed range [0, M], M = 1 (m /= max m; zero
//     stays zero, so the ratio of any two values is kept);
//  2. find the global maximum M and the mean m̄ of the other local maxima,
//     those at least minPeak·M (m̄ = 0 when there are none);
//  3. multiply the map by (M − m̄)².
//
// A local maximum is a pixel greater than its 8-neighbours that come
// before it in row-major order and not less than those after, so an
// equal-valued pair or plateau counts once. A flat map, one whose values
// all lie within salFlat·M of M, is cleared: its maximum is everywhere, so
// every location is one of the "other" maxima (m̄ = M), while counting
// the maxima of its rounding ripples would give any factor at all. A map
// whose maximum is at most floor is cleared too (it holds only rounding).
func salNorm(m []float32, h, w int, minPeak, floor float64) {
	m = m[:h*w]
	top, low := m[0], m[0]
	for _, v := range m {
		top, low = max(top, v), min(low, v)
	}
	g := normGain(m, h, w, top, low, minPeak, floor)
	for k, v := range m {
		m[k] = v * g
	}
}

// normGain returns the factor (M − m̄)²/max by which N(·) multiplies the
// h×w map m, whose largest and smallest values are top and low; 0 for a
// map N clears (see salNorm).
func normGain(m []float32, h, w int, top, low float32, minPeak, floor float64) float32 {
	if !(float64(top) > floor) || top-low <= salFlat*top {
		return 0
	}
	thr := float32(minPeak) * top
	var sum float64
	n := 0
	seen := false
	for y := 0; y < h; y++ {
		inner := y > 0 && y < h-1
		for x := 0; x < w; x++ {
			i := y*w + x
			v := m[i]
			if v < thr {
				continue
			}
			if inner && x > 0 && x < w-1 {
				// The 8-neighbourhood inside the map: earlier ones must be
				// lower, later ones not higher (isLocalMax, unrolled).
				if m[i-1] >= v || m[i+1] > v {
					continue
				}
				a, b := m[i-w-1:i-w+2], m[i+w-1:i+w+2]
				if a[0] >= v || a[1] >= v || a[2] >= v || b[0] > v || b[1] > v || b[2] > v {
					continue
				}
			} else if !isLocalMax(m, h, w, y, x, v) {
				continue
			}
			if v == top && !seen {
				seen = true
				continue
			}
			sum += float64(v)
			n++
		}
	}
	var mbar float64
	if n > 0 {
		mbar = sum / float64(n) / float64(top)
	}
	return float32((1 - mbar) * (1 - mbar) / float64(top))
}

// isLocalMax reports whether v = m[y*w+x] is greater than its earlier and
// not less than its later 8-neighbours (row-major order).
func isLocalMax(m []float32, h, w, y, x int, v float32) bool {
	for dy := -1; dy <= 1; dy++ {
		yy := y + dy
		if yy < 0 || yy >= h {
			continue
		}
		for dx := -1; dx <= 1; dx++ {
			xx := x + dx
			if xx < 0 || xx >= w || (dx == 0 && dy == 0) {
				continue
			}
			u := m[yy*w+xx]
			if dy < 0 || (dy == 0 && dx < 0) {
				if u >= v {
					return false
				}
			} else if u > v {
				return false
			}
		}
	}
	return true
}
