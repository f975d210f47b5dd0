package pipeline

import (
	"image"
	"math"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/v1layer"
)

// The stage path. Every image, whatever it comes from (an image.Image, a
// float grey image of any size, a data set record, perturbed or not), goes
// through the same three steps, in Fit, Extract*, Predict*, Accuracy and a
// loaded model alike:
//
//	input     grey at the plan's input size (resized if needed)
//	frontTo   input normalisation, then the front end → C×H×W maps
//	features  template layers (or grid pooling) → the feature vector
//
// Model.extract then applies the fitted feature guard.

// work is one goroutine's scratch.
type work struct {
	px    []float32 // pixels read from a data set
	pb    []float32 // a perturbed copy of px
	gray  []float32 // the image at the input size, when resized
	norm  []float32
	full  []float32 // features before the guard
	maps  v1layer.Maps
	stack []v1layer.Maps // template layers' response maps
	feat  []float32
	hsc   []float32
	probs []float32
	score []float32 // class probabilities (Accuracy)
	mir   []float32 // the mirrored input (Config.Mirror)
}

// input returns the row-major h×wd grey image px (values in [0,1]) at the
// plan's input size: px itself when it already is, else px resized
// (datasets.ToGray on a 16-bit copy, so no rounding to 8 bits) into w.gray.
func (p *Plan) input(w *work, px []float32, h, wd int) []float32 {
	ih, iw := p.cfg.Input.Height, p.cfg.Input.Width
	if h == ih && wd == iw {
		return px
	}
	w.gray = datasets.ToGray(w.gray, grayImage16(px, h, wd), ih, iw)
	return w.gray
}

// imageInput returns img as grey (BT.601 luma) at the plan's input size, in
// w.gray.
func (p *Plan) imageInput(w *work, img image.Image) []float32 {
	w.gray = datasets.ToGray(w.gray, img, p.cfg.Input.Height, p.cfg.Input.Width)
	return w.gray
}

// frontTo runs the input normalisation and the front end on in (at the
// input size) into dst.
func (p *Plan) frontTo(dst *v1layer.Maps, w *work, in []float32) {
	h, wd := p.cfg.Input.Height, p.cfg.Input.Width
	n := normalizeInput(w.norm, in, h, wd, p.cfg.Input)
	if len(n) > 0 && len(in) > 0 && &n[0] != &in[0] {
		w.norm = n[:cap(n)]
	}
	p.front.Apply(dst, n, h, wd)
}

// featureLen is the length of the feature vector the stages give.
func (p *Plan) featureLen(t *templateStage) int {
	if t != nil {
		return t.outLen()
	}
	return p.c * p.ph * p.pw
}

// features runs the front end on in (at the input size), then the template
// layers t (nil: the grid pooling), writing into dst (reused when its
// capacity suffices) and returning it.
func (p *Plan) features(dst, in []float32, t *templateStage, w *work) []float32 {
	p.frontTo(&w.maps, w, in)
	n := p.featureLen(t)
	if cap(dst) < n {
		dst = make([]float32, n)
	}
	dst = dst[:n]
	if t != nil {
		t.encode(dst, &w.maps, w)
		return dst
	}
	poolGrid(dst, &w.maps, p.cfg.Pool, p.ph, p.pw)
	return dst
}

// setInput returns image j of s at the plan's input size, first altered
// by perturb(i) when perturb is not nil (at the set's own size).
func (p *Plan) setInput(w *work, s *datasets.Set, i, j int, perturb Perturb) []float32 {
	w.px = s.Float(w.px, j)
	px := w.px
	if perturb != nil {
		pt, seed := perturb(i)
		if cap(w.pb) < len(px) {
			w.pb = make([]float32, len(px))
		}
		w.pb = w.pb[:len(px)]
		pt.Apply(w.pb, px, s.H, s.W, seed)
		px = w.pb
	}
	return p.input(w, px, s.H, s.W)
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

// poolGrid pools each channel of m onto a ph×pw grid of size×size windows
// (stride apart, clipped at the border) by mean or max, optionally taking
// the square root, into dst (C·ph·pw values, channel-major).
func poolGrid(dst []float32, m *v1layer.Maps, p PoolConfig, ph, pw int) {
	k, st := p.Size, p.Stride
	if k == 1 && st == 1 && !p.Sqrt {
		copy(dst, m.Pix)
		return
	}
	isMax := p.Op == "max"
	for c := 0; c < m.C; c++ {
		plane := m.Pix[c*m.H*m.W : (c+1)*m.H*m.W]
		out := dst[c*ph*pw : (c+1)*ph*pw]
		for i := 0; i < ph; i++ {
			y0, y1 := i*st, min(i*st+k, m.H)
			for j := 0; j < pw; j++ {
				x0, x1 := j*st, min(j*st+k, m.W)
				var acc float32
				if isMax {
					acc = float32(math.Inf(-1))
				}
				for y := y0; y < y1; y++ {
					row := plane[y*m.W+x0 : y*m.W+x1]
					for _, v := range row {
						if isMax {
							acc = max(acc, v)
						} else {
							acc += v
						}
					}
				}
				if !isMax {
					acc /= float32((y1 - y0) * (x1 - x0))
				}
				if p.Sqrt {
					acc = float32(math.Sqrt(float64(max(acc, 0))))
				}
				out[i*pw+j] = acc
			}
		}
	}
}
