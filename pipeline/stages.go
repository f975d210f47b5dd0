package pipeline

import (
	"math"

	"github.com/striate/striate/v1layer"
)

// featureLen is the length of the feature vector the stages give.
func (s *shapes) featureLen(t *templateStage) int {
	if t != nil {
		return t.outLen()
	}
	return s.pc * s.ph * s.pw
}

// features runs the input normalisation and the front end on gray (the input-size image) into maps,
// then the template layer or the pooling stage, writing into dst (reused
// when its capacity suffices) and returning it.
func (s *shapes) features(dst, gray []float32, t *templateStage, w *work) []float32 {
	maps := &w.maps
	h, wd := s.cfg.Input.Height, s.cfg.Input.Width
	in := normalizeInput(w.norm, gray, h, wd, s.cfg.Input)
	if len(in) > 0 && len(gray) > 0 && &in[0] != &gray[0] {
		w.norm = in[:cap(in)]
	}
	s.front.Apply(maps, in, h, wd)
	n := s.featureLen(t)
	if cap(dst) < n {
		dst = make([]float32, n)
	}
	dst = dst[:n]
	if t != nil {
		t.encode(dst, maps, w)
		return dst
	}
	poolGrid(dst, maps, s.cfg.Pool, s.ph, s.pw)
	return dst
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
