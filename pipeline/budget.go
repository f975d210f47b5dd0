package pipeline

import (
	"errors"
	"fmt"
	"sort"
	"strings"

	"github.com/striate/striate/learn"
)

// The memory budget. Before anything large is allocated, a plan works out
// from its shapes alone the bytes of the buffers a prediction, a load or a
// fit will need (its work size) and refuses a configuration whose work size
// is above a limit. The bound counts the buffers that grow with the
// configuration: per-worker scratch (the input image, the front end's
// correlation responses and maps, each template layer's patch, response and
// feature matrices, the stacked layers' maps), the unlabeled images' maps a
// template fit holds, the template fit's patch sample and whitening
// matrices, and the training features and head weights, plus a fixed
// allowance for small buffers (smallWork). The runtime's own overhead and a
// loaded model's tensors (bounded by MaxFileBytes) are not counted.

// smallWork covers the small buffers of one prediction that the parts
// leave out (probabilities, the head's scratch, slice headers): under
// 64 KiB on the models TestPredictWorkBounds measures, with room.
const smallWork = 256 << 10

// DefaultMaxWorkBytes is the work-size limit used when Limits.MaxWorkBytes
// is 0: 4 GiB, a sixth of a 24 GB machine, which leaves room for the
// operating system, a second job and the garbage collector's headroom (Go's
// heap may grow to twice its live size with the default GOGC of 100).
const DefaultMaxWorkBytes int64 = 4 << 30

// ErrWorkSize is the kind of the error a plan over its work-size limit gives.
var ErrWorkSize = errors.New("work size above the limit")

// Limits bounds the memory a plan may ask for. It is a run-time option,
// never part of a saved configuration: the same model may load on a large
// machine with a raised limit and be refused on a small one.
type Limits struct {
	// MaxWorkBytes is the largest work size (see WorkSize) accepted; 0
	// means DefaultMaxWorkBytes; negative means no limit (on purpose only:
	// a configuration may then exhaust memory).
	MaxWorkBytes int64
}

func (l Limits) max() int64 {
	if l.MaxWorkBytes == 0 {
		return DefaultMaxWorkBytes
	}
	return l.MaxWorkBytes
}

// WorkPart is one buffer (or group of buffers) of a work size: what it is,
// the configuration fields its size follows from, and its bytes.
type WorkPart struct {
	What   string
	Fields string
	Bytes  int64
}

// WorkSize is a plan's bound on the bytes of buffers one phase needs.
type WorkSize struct {
	Phase string // "predict", "load" or "fit"
	Bytes int64
	Parts []WorkPart // every part, largest first
}

// WorkSizeError reports a plan whose work size is above the limit.
type WorkSizeError struct {
	Work  WorkSize
	Limit int64
}

func (e *WorkSizeError) Error() string {
	var b strings.Builder
	fmt.Fprintf(&b, "pipeline: this configuration needs about %s of buffers to %s, above the %s limit (Limits.MaxWorkBytes; 0 means %s)",
		fmtBytes(e.Work.Bytes), e.Work.Phase, fmtBytes(e.Limit), fmtBytes(DefaultMaxWorkBytes))
	b.WriteString("; largest parts: ")
	for i, p := range e.Work.Parts {
		if i == 3 {
			break
		}
		if i > 0 {
			b.WriteString("; ")
		}
		fmt.Fprintf(&b, "%s %s (%s)", p.What, fmtBytes(p.Bytes), p.Fields)
	}
	b.WriteString("; lower those fields, or raise the limit on purpose")
	return b.String()
}

func (e *WorkSizeError) Unwrap() error { return ErrWorkSize }

func fmtBytes(n int64) string {
	switch {
	case n >= 1<<30:
		return fmt.Sprintf("%.1f GiB", float64(n)/(1<<30))
	case n >= 1<<20:
		return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20))
	}
	return fmt.Sprintf("%d bytes", n)
}

// check returns a *WorkSizeError when w is above lim.
func (w WorkSize) check(lim Limits) error {
	if m := lim.max(); m > 0 && w.Bytes > m {
		return &WorkSizeError{Work: w, Limit: m}
	}
	return nil
}

func newWork(phase string, parts []WorkPart) WorkSize {
	w := WorkSize{Phase: phase}
	for _, p := range parts {
		if p.Bytes > 0 {
			w.Parts = append(w.Parts, p)
			w.Bytes += p.Bytes
		}
	}
	sort.SliceStable(w.Parts, func(i, j int) bool { return w.Parts[i].Bytes > w.Parts[j].Bytes })
	return w
}

// layerWork is the work of template layer i and the shape of its input.
type layerWork struct {
	c, h, w int
	encode  int64 // Encode/EncodeMaps scratch
	out     int64 // EncodeMaps' output maps (0 for the last layer)
	fit     int64 // the layer's own fit buffers
	outLen  int64 // Encode's vector length
	fields  string
}

// layers works out each template layer's work from the shapes alone.
func (p *Plan) layers() ([]layerWork, error) {
	c, h, w := p.c, p.oh, p.ow
	in := p.cfg.Input
	var out []layerWork
	for i, tc := range p.cfg.Templates {
		wk, err := tc.Work(c, h, w)
		if err != nil {
			return nil, learnErr(fmt.Sprintf("templates[%d]", i), err)
		}
		lw := layerWork{c: c, h: h, w: w, encode: wk.Encode, fit: wk.Fit, outLen: int64(wk.OutLen),
			fields: fmt.Sprintf("input %d×%d, templates[%d].k %d, .patch_size %d, on %d×%d×%d maps", in.Height, in.Width, i, tc.K, tc.PatchSize, c, h, w)}
		if i < len(p.cfg.Templates)-1 {
			lw.out = 4 * int64(wk.OutC) * int64(wk.OutH) * int64(wk.OutW)
		}
		out = append(out, lw)
		c, h, w = wk.OutC, wk.OutH, wk.OutW
	}
	return out, nil
}

// perWorker is the scratch of one Extract or Predict call.
func (p *Plan) perWorker(ls []layerWork, featLen int64) []WorkPart {
	in := p.cfg.Input
	px := int64(in.Height) * int64(in.Width)
	inF := fmt.Sprintf("input.height×width %d×%d", in.Height, in.Width)
	parts := []WorkPart{
		{"input images", inF, 3 * 4 * px},
		{"front-end scratch", inF + ", front", p.front.ScratchBytes(in.Height, in.Width)},
		{"front-end maps", fmt.Sprintf("%s, %d channels", inF, p.c), 4 * int64(p.c) * int64(p.oh) * int64(p.ow)},
		{"features", "templates, pool", 2 * 4 * featLen},
		{"small buffers", "head, classes", smallWork},
	}
	for i, l := range ls {
		parts = append(parts,
			WorkPart{fmt.Sprintf("templates[%d] encoding", i), l.fields, l.encode},
			WorkPart{fmt.Sprintf("templates[%d] response maps", i), l.fields, l.out})
	}
	return parts
}

// featLenBound is the feature length the stages give, from the shapes.
func (p *Plan) featLenBound(ls []layerWork) int64 {
	n := int64(p.c) * int64(p.ph) * int64(p.pw)
	if len(ls) == 0 {
		return n
	}
	if !p.cfg.Pool.keep() {
		n = 0
	}
	return n + ls[len(ls)-1].outLen
}

// PredictWork returns the work size of one Extract or Predict call on one
// worker (a loaded model's work: loading itself only adds the model's own
// tensors, which the file's size bounds).
func (p *Plan) PredictWork() (WorkSize, error) {
	ls, err := p.layers()
	if err != nil {
		return WorkSize{}, err
	}
	return newWork("predict", p.perWorker(ls, p.featLenBound(ls))), nil
}

// FitWork returns the work size of Fit on rows training rows (images, twice
// that with Config.Mirror) and unlabeled images for the template layers,
// with workers goroutines. The phases of a fit follow one another, so the
// bound is the largest of: the unsupervised phase (every unlabeled image's
// front-end maps, two consecutive layers' response maps, a layer's fit
// buffers), the feature phase (the rows×features matrix and every worker's
// scratch) and the head's (the matrix, the hold-out rows' copy and the
// weights with their gradients and Adam moments).
func (p *Plan) FitWork(rows, unlabeled, workers int) (WorkSize, error) {
	ls, err := p.layers()
	if err != nil {
		return WorkSize{}, err
	}
	workers = max(workers, 1)
	fl := p.featLenBound(ls)
	nu := int64(unlabeled)
	if len(ls) == 0 {
		nu = 0
	}
	var unsup WorkSize
	for i, l := range ls {
		maps := nu * 4 * int64(l.c) * int64(l.h) * int64(l.w)
		parts := []WorkPart{
			{fmt.Sprintf("maps of %d unlabeled images for templates[%d]", nu, i), fmt.Sprintf("unlabeled %d, %s", nu, l.fields), maps},
			{fmt.Sprintf("templates[%d] fit", i), fmt.Sprintf("templates[%d].patches, .k, .patch_size", i), l.fit},
			{fmt.Sprintf("templates[%d] encoding", i), l.fields, l.encode},
		}
		if i+1 < len(ls) {
			parts = append(parts, WorkPart{fmt.Sprintf("maps of %d unlabeled images after templates[%d]", nu, i), l.fields, nu * l.out})
		}
		if w := newWork("fit", parts); w.Bytes > unsup.Bytes {
			unsup = w
		}
	}
	X := WorkPart{fmt.Sprintf("features of %d training rows", rows), fmt.Sprintf("%d rows × %d features (templates, pool)", rows, fl), 4 * int64(rows) * fl}
	var feat []WorkPart
	for _, q := range p.perWorker(ls, fl) {
		q.Bytes *= int64(workers)
		q.What = fmt.Sprintf("%s × %d workers", q.What, workers)
		feat = append(feat, q)
	}
	featW := newWork("fit", append(feat, X))
	hidden := int64(p.cfg.Head.Hidden)
	if p.cfg.Head.Kind != learn.KindMLP {
		hidden = 0
	}
	var val int64
	if vf := p.cfg.Head.ValFrac; vf > 0 && vf < 1 {
		val = int64(vf * float64(X.Bytes))
	}
	headW := newWork("fit", []WorkPart{X,
		{"the head's hold-out rows", "head.val_frac, " + X.Fields, val},
		{"head weights, gradients and Adam moments", fmt.Sprintf("head.hidden %d × %d features", hidden, fl), 4 * 4 * max(hidden, 16) * fl},
	})
	w := unsup
	for _, o := range []WorkSize{featW, headW} {
		if o.Bytes > w.Bytes {
			w = o
		}
	}
	w.Phase = "fit"
	return w, nil
}

// checkWork checks the work sizes the plan can know at parse time: one
// prediction and, when Config.Unlabeled is a count, the template layers'
// unsupervised fit on that many images.
func (p *Plan) checkWork(lim Limits) error {
	pw, err := p.PredictWork()
	if err != nil {
		return err
	}
	if err := pw.check(lim); err != nil {
		return err
	}
	if p.cfg.Unlabeled > 0 {
		fw, err := p.FitWork(0, p.cfg.Unlabeled, 1)
		if err != nil {
			return err
		}
		return fw.check(lim)
	}
	return nil
}
