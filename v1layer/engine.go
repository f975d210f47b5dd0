package v1layer

// engine computes the correlation of one image with every kernel.
type engine struct {
	kernels []Kernel
	R       int
}

type engineScratch struct {
	h, w int
	pad  []float32
}

func newEngine(ks []Kernel, R int) *engine { return &engine{kernels: ks, R: R} }

func (e *engine) scratchFor(s *engineScratch, h, w int) *engineScratch {
	if s == nil {
		s = &engineScratch{}
	}
	n := (h + 2*e.R) * (w + 2*e.R)
	if cap(s.pad) < n {
		s.pad = make([]float32, n)
	}
	s.pad = s.pad[:n]
	s.h, s.w = h, w
	return s
}

// responses writes the h×w correlation of img with kernel i to resp[i].
func (e *engine) responses(resp [][]float32, img []float32, h, w int, b Border, s *engineScratch) {
	padImage(s.pad, img, h, w, e.R, b)
	pw := w + 2*e.R
	for i, k := range e.kernels {
		correlateDirect(resp[i], s.pad, pw, h, w, e.R, k.W, k.Size)
	}
}
