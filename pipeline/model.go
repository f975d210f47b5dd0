package pipeline

import (
	"fmt"
	"image"
	"sync"
	"sync/atomic"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// Model is a fitted pipeline. It is immutable: every method may be called
// from any number of goroutines at once. Per-call scratch comes from a pool,
// so steady-state Extract/Predict calls on same-sized images allocate only
// their results.
type Model struct {
	cfg     Config // defaults filled, stage seeds resolved, learned bank inline
	classes []string
	plan    *shapes
	tmpl    *templateStage // nil without a template layer
	guard   *guard
	head    *learn.Head
	scratch sync.Pool // *work
}

// work is one goroutine's scratch.
type work struct {
	gray  []float32
	norm  []float32
	full  []float32 // features before the guard
	maps  v1layer.Maps
	stack []v1layer.Maps // template layers' response maps
	feat  []float32
	hsc   []float32
	probs []float32
	mir   []float32 // the mirrored input (Config.Mirror)
}

func newModel(cfg Config, classes []string, p *shapes, tmpl *templateStage, g *guard, head *learn.Head) (*Model, error) {
	if g.in != p.featureLen(tmpl) {
		return nil, fmt.Errorf("pipeline: the feature guard expects %d features; the stages before it give %d", g.in, p.featureLen(tmpl))
	}
	if head.In() != g.out() {
		return nil, fmt.Errorf("pipeline: head expects %d features; the stages before it give %d", head.In(), g.out())
	}
	if head.NumClasses() != len(classes) {
		return nil, fmt.Errorf("pipeline: head has %d classes; the model names %d", head.NumClasses(), len(classes))
	}
	m := &Model{cfg: cfg, classes: append([]string(nil), classes...), plan: p, tmpl: tmpl, guard: g, head: head}
	m.scratch.New = func() any { return new(work) }
	return m, nil
}

// Config returns the model's configuration with every default filled in and
// the seeds each stage was fitted with; Fit(m.Config(), same data) rebuilds
// the same model.
func (m *Model) Config() Config { return m.cfg }

// NumClasses returns the number of classes.
func (m *Model) NumClasses() int { return len(m.classes) }

// Classes returns a copy of the class names, indexed by class.
func (m *Model) Classes() []string { return append([]string(nil), m.classes...) }

// FeatureLen returns the length of the vectors Extract returns.
func (m *Model) FeatureLen() int { return m.guard.out() }

// InputSize returns the height and width every image is resized to.
func (m *Model) InputSize() (h, w int) { return m.cfg.Input.Height, m.cfg.Input.Width }

// Channels returns the metadata of the front end's output channels.
func (m *Model) Channels() []v1layer.Channel { return m.plan.front.Channels() }

// Head returns the fitted head (immutable, shared).
func (m *Model) Head() *learn.Head { return m.head }

// Extract returns the feature vector of img: img is converted to grey
// (BT.601 luma) and resized to the model's input size, then passed through
// every stage before the head. It panics if img has empty bounds.
func (m *Model) Extract(img image.Image) []float32 {
	w := m.scratch.Get().(*work)
	defer m.scratch.Put(w)
	w.gray = datasets.ToGray(w.gray, img, m.cfg.Input.Height, m.cfg.Input.Width)
	return m.extractGray(nil, w.gray, w)
}

// Predict returns the most probable class of img and the probabilities of
// all classes (see Extract for how img is prepared).
func (m *Model) Predict(img image.Image) (class int, probs []float32) {
	w := m.scratch.Get().(*work)
	defer m.scratch.Put(w)
	w.gray = datasets.ToGray(w.gray, img, m.cfg.Input.Height, m.cfg.Input.Width)
	probs = m.classify(make([]float32, len(m.classes)), w.gray, w)
	return argmax(probs), probs
}

// classify writes the class probabilities of the grey image g (at the input
// size) into dst and returns it. With Config.Mirror they are the mean of the
// head's probabilities for g and for its left–right mirror image.
func (m *Model) classify(dst, g []float32, w *work) []float32 {
	w.feat = m.extractGray(w.feat, g, w)
	dst = m.head.Predict(dst, w.feat, m.headScratch(w))
	if !m.cfg.Mirror {
		return dst
	}
	w.mir = mirrorRows(w.mir, g, m.cfg.Input.Height, m.cfg.Input.Width)
	w.feat = m.extractGray(w.feat, w.mir, w)
	if cap(w.probs) < len(dst) {
		w.probs = make([]float32, len(dst))
	}
	w.probs = m.head.Predict(w.probs[:len(dst)], w.feat, m.headScratch(w))
	for i, p := range w.probs {
		dst[i] = (dst[i] + p) / 2
	}
	return dst
}

// mirrorRows writes the left–right mirror image of the h×w image src into
// dst (grown as needed) and returns it.
func mirrorRows(dst, src []float32, h, w int) []float32 {
	if cap(dst) < h*w {
		dst = make([]float32, h*w)
	}
	dst = dst[:h*w]
	for y := 0; y < h; y++ {
		r, o := src[y*w:(y+1)*w], dst[y*w:(y+1)*w]
		for x, v := range r {
			o[w-1-x] = v
		}
	}
	return dst
}

// ExtractBatch returns the feature vectors of imgs, computed over workers
// goroutines (≤ 0 means 1). Row i belongs to imgs[i].
func (m *Model) ExtractBatch(imgs []image.Image, workers int) [][]float32 {
	out := make([][]float32, len(imgs))
	m.parallel(len(imgs), workers, func(i int, w *work) {
		w.gray = datasets.ToGray(w.gray, imgs[i], m.cfg.Input.Height, m.cfg.Input.Width)
		out[i] = m.extractGray(nil, w.gray, w)
	})
	return out
}

// PredictBatch returns the class probabilities of each image of imgs, each a
// row-major h×w grey image with values in [0,1] (as datasets.Set.Float
// gives). Images of another size than the model's input are resized. Work is
// spread over workers goroutines (≤ 0 means 1). It satisfies eval.Predictor.
func (m *Model) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	if h < 1 || w < 1 || h > v1layer.MaxSide || w > v1layer.MaxSide {
		return nil, fmt.Errorf("pipeline: PredictBatch: image size %d×%d; want sides in [1, %d]", h, w, v1layer.MaxSide)
	}
	for i, img := range imgs {
		if len(img) != h*w {
			return nil, fmt.Errorf("pipeline: PredictBatch: image %d has %d pixels; want h×w = %d×%d = %d", i, len(img), h, w, h*w)
		}
	}
	out := make([][]float32, len(imgs))
	m.parallel(len(imgs), workers, func(i int, wk *work) {
		out[i] = m.classify(make([]float32, len(m.classes)), m.prepare(wk, imgs[i], h, w), wk)
	})
	return out, nil
}

// ExtractFloats returns the feature vectors of grey images given as in
// PredictBatch.
func (m *Model) ExtractFloats(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	if h < 1 || w < 1 || h > v1layer.MaxSide || w > v1layer.MaxSide {
		return nil, fmt.Errorf("pipeline: ExtractFloats: image size %d×%d; want sides in [1, %d]", h, w, v1layer.MaxSide)
	}
	for i, img := range imgs {
		if len(img) != h*w {
			return nil, fmt.Errorf("pipeline: ExtractFloats: image %d has %d pixels; want %d×%d = %d", i, len(img), h, w, h*w)
		}
	}
	out := make([][]float32, len(imgs))
	m.parallel(len(imgs), workers, func(i int, wk *work) {
		out[i] = m.extractGray(nil, m.prepare(wk, imgs[i], h, w), wk)
	})
	return out, nil
}

// prepare returns img at the model's input size (img itself if it already is).
func (m *Model) prepare(wk *work, img []float32, h, w int) []float32 {
	ih, iw := m.cfg.Input.Height, m.cfg.Input.Width
	if h == ih && w == iw {
		return img
	}
	wk.gray = datasets.ToGray(wk.gray, grayImage16(img, h, w), ih, iw)
	return wk.gray
}

func (m *Model) headScratch(w *work) []float32 {
	if n := m.head.ScratchLen(1); len(w.hsc) < n {
		w.hsc = make([]float32, n)
	}
	return w.hsc
}

// extractGray runs the stages on one grey image at the input size and
// writes the guarded features into dst (reused when its capacity suffices).
func (m *Model) extractGray(dst, gray []float32, w *work) []float32 {
	w.full = m.plan.features(w.full, gray, m.tmpl, w)
	n := m.guard.out()
	if cap(dst) < n {
		dst = make([]float32, n)
	}
	dst = dst[:n]
	m.guard.apply(dst, w.full)
	return dst
}

// parallel calls fn(i, scratch) for i in [0, n) over workers goroutines,
// each with its own scratch. The result of each i does not depend on which
// goroutine ran it.
func (m *Model) parallel(n, workers int, fn func(i int, w *work)) {
	parallelFor(n, workers, func() *work { return m.scratch.Get().(*work) }, func(w *work) { m.scratch.Put(w) }, fn)
}

func parallelFor[S any](n, workers int, get func() S, put func(S), fn func(i int, s S)) {
	workers = max(1, min(workers, n))
	var next atomic.Int64
	var wg sync.WaitGroup
	for g := 0; g < workers; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s := get()
			defer put(s)
			for {
				i := int(next.Add(1) - 1)
				if i >= n {
					return
				}
				fn(i, s)
			}
		}()
	}
	wg.Wait()
}

func argmax(p []float32) int {
	best := 0
	for i, v := range p {
		if v > p[best] {
			best = i
		}
	}
	return best
}

// grayImage16 holds a row-major float image in [0,1] as 16-bit grey, so
// that ToGray can resize it without rounding to 8 bits.
func grayImage16(img []float32, h, w int) *image.Gray16 {
	g := image.NewGray16(image.Rect(0, 0, w, h))
	for i, v := range img {
		u := uint16(min(max(v, 0), 1)*65535 + 0.5)
		g.Pix[2*i], g.Pix[2*i+1] = byte(u>>8), byte(u)
	}
	return g
}
