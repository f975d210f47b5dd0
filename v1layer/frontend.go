package v1layer

import (
	"fmt"
	"sync"
	"sync/atomic"
)

// MaxSide bounds the image side Apply accepts (a hostile or mistaken size
// would otherwise ask for gigabytes of scratch): 8192 px.
const MaxSide = 8192

// FrontEnd is the immutable plan built by New: kernels, the output channel
// list and the per-worker scratch pool. It is safe for concurrent use.
type FrontEnd struct {
	cfg     Config
	kernels []Kernel // DoG kernels first, then the simple-cell bank
	nDoG    int
	maxR    int
	stage   []stageChan // full-resolution maps, before pooling
	groups  [][]int     // output channel o = max over stage[groups[o]] after pooling
	chans   []Channel   // metadata of each output channel
	norm    [][]int     // divisive-normalisation pools (stage indices)
	lcnG    []float32
	eng     *engine
	fused   bool          // post takes the fused pooling path (poolfused.go)
	bands   [][]bandStage // per size group, the stages pooled band by band (band.go); nil: no band path
	scratch sync.Pool
}

type chanOp uint8

const (
	opOn      chanOp = iota // max(0, r)
	opOff                   // max(0, −r)
	opSigned                // r
	opEnergy                // sqrt(r² + r2²)
	opEndStop               // end-stopped copy of stage channel src
)

type stageChan struct {
	op     chanOp
	k, k2  int // kernel indices
	src    int // opEndStop: stage index of the energy map
	lcn    bool
	length []float32 // length-summation weights, nil if off
	theta  float64
	shift  float64 // end-stop shift, px
	meta   Channel
}

// New validates cfg once and builds the front end.
func New(cfg Config) (*FrontEnd, error) {
	cfg = cfg.withDefaults()
	if err := cfg.validate(); err != nil {
		return nil, err
	}
	f := &FrontEnd{cfg: cfg}
	if !cfg.DoG.Disable {
		f.kernels = append(f.kernels, dogBank(cfg.DoG)...)
		f.nDoG = len(f.kernels)
	}
	var bank *Bank
	if cfg.Bank != nil {
		bank = cfg.Bank
	} else if !cfg.Gabor.Disable {
		var err error
		if bank, err = GaborBank(cfg.Gabor); err != nil {
			return nil, err
		}
	}
	if bank != nil {
		for _, k := range bank.Kernels {
			k.W = append([]float32(nil), k.W...)
			if k.Meta.Pair >= 0 {
				k.Meta.Pair += f.nDoG
			}
			f.kernels = append(f.kernels, k)
		}
	}
	for _, k := range f.kernels {
		f.maxR = max(f.maxR, k.Size/2)
	}
	f.buildStage()
	if cfg.DoG.LCN.Enabled {
		g := Gaussian1D(cfg.DoG.LCN.Sigma, lcnRadius(cfg.DoG.LCN.Sigma))
		f.lcnG = make([]float32, len(g))
		for i, v := range g {
			f.lcnG[i] = float32(v)
		}
	}
	f.eng = newEngine(f.kernels, f.maxR)
	f.fused = f.fusable()
	f.planBands()
	return f, nil
}

func (f *FrontEnd) buildStage() {
	cfg := f.cfg
	for i := 0; i < f.nDoG; i++ {
		m := f.kernels[i].Meta
		if cfg.DoG.Signed {
			m.Polarity = 0
			f.stage = append(f.stage, stageChan{op: opSigned, k: i, lcn: cfg.DoG.LCN.Enabled, meta: m})
			continue
		}
		on, off := m, m
		on.Polarity, off.Polarity = 1, -1
		f.stage = append(f.stage,
			stageChan{op: opOn, k: i, lcn: cfg.DoG.LCN.Enabled, meta: on},
			stageChan{op: opOff, k: i, lcn: cfg.DoG.LCN.Enabled, meta: off})
	}
	var energies []int
	for i := f.nDoG; i < len(f.kernels); i++ {
		k := f.kernels[i]
		m := k.Meta
		m.Pair = -1
		switch cfg.Complex.Mode {
		case "linear":
			f.stage = append(f.stage, stageChan{op: opSigned, k: i, meta: m})
		case "rectified":
			m.Kind = KindRectified
			if m.Polarity == 0 {
				m.Polarity = 1
			}
			f.stage = append(f.stage, stageChan{op: opOn, k: i, meta: m})
		default:
			p := k.Meta.Pair
			switch {
			case p < 0:
				on, off := m, m
				on.Kind, off.Kind = KindRectified, KindRectified
				on.Polarity, off.Polarity = 1, -1
				f.stage = append(f.stage, stageChan{op: opOn, k: i, meta: on}, stageChan{op: opOff, k: i, meta: off})
			case p > i:
				m.Kind = KindEnergy
				m.Phase = 0
				sc := stageChan{op: opEnergy, k: i, k2: p, theta: m.Orientation, meta: m}
				if cfg.Complex.Length.Enabled {
					sc.length = lengthWeights(cfg.Complex.Length.Sigma * wavelengthOf(k))
				}
				energies = append(energies, len(f.stage))
				f.stage = append(f.stage, sc)
			}
		}
	}
	if cfg.Complex.EndStop.Enabled {
		for _, e := range energies {
			src := f.stage[e]
			m := src.meta
			m.Kind = KindEndStop
			f.stage = append(f.stage, stageChan{op: opEndStop, src: e, theta: src.theta,
				shift: cfg.Complex.EndStop.Shift * wavelengthOf(f.kernels[src.k]), meta: m})
		}
	}
	if cfg.Complex.Norm.Enabled {
		byScale := map[int][]int{}
		var order []int
		for i, s := range f.stage {
			if s.meta.Kind == KindDoG || s.op == opEndStop {
				continue
			}
			if _, ok := byScale[s.meta.Scale]; !ok {
				order = append(order, s.meta.Scale)
			}
			byScale[s.meta.Scale] = append(byScale[s.meta.Scale], i)
		}
		for _, s := range order {
			f.norm = append(f.norm, byScale[s])
		}
	}
	// Output groups: one per stage channel, or merged over scale.
	type key struct {
		kind         Kind
		orient, phas float64
		pol          int
	}
	idx := map[key]int{}
	for i, s := range f.stage {
		if !cfg.Pool.Scales {
			f.groups = append(f.groups, []int{i})
			f.chans = append(f.chans, s.meta)
			continue
		}
		kk := key{s.meta.Kind, s.meta.Orientation, s.meta.Phase, s.meta.Polarity}
		if g, ok := idx[kk]; ok {
			f.groups[g] = append(f.groups[g], i)
			f.chans[g].Scale = -1
			continue
		}
		idx[kk] = len(f.groups)
		f.groups = append(f.groups, []int{i})
		f.chans = append(f.chans, s.meta)
	}
}

// wavelengthOf is λ from the metadata, or half the kernel size when the
// bank does not say (a learned atom without a Gabor fit).
func wavelengthOf(k Kernel) float64 {
	if k.Meta.Wavelength > 0 {
		return k.Meta.Wavelength
	}
	return float64(k.Size) / 2
}

// Config returns the configuration with every default filled in.
func (f *FrontEnd) Config() Config { return f.cfg }

// Kernels returns a copy of the kernels the front end correlates with: the
// DoG kernels first, then the simple-cell bank (Pair indices refer to this list).
func (f *FrontEnd) Kernels() []Kernel {
	out := make([]Kernel, len(f.kernels))
	for i, k := range f.kernels {
		k.W = append([]float32(nil), k.W...)
		out[i] = k
	}
	return out
}

// Channels returns the metadata of each output channel, in output order.
func (f *FrontEnd) Channels() []Channel { return append([]Channel(nil), f.chans...) }

// MinSide is the smallest image side accepted: the radius of the largest
// kernel plus one (see doc.go, "Borders and sizes").
func (f *FrontEnd) MinSide() int { return f.maxR + 1 }

// OutShape returns the output shape for an h×w input, or an error if the
// input is too small or too large.
func (f *FrontEnd) OutShape(h, w int) (c, oh, ow int, err error) {
	if err := f.checkSize(h, w); err != nil {
		return 0, 0, 0, err
	}
	s := f.cfg.Pool.Stride
	return len(f.chans), poolOut(h, s), poolOut(w, s), nil
}

func (f *FrontEnd) checkSize(h, w int) error {
	m := f.MinSide()
	if h < m || w < m {
		return fmt.Errorf("v1layer: input %d×%d is smaller than %d×%d, the minimum for the largest kernel (%d×%d); use larger images, or smaller DoG.Sigmas / Gabor.Wavelength / Gabor.Scales", h, w, m, m, 2*f.maxR+1, 2*f.maxR+1)
	}
	if h > MaxSide || w > MaxSide {
		return fmt.Errorf("v1layer: input %d×%d is larger than the %d px limit (MaxSide); resize it first", h, w, MaxSide)
	}
	return nil
}

// scratch is one worker's buffers, sized for one image shape.
type scratch struct {
	h, w   int
	resp   [][]float32 // per kernel, h×w
	maps   [][]float32 // per stage channel, h×w
	tmp    []float32
	pooled []float32
	band   [][]float32 // per kernel, bandRows+1 rows (band path only)
	es     *engineScratch
}

func (f *FrontEnd) getScratch(h, w int) *scratch {
	s, _ := f.scratch.Get().(*scratch)
	if s == nil {
		s = &scratch{}
	}
	if s.h != h || s.w != w {
		n := h * w
		grow := func(b []float32, n int) []float32 {
			if cap(b) < n {
				return make([]float32, n)
			}
			return b[:n]
		}
		if len(s.resp) != len(f.kernels) {
			s.resp = make([][]float32, len(f.kernels))
		}
		for i := range s.resp {
			s.resp[i] = grow(s.resp[i], respLen(h, w))
		}
		if len(s.maps) != len(f.stage) {
			s.maps = make([][]float32, len(f.stage))
		}
		for i := range s.maps {
			s.maps[i] = grow(s.maps[i], n)
		}
		s.tmp = grow(s.tmp, 3*n)
		s.pooled = grow(s.pooled, n)
		if f.banded(h) {
			if len(s.band) != len(f.kernels) {
				s.band = make([][]float32, len(f.kernels))
			}
			for i := range s.band {
				s.band[i] = grow(s.band[i], respLen(bandRows+1, w))
			}
		}
		s.es = f.eng.scratchFor(s.es, h, w)
		s.h, s.w = h, w
	}
	return s
}

// Apply runs the front end on the h×w row-major image img (values in
// [0,1]) and writes the C×OH×OW result (see OutShape) to dst, resizing it.
// It is safe for concurrent use and allocates nothing once a worker's
// scratch for this image size exists. It panics if the size is rejected by
// OutShape or len(img) < h·w (check OutShape first).
func (f *FrontEnd) Apply(dst *Maps, img []float32, h, w int) {
	c, oh, ow, err := f.OutShape(h, w)
	if err != nil {
		panic(err.Error())
	}
	if len(img) < h*w {
		panic(fmt.Sprintf("v1layer: Apply: image has %d pixels, want %d×%d = %d", len(img), h, w, h*w))
	}
	dst.Resize(c, oh, ow)
	s := f.getScratch(h, w)
	f.apply(dst, img, h, w, s)
	f.scratch.Put(s)
}

func (f *FrontEnd) apply(dst *Maps, img []float32, h, w int, s *scratch) {
	if f.banded(h) {
		f.applyBands(dst, img, h, w, s)
		return
	}
	cfg := &f.cfg
	f.eng.responses(s.resp, img, h, w, cfg.Border, s.es)
	f.post(dst, h, w, s)
}

// post runs everything after the correlations: rectification, energy,
// contrast and divisive normalisation, end-stopping, pooling.
func (f *FrontEnd) post(dst *Maps, h, w int, s *scratch) {
	if f.fused {
		f.postFused(dst, h, w, s)
		return
	}
	cfg := &f.cfg
	n := h * w
	for i := range f.stage {
		sc := &f.stage[i]
		m := s.maps[i]
		switch sc.op {
		case opEndStop:
			continue // after the others, below
		case opEnergy:
			e, o := s.resp[sc.k][:n], s.resp[sc.k2][:n]
			energyTo(m[:n], e, o)
			if sc.length != nil {
				copy(s.tmp[:n], m)
				lengthSum(m, s.tmp[:n], h, w, sc.theta, sc.length)
			}
			continue
		}
		r := s.resp[sc.k][:n]
		if sc.lcn {
			copy(m, r)
			lcnApply(m, h, w, f.lcnG, float32(cfg.DoG.LCN.Epsilon), cfg.Border, s.tmp)
			r = m
		}
		switch sc.op {
		case opOn:
			for j, v := range r {
				m[j] = max(v, 0)
			}
		case opOff:
			for j, v := range r {
				m[j] = max(-v, 0)
			}
		case opSigned:
			copy(m, r)
		}
	}
	if len(f.norm) > 0 {
		var buf [64][]float32
		for _, pool := range f.norm {
			maps := buf[:0]
			for _, i := range pool {
				maps = append(maps, s.maps[i])
			}
			divNorm(maps, n, cfg.Complex.Norm.Sigma, s.tmp)
		}
	}
	for i := range f.stage {
		if sc := &f.stage[i]; sc.op == opEndStop {
			endStop(s.maps[i], s.maps[sc.src], h, w, sc.theta, sc.shift, cfg.Complex.EndStop.Gain)
		}
	}
	oh, ow := dst.H, dst.W
	on := oh * ow
	for o, g := range f.groups {
		out := dst.Pix[o*on : (o+1)*on]
		maxPool(out, s.maps[g[0]], h, w, cfg.Pool.Size, cfg.Pool.Stride, s.tmp)
		for _, i := range g[1:] {
			maxPool(s.pooled[:on], s.maps[i], h, w, cfg.Pool.Size, cfg.Pool.Stride, s.tmp)
			maxInto(out, s.pooled[:on])
		}
	}
}

// ApplyBatch runs Apply on every image (each h×w) over workers goroutines
// (≤ 0 means 1), each with its own scratch. dst must have len(imgs)
// elements; each is resized. It panics like Apply.
func (f *FrontEnd) ApplyBatch(dst []Maps, imgs [][]float32, h, w, workers int) {
	if len(dst) != len(imgs) {
		panic(fmt.Sprintf("v1layer: ApplyBatch: %d destinations for %d images", len(dst), len(imgs)))
	}
	c, oh, ow, err := f.OutShape(h, w)
	if err != nil {
		panic(err.Error())
	}
	for i, img := range imgs {
		if len(img) < h*w {
			panic(fmt.Sprintf("v1layer: ApplyBatch: image %d has %d pixels, want %d×%d = %d", i, len(img), h, w, h*w))
		}
	}
	workers = max(1, min(workers, len(imgs)))
	var next atomic.Int64
	run := func() {
		s := f.getScratch(h, w)
		for {
			i := int(next.Add(1) - 1)
			if i >= len(imgs) {
				break
			}
			dst[i].Resize(c, oh, ow)
			f.apply(&dst[i], imgs[i], h, w, s)
		}
		f.scratch.Put(s)
	}
	if workers == 1 {
		run()
		return
	}
	var wg sync.WaitGroup
	for k := 0; k < workers; k++ {
		wg.Add(1)
		go func() { defer wg.Done(); run() }()
	}
	wg.Wait()
}

// ScratchBytes returns the bytes of the per-worker buffers Apply allocates
// for an h×w image (the correlation responses, the stage maps, the padded
// planes of the correlation engine), the output Maps not included. Callers
// use it to bound the memory a plan needs before allocating any of it.
func (f *FrontEnd) ScratchBytes(h, w int) int64 {
	n := int64(h) * int64(w)
	b := int64(len(f.kernels))*int64(respLen(h, w)) + int64(len(f.stage))*n + 4*n
	if f.banded(h) {
		b += int64(len(f.kernels)) * int64(respLen(bandRows+1, w))
	}
	nx := roundUp(w, 8)
	pw := roundUp(2*f.eng.R+nx+8, 8)
	b += int64(f.eng.slots+1) * int64(h+2*f.eng.R) * int64(pw)
	return 4 * b
}
