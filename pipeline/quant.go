package pipeline

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"
	"sync"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// Integer inference. A quantised model (Model.Quantize) runs the input
// stage and the front end in float32 as before; from the complex-cell maps
// on, everything is integer arithmetic (Jacob et al. 2018, CVPR,
// "Quantization and training of neural networks for efficient
// integer-arithmetic-only inference"; see learn/int8.go):
//
//	maps (float32) → uint8 codes at a calibrated scale
//	template layer → learn.QuantTemplates: int8 filters, int32 products, uint8 features
//	pooled maps    → uint8 codes, one scale and zero point per feature
//	guard          → the kept features, clipped to the codes of their training range
//	head           → learn.QuantHead: int8 weights, int32 accumulators, integer logits
//
// The class probabilities are the softmax of the dequantised logits. Given
// the same maps, the integer logits are bit-identical on every
// architecture; the float front end before them agrees across
// architectures to float32 rounding, which moves a code only when a value
// lies within that rounding of a step boundary.
//
// Tensor names of the integer section (format version 3):
//
//	int8.templates.0.*         the template layer (learn.QuantTemplates.Tensors)
//	int8.pool.scale, .zero     scale (float32) and zero point (int32) per pooled feature
//	int8.head.*                the head (learn.QuantHead.Tensors)
//
// The guard's tensors are stored as in a float model.
const int8TensorPrefix = "int8."

// QuantizeOptions are the run-time options of Model.Quantize.
type QuantizeOptions struct {
	// Images is the number of calibration images, taken from the start of
	// the set; 0 means 1000, negative means all of them.
	Images int
	// Workers is the number of goroutines for the front end; ≤ 0 means 1.
	Workers int
}

// defaultCalibImages is QuantizeOptions.Images' default: a thousand images
// span the activation ranges of a recogniser of ten classes (common
// practice: post-training calibration sets of a few hundred to a few
// thousand images).
const defaultCalibImages = 1000

// int8Stage is the integer part of a quantised model.
type int8Stage struct {
	tmpl    *learn.QuantTemplates // nil without a template layer
	n       int                   // template features
	np      int                   // pooled front-end features after them
	pool    PoolConfig
	ph, pw  int
	pScale  []float32 // per pooled feature
	pZero   []int32
	scale   []float32 // per feature the head sees (after the guard)
	zero    []int32
	lo, hi  []uint8 // guard clip codes per kept feature; nil without clipping
	head    *learn.QuantHead
	scratch sync.Pool // *int8Work
}

type int8Work struct {
	full   []uint8 // codes before the guard
	x      []uint8 // codes the head sees
	pooled []float32
	probs  []float32
}

// Int8 reports whether m is a quantised model (Model.Quantize, or a file
// holding an integer section).
func (m *Model) Int8() bool { return m.q != nil }

// Quantize returns the int8 form of m: the template layer and the head in
// integer arithmetic, with weights quantised symmetrically per output
// channel and activation scales calibrated on the first opts.Images images
// of calib (training images; their labels are not read). The result
// predicts with the integer path, saves as a version-3 model file with an
// integer section in place of the float template and head tensors, and
// loads with Load and LoadFile. Extract on it gives the dequantised
// features; its Head is nil.
//
// Only models with at most one template layer, using the soft encoder,
// have an integer form; others give an error.
func (m *Model) Quantize(calib *datasets.Set, opts QuantizeOptions) (*Model, error) {
	if m.q != nil {
		return nil, fmt.Errorf("pipeline: Quantize: the model is already int8")
	}
	if len(m.plan.cfg.Templates) > 1 {
		return nil, fmt.Errorf("pipeline: Quantize: %d template layers; the integer path has at most one", len(m.plan.cfg.Templates))
	}
	if err := checkSet(calib, "calibration"); err != nil {
		return nil, err
	}
	n := opts.Images
	if n == 0 {
		n = defaultCalibImages
	}
	if n < 0 || n > calib.N {
		n = calib.N
	}
	p := m.plan
	q := &int8Stage{pool: p.cfg.Pool, ph: p.ph, pw: p.pw}
	q.np = p.c * p.ph * p.pw
	if m.tmpl != nil {
		q.n, q.np = m.tmpl.n, m.tmpl.keep
	}
	maps := make([]v1layer.Maps, n)
	pooled := make([]float32, n*q.np)
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	p.eachImage(calib, idx, nil, opts.Workers, nil, "", &m.scratch, func(i int, in []float32, w *work) {
		p.frontTo(&maps[i], w, in)
		if q.np > 0 {
			poolGrid(pooled[i*q.np:(i+1)*q.np], &maps[i], p.cfg.Pool, p.ph, p.pw)
		}
	})
	if m.tmpl != nil {
		t, err := m.tmpl.layers[0].Quantize(maps)
		if err != nil {
			return nil, fmt.Errorf("pipeline: Quantize: %w", err)
		}
		q.tmpl = t
	}
	q.pScale, q.pZero = make([]float32, q.np), make([]int32, q.np)
	for j := 0; j < q.np; j++ {
		lo, hi := float64(pooled[j]), float64(pooled[j])
		for i := 1; i < n; i++ {
			v := float64(pooled[i*q.np+j])
			lo, hi = min(lo, v), max(hi, v)
		}
		q.pScale[j], q.pZero[j] = learn.ActivationScale(lo, hi)
	}
	if err := q.finish(p, m.guard); err != nil {
		return nil, fmt.Errorf("pipeline: Quantize: %w", err)
	}
	d := m.guard.out()
	X := make([]uint8, n*d)
	parallelFor(n, opts.Workers, func() *int8Work { return new(int8Work) }, func(*int8Work) {}, func(i int, w *int8Work) {
		copy(X[i*d:(i+1)*d], q.codes(w, &maps[i], m.guard))
	})
	head, err := m.head.Quantize(q.scale, q.zero, X, n)
	if err != nil {
		return nil, fmt.Errorf("pipeline: Quantize: %w", err)
	}
	q.head = head
	return m.withInt8(q), nil
}

// withInt8 returns a model sharing m's plan, classes and guard that runs q.
func (m *Model) withInt8(q *int8Stage) *Model {
	out := &Model{plan: m.plan, classes: m.classes, guard: m.guard, q: q}
	out.scratch.New = func() any { return new(work) }
	return out
}

// finish derives the per-feature scales of the head's inputs and the
// guard's clip codes once the template layer and the pooled scales are set.
func (q *int8Stage) finish(p *Plan, g *guard) error {
	full := make([]float32, q.n+q.np)
	zero := make([]int32, q.n+q.np)
	if q.tmpl != nil {
		if _, err := q.tmpl.FeatureScales(full[:q.n], p.c, p.oh, p.ow); err != nil {
			return err
		}
	}
	copy(full[q.n:], q.pScale)
	copy(zero[q.n:], q.pZero)
	if g.in != len(full) {
		return fmt.Errorf("the guard expects %d features; the integer stages give %d", g.in, len(full))
	}
	k := g.out()
	q.scale, q.zero = make([]float32, k), make([]int32, k)
	for i, j := range g.keep {
		q.scale[i], q.zero[i] = full[j], zero[j]
	}
	if g.lo != nil {
		q.lo, q.hi = make([]uint8, k), make([]uint8, k)
		for i := range g.keep {
			q.lo[i] = learn.QuantizeValue(g.lo[i], q.scale[i], q.zero[i])
			q.hi[i] = learn.QuantizeValue(g.hi[i], q.scale[i], q.zero[i])
		}
	}
	return nil
}

// codes writes the guarded feature codes of the front-end maps mp into
// w.x and returns it.
func (q *int8Stage) codes(w *int8Work, mp *v1layer.Maps, g *guard) []uint8 {
	nf := q.n + q.np
	if cap(w.full) < nf {
		w.full = make([]uint8, nf)
	}
	w.full = w.full[:nf]
	if q.tmpl != nil {
		q.tmpl.Encode(w.full[:q.n:q.n], mp)
	}
	if q.np > 0 {
		if cap(w.pooled) < q.np {
			w.pooled = make([]float32, q.np)
		}
		w.pooled = w.pooled[:q.np]
		poolGrid(w.pooled, mp, q.pool, q.ph, q.pw)
		for j, v := range w.pooled {
			w.full[q.n+j] = learn.QuantizeValue(v, q.pScale[j], q.pZero[j])
		}
	}
	k := g.out()
	if cap(w.x) < k {
		w.x = make([]uint8, k)
	}
	w.x = w.x[:k]
	for i, j := range g.keep {
		v := w.full[j]
		if q.lo != nil {
			v = min(max(v, q.lo[i]), q.hi[i])
		}
		w.x[i] = v
	}
	return w.x
}

// int8Codes runs the front end on in (at the input size) and returns the
// codes the head sees, in iw.x.
func (m *Model) int8Codes(in []float32, w *work, iw *int8Work) []uint8 {
	m.plan.frontTo(&w.maps, w, in)
	return m.q.codes(iw, &w.maps, m.guard)
}

// classifyInt8 is classify for a quantised model.
func (m *Model) classifyInt8(dst, in []float32, w *work) []float32 {
	iw, _ := m.q.scratch.Get().(*int8Work)
	if iw == nil {
		iw = new(int8Work)
	}
	defer m.q.scratch.Put(iw)
	dst = m.q.head.Predict(dst, m.int8Codes(in, w, iw))
	if !m.plan.cfg.Mirror {
		return dst
	}
	w.mir = mirrorRows(w.mir, in, m.plan.cfg.Input.Height, m.plan.cfg.Input.Width)
	if cap(iw.probs) < len(dst) {
		iw.probs = make([]float32, len(dst))
	}
	pr := m.q.head.Predict(iw.probs[:len(dst)], m.int8Codes(w.mir, w, iw))
	for i, p := range pr {
		dst[i] = (dst[i] + p) / 2
	}
	return dst
}

// extractInt8 is extract for a quantised model: the dequantised codes
// S_i·(q_i − Z_i) the head sees.
func (m *Model) extractInt8(dst, in []float32, w *work) []float32 {
	iw, _ := m.q.scratch.Get().(*int8Work)
	if iw == nil {
		iw = new(int8Work)
	}
	defer m.q.scratch.Put(iw)
	x := m.int8Codes(in, w, iw)
	if cap(dst) < len(x) {
		dst = make([]float32, len(x))
	}
	dst = dst[:len(x)]
	for i, v := range x {
		dst[i] = m.q.scale[i] * float32(int32(v)-m.q.zero[i])
	}
	return dst
}

// int8Tensors returns the tensors of the integer section.
func (q *int8Stage) int8Tensors() []tensor {
	var ts []tensor
	add := func(prefix string, qs []learn.QuantTensor) {
		for _, t := range qs {
			nt := tensor{Name: int8TensorPrefix + prefix + t.Name, Shape: t.Shape, F: t.F, I: t.I32, B: t.I8}
			switch {
			case t.I8 != nil:
				nt.DType = Int8
			case t.I32 != nil:
				nt.DType = Int32
			default:
				nt.DType = Float32
			}
			ts = append(ts, nt)
		}
	}
	if q.tmpl != nil {
		add("templates.0.", q.tmpl.Tensors())
	}
	if q.np > 0 {
		add("pool.", []learn.QuantTensor{
			{Name: "scale", Shape: []int{q.np}, F: q.pScale},
			{Name: "zero", Shape: []int{q.np}, I32: q.pZero},
		})
	}
	add("head.", q.head.Tensors())
	return ts
}

// saveInt8 writes a quantised model: cfg (its bank's weights already moved
// to the tensors ts), the guard and the integer section, as format
// version 3.
func (m *Model) saveInt8(w io.Writer, cfg Config, ts []tensor) error {
	ts = append(ts, m.guard.tensors()...)
	ts = append(ts, m.q.int8Tensors()...)
	cj, err := json.Marshal(cfg)
	if err != nil {
		return fmt.Errorf("pipeline: encoding the config: %v", err)
	}
	scan, err := m.scanSection()
	if err != nil {
		return err
	}
	return encodeFile(w, &fileContents{Version: FormatVersionInt8, Config: cj, Classes: m.classes, Tensors: ts, Scan: scan})
}

// loadInt8 rebuilds a quantised model from a version-3 file whose config
// is planned as p; used marks the tensors already taken (the bank's).
func loadInt8(p *Plan, c *fileContents, used map[string]bool) (*Model, error) {
	if len(p.cfg.Templates) > 1 {
		return nil, malformed("header.config.templates", "%d template layers; an int8 model has at most one", len(p.cfg.Templates))
	}
	if p.bankPending {
		return nil, malformed("header.config.learn_bank", "set, but the config holds no learned bank (front.bank)")
	}
	var tmplTs, poolTs, headTs []learn.QuantTensor
	for _, name := range []string{"guard.keep", "guard.lo", "guard.hi"} {
		if c.tensor(name) != nil {
			used[name] = true
		}
	}
	for _, t := range c.Tensors {
		if used[t.Name] {
			continue
		}
		rest, ok := strings.CutPrefix(t.Name, int8TensorPrefix)
		if !ok {
			return nil, malformed("tensor "+t.Name, "a version-3 (int8) model holds no float template or head tensors; want %s*, %s* or guard.*", int8TensorPrefix, bankTensorPrefix)
		}
		qt := learn.QuantTensor{Shape: t.Shape, F: t.F, I32: t.I, I8: t.B}
		switch {
		case strings.HasPrefix(rest, "templates.0."):
			qt.Name = strings.TrimPrefix(rest, "templates.0.")
			tmplTs = append(tmplTs, qt)
		case strings.HasPrefix(rest, "pool."):
			qt.Name = strings.TrimPrefix(rest, "pool.")
			poolTs = append(poolTs, qt)
		case strings.HasPrefix(rest, "head."):
			qt.Name = strings.TrimPrefix(rest, "head.")
			headTs = append(headTs, qt)
		default:
			return nil, malformed("tensor "+t.Name, "unknown name; want %stemplates.0.*, %spool.* or %shead.*", int8TensorPrefix, int8TensorPrefix, int8TensorPrefix)
		}
	}
	q := &int8Stage{pool: p.cfg.Pool, ph: p.ph, pw: p.pw, np: p.c * p.ph * p.pw}
	if len(p.cfg.Templates) == 1 {
		t, err := learn.NewQuantTemplatesFromTensors(p.cfg.Templates[0], p.c, tmplTs)
		if err != nil {
			return nil, malformed(int8TensorPrefix+"templates.0", "%v", err)
		}
		n, err := t.OutLen(p.c, p.oh, p.ow)
		if err != nil {
			return nil, malformed(int8TensorPrefix+"templates.0", "%v", err)
		}
		q.tmpl, q.n = t, n
		if !p.cfg.Pool.keep() {
			q.np = 0
		}
	} else if len(tmplTs) != 0 {
		return nil, malformed(int8TensorPrefix+"templates", "the config has no template layer but the file holds %d int8 template tensors", len(tmplTs))
	}
	if q.np > 0 {
		by := map[string]learn.QuantTensor{}
		for _, t := range poolTs {
			by[t.Name] = t
		}
		sc, zp := by["scale"], by["zero"]
		if len(poolTs) != 2 || len(sc.F) != q.np || len(zp.I32) != q.np {
			return nil, malformed(int8TensorPrefix+"pool", "want float32 scale and int32 zero, %d each (the pooled features of the float configuration)", q.np)
		}
		for i, s := range sc.F {
			if !(s > 0) {
				return nil, malformed(int8TensorPrefix+"pool.scale", "element %d is %g; a scale must be a positive number", i, s)
			}
			if z := zp.I32[i]; z < 0 || z > 255 {
				return nil, malformed(int8TensorPrefix+"pool.zero", "zero point %d is %d; want [0, 255]", i, z)
			}
		}
		q.pScale, q.pZero = sc.F, zp.I32
	} else if len(poolTs) != 0 {
		return nil, malformed(int8TensorPrefix+"pool", "the config keeps no pooled features but the file holds their scales")
	}
	g, err := loadGuard(p.cfg.Guard, q.n+q.np, c.tensor("guard.keep"), c.tensor("guard.lo"), c.tensor("guard.hi"))
	if err != nil {
		return nil, malformed("guard", "%v", err)
	}
	if err := q.finish(p, g); err != nil {
		return nil, malformed("guard", "%v", err)
	}
	hc := p.cfg.Head
	head, err := learn.NewQuantHeadFromTensors(hc.Kind, g.out(), hc.Hidden, len(c.Classes), headTs)
	if err != nil {
		return nil, malformed(int8TensorPrefix+"head", "%v", err)
	}
	q.head = head
	m := &Model{plan: p, classes: append([]string(nil), c.Classes...), guard: g, q: q}
	m.scratch.New = func() any { return new(work) }
	return m, nil
}
