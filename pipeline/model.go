package pipeline

import (
	"fmt"
	"image"
	"sync"
	"sync/atomic"

	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// Model is a fitted pipeline. It is immutable: every method may be called
// from any number of goroutines at once. Per-call scratch comes from a pool,
// so steady-state Extract/Predict calls on same-sized images allocate only
// their results.
type Model struct {
	plan    *Plan // its Config: defaults filled, stage seeds resolved, learned bank inline
	classes []string
	tmpl    *templateStage // nil without a template layer
	guard   *guard
	head    *learn.Head
	q       *int8Stage  // the integer path of a quantised model (quant.go); nil for float
	scan    *StoredScan // the scan section (modelscan.go); nil without one
	scratch sync.Pool   // *work
}

func newModel(p *Plan, classes []string, tmpl *templateStage, g *guard, head *learn.Head) (*Model, error) {
	if g.in != p.featureLen(tmpl) {
		return nil, fmt.Errorf("pipeline: the feature guard expects %d features; the stages before it give %d", g.in, p.featureLen(tmpl))
	}
	if head.In() != g.out() {
		return nil, fmt.Errorf("pipeline: head expects %d features; the stages before it give %d", head.In(), g.out())
	}
	if head.NumClasses() != len(classes) {
		return nil, fmt.Errorf("pipeline: head has %d classes; the model names %d", head.NumClasses(), len(classes))
	}
	m := &Model{plan: p, classes: append([]string(nil), classes...), tmpl: tmpl, guard: g, head: head}
	m.scratch.New = func() any { return new(work) }
	return m, nil
}

// Config returns the model's configuration with every default filled in and
// the seeds each stage was fitted with; Fit(m.Config(), same data) rebuilds
// the same model.
func (m *Model) Config() Config { return m.plan.Config() }

// NumClasses returns the number of classes.
func (m *Model) NumClasses() int { return len(m.classes) }

// Classes returns a copy of the class names, indexed by class.
func (m *Model) Classes() []string { return append([]string(nil), m.classes...) }

// FeatureLen returns the length of the vectors Extract returns.
func (m *Model) FeatureLen() int { return m.guard.out() }

// InputSize returns the height and width every image is resized to.
func (m *Model) InputSize() (h, w int) { return m.plan.cfg.Input.Height, m.plan.cfg.Input.Width }

// Channels returns the metadata of the front end's output channels.
func (m *Model) Channels() []v1layer.Channel { return m.plan.front.Channels() }

// Plan returns the plan the model runs (its Config is the model's).
func (m *Model) Plan() *Plan { return m.plan }

// Head returns the fitted head (immutable, shared); nil for an int8 model.
func (m *Model) Head() *learn.Head { return m.head }

// Extract returns the feature vector of img: img is converted to grey
// (BT.601 luma) and resized to the model's input size, then passed through
// every stage before the head. It panics if img has empty bounds.
func (m *Model) Extract(img image.Image) []float32 {
	w := m.scratch.Get().(*work)
	defer m.scratch.Put(w)
	return m.extract(nil, m.plan.imageInput(w, img), w)
}

// Predict returns the most probable class of img and the probabilities of
// all classes (see Extract for how img is prepared).
func (m *Model) Predict(img image.Image) (class int, probs []float32) {
	w := m.scratch.Get().(*work)
	defer m.scratch.Put(w)
	probs = m.classify(make([]float32, len(m.classes)), m.plan.imageInput(w, img), w)
	return argmax(probs), probs
}

// classify writes the class probabilities of the grey image in (at the
// input size) into dst and returns it. With Config.Mirror they are the mean
// of the head's probabilities for in and for its left–right mirror image.
func (m *Model) classify(dst, in []float32, w *work) []float32 {
	if m.q != nil {
		return m.classifyInt8(dst, in, w)
	}
	w.feat = m.extract(w.feat, in, w)
	dst = m.head.Predict(dst, w.feat, m.headScratch(w))
	if !m.plan.cfg.Mirror {
		return dst
	}
	w.mir = mirrorRows(w.mir, in, m.plan.cfg.Input.Height, m.plan.cfg.Input.Width)
	w.feat = m.extract(w.feat, w.mir, w)
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

// ExtractBatch returns the feature vectors of imgs, each a row-major h×w
// grey image with values in [0,1] (as datasets.Set.Float gives), computed
// over workers goroutines (≤ 0 means 1); row i belongs to imgs[i]. Images
// of another size than the model's input are resized. Each row is the same
// whatever the batch and workers are.
func (m *Model) ExtractBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	if err := checkBatch("ExtractBatch", imgs, h, w); err != nil {
		return nil, err
	}
	out := make([][]float32, len(imgs))
	m.parallel(len(imgs), workers, func(i int, wk *work) {
		out[i] = m.extract(nil, m.plan.input(wk, imgs[i], h, w), wk)
	})
	return out, nil
}

// PredictBatch returns the class probabilities of each image of imgs, given
// as in ExtractBatch. Work is spread over workers goroutines (≤ 0 means 1).
// It satisfies eval.Predictor.
func (m *Model) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	if err := checkBatch("PredictBatch", imgs, h, w); err != nil {
		return nil, err
	}
	out := make([][]float32, len(imgs))
	m.parallel(len(imgs), workers, func(i int, wk *work) {
		out[i] = m.classify(make([]float32, len(m.classes)), m.plan.input(wk, imgs[i], h, w), wk)
	})
	return out, nil
}

// ExtractFloats is ExtractBatch.
//
// Deprecated: use ExtractBatch, which takes the same arguments.
func (m *Model) ExtractFloats(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	return m.ExtractBatch(imgs, h, w, workers)
}

// ExtractImages returns the feature vectors of imgs (any image.Image, as
// Extract takes), computed over workers goroutines (≤ 0 means 1). Row i
// belongs to imgs[i]. It panics if an image has empty bounds.
func (m *Model) ExtractImages(imgs []image.Image, workers int) [][]float32 {
	out := make([][]float32, len(imgs))
	m.parallel(len(imgs), workers, func(i int, w *work) {
		out[i] = m.extract(nil, m.plan.imageInput(w, imgs[i]), w)
	})
	return out
}

// PredictImages returns the class probabilities of each image of imgs, as
// Predict gives them, computed over workers goroutines (≤ 0 means 1).
func (m *Model) PredictImages(imgs []image.Image, workers int) [][]float32 {
	out := make([][]float32, len(imgs))
	m.parallel(len(imgs), workers, func(i int, w *work) {
		out[i] = m.classify(make([]float32, len(m.classes)), m.plan.imageInput(w, imgs[i]), w)
	})
	return out
}

// checkBatch checks a batch of float images for ExtractBatch and
// PredictBatch (named by fn).
func checkBatch(fn string, imgs [][]float32, h, w int) error {
	if h < 1 || w < 1 || h > v1layer.MaxSide || w > v1layer.MaxSide {
		return fmt.Errorf("pipeline: %s: image size %d×%d; want sides in [1, %d]", fn, h, w, v1layer.MaxSide)
	}
	for i, img := range imgs {
		if len(img) != h*w {
			return fmt.Errorf("pipeline: %s: image %d has %d pixels; want h×w = %d×%d = %d", fn, i, len(img), h, w, h*w)
		}
	}
	return nil
}

func (m *Model) headScratch(w *work) []float32 {
	if n := m.head.ScratchLen(1); len(w.hsc) < n {
		w.hsc = make([]float32, n)
	}
	return w.hsc
}

// extract runs the stages on one grey image at the input size and writes
// the guarded features into dst (reused when its capacity suffices).
func (m *Model) extract(dst, in []float32, w *work) []float32 {
	if m.q != nil {
		return m.extractInt8(dst, in, w)
	}
	w.full = m.plan.features(w.full, in, m.tmpl, w)
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
