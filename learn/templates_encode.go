package learn

import (
	"fmt"
	"math"

	"github.com/striate/striate/v1layer"
)

// tmplScratch is the per-call working memory of Encode.
type tmplScratch struct {
	rs     v1layer.Maps // resampled maps
	p, pw  []float32    // positions×dim patches, and whitened (triangle)
	r      []float32    // positions×K responses
	f      []float32    // positions×F features
	pooled []float32    // one scale's pooled vector
	pm     []float64    // per-position patch mean
	pinv   []float64    // per-position 1/sqrt(var + ε) (1 when normalisation is off)
	box    []float64    // (H+1)×(W+1)×2 integral images of Σ_c x and Σ_c x²
}

func growF64(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	return s[:n]
}

// patchMoments fills s.pm and s.pinv for the oh×ow patch positions of m:
// the mean and 1/sqrt(variance + ε) over each C×p×p patch, from integral
// images (summed-area tables; Crow 1984) of Σ_c x and Σ_c x², accumulated in
// float64. With normalisation off it writes mean 0 and scale 1.
func (t *Templates) patchMoments(s *tmplScratch, m *v1layer.Maps, oh, ow int) {
	np := oh * ow
	if t.normEps < 0 {
		for i := 0; i < np; i++ {
			s.pm[i], s.pinv[i] = 0, 1
		}
		return
	}
	H, W, p, st := m.H, m.W, t.p, t.cfg.Stride
	W1 := W + 1
	s.box = growF64(s.box, 2*(H+1)*W1)
	b := s.box
	clear(b[:2*W1])
	hw := H * W
	for y := 0; y < H; y++ {
		var r1, r2 float64 // running row sums
		b[2*(y+1)*W1], b[2*(y+1)*W1+1] = 0, 0
		for x := 0; x < W; x++ {
			var c1, c2 float64
			for c, off := 0, y*W+x; c < m.C; c, off = c+1, off+hw {
				v := float64(m.Pix[off])
				c1 += v
				c2 += v * v
			}
			r1 += c1
			r2 += c2
			o := 2 * ((y+1)*W1 + x + 1)
			u := 2 * (y*W1 + x + 1)
			b[o] = b[u] + r1
			b[o+1] = b[u+1] + r2
		}
	}
	n := float64(m.C * p * p)
	eps := float64(t.normEps)
	for y := 0; y < oh; y++ {
		y0, y1 := y*st, y*st+p
		for x := 0; x < ow; x++ {
			x0, x1 := x*st, x*st+p
			a, bb, c, d := 2*(y0*W1+x0), 2*(y0*W1+x1), 2*(y1*W1+x0), 2*(y1*W1+x1)
			s1 := b[d] - b[bb] - b[c] + b[a]
			s2 := b[d+1] - b[bb+1] - b[c+1] + b[a+1]
			mean := s1 / n
			v := max(0, s2/n-mean*mean)
			s.pm[y*ow+x] = mean
			s.pinv[y*ow+x] = 1 / math.Sqrt(v+eps)
		}
	}
}

// extractCentred writes the C×p×p patch at (y0, x0) of m minus mean into
// dst, index (c·p + dy)·p + dx (extractPatch's layout).
func extractCentred(dst []float32, m *v1layer.Maps, y0, x0, p int, mean float32) {
	i := 0
	for c := 0; c < m.C; c++ {
		for dy := 0; dy < p; dy++ {
			off := (c*m.H+y0+dy)*m.W + x0
			for _, v := range m.Pix[off : off+p] {
				dst[i] = v - mean
				i++
			}
		}
	}
}

func grow(s []float32, n int) []float32 {
	if cap(s) < n {
		return make([]float32, n)
	}
	return s[:n]
}

// positions returns the encoded grid size for an h×w map: ((h − p)/stride + 1) × ((w − p)/stride + 1).
func (t *Templates) positions(h, w int) (int, int) {
	if h < t.p || w < t.p {
		return 0, 0
	}
	s := t.cfg.Stride
	return (h-t.p)/s + 1, (w-t.p)/s + 1
}

func scaledSize(h, w int, s float64) (int, int) {
	if s == 1 {
		return h, w
	}
	return max(1, int(math.Round(float64(h)*s))), max(1, int(math.Round(float64(w)*s)))
}

// OutLen returns the length of the feature vector Encode produces for
// c×h×w maps: Features()·Σ_g g² over the pooling grids. It returns an error
// when c is not Channels(), or when at some scale the maps give fewer
// encoded positions than the finest grid has cells per side.
func (t *Templates) OutLen(c, h, w int) (int, error) {
	if c != t.c {
		return 0, fmt.Errorf("learn: templates expect %d channels, the maps have %d", t.c, c)
	}
	gmax := 0
	n := 0
	for _, g := range t.cfg.Grids {
		gmax = max(gmax, g)
		n += g * g
	}
	for _, s := range t.cfg.Scales {
		sh, sw := scaledSize(h, w, s)
		oh, ow := t.positions(sh, sw)
		if oh < gmax || ow < gmax {
			return 0, fmt.Errorf("learn: templates: %d×%d maps at scale %g give %d×%d positions for patch %d, stride %d; the %d×%d pooling grid needs at least %d per side",
				h, w, s, oh, ow, t.p, t.cfg.Stride, gmax, gmax, gmax)
		}
	}
	return n * t.Features(), nil
}

// Encode writes the pooled features of maps m into dst (grown if shorter
// than OutLen) and returns dst[:OutLen]. For each scale the maps are
// resampled, every C×p×p patch (step Stride) is normalised, centred,
// whitened and compared with the templates through the encoder, the
// per-position features are pooled on each grid, and the result is the
// element-wise max over scales. Layout: grids in config order; within grid
// g, feature f, cell row gy, cell column gx at offset_g + (f·g + gy)·g + gx.
// Encode is safe for concurrent use. It panics if OutLen(m.C, m.H, m.W)
// returns an error (check shapes once with OutLen).
func (t *Templates) Encode(dst []float32, m *v1layer.Maps) []float32 {
	n, err := t.OutLen(m.C, m.H, m.W)
	if err != nil {
		panic(err.Error())
	}
	dst = grow(dst, n)
	s, _ := t.pool.Get().(*tmplScratch)
	if s == nil {
		s = &tmplScratch{}
	}
	defer t.pool.Put(s)
	for si, sc := range t.cfg.Scales {
		src := m
		if sc != 1 {
			sh, sw := scaledSize(m.H, m.W, sc)
			resample(&s.rs, m, sh, sw)
			src = &s.rs
		}
		oh, ow := t.features(s, src)
		if si == 0 {
			t.poolGrids(dst, s.f, oh, ow)
			continue
		}
		s.pooled = grow(s.pooled, n)
		t.poolGrids(s.pooled, s.f, oh, ow)
		for i, v := range s.pooled {
			dst[i] = max(dst[i], v)
		}
	}
	return dst
}

// EncodeMaps writes the per-position features of m at scale 1, before
// spatial pooling, as Features() maps of ((H−p)/Stride+1)×((W−p)/Stride+1),
// max-pooled MapPool×MapPool with stride MapPool, into dst (resized) and
// returns it. Its output is what a stacked template layer is fitted on and
// encodes. It panics if m.C != Channels() or m is smaller than PatchSize.
func (t *Templates) EncodeMaps(dst *v1layer.Maps, m *v1layer.Maps) *v1layer.Maps {
	if m.C != t.c || m.H < t.p || m.W < t.p {
		panic(fmt.Sprintf("learn: Templates.EncodeMaps: maps %d×%d×%d, want %d channels and at least %d×%d", m.C, m.H, m.W, t.c, t.p, t.p))
	}
	if dst == nil {
		dst = &v1layer.Maps{}
	}
	s, _ := t.pool.Get().(*tmplScratch)
	if s == nil {
		s = &tmplScratch{}
	}
	defer t.pool.Put(s)
	oh, ow := t.features(s, m)
	F, q := t.Features(), t.cfg.MapPool
	H, W := max(1, oh/q), max(1, ow/q)
	dst.Resize(F, H, W)
	for f := 0; f < F; f++ {
		for y := 0; y < H; y++ {
			for x := 0; x < W; x++ {
				v := float32(math.Inf(-1))
				for dy := 0; dy < q && y*q+dy < oh; dy++ {
					for dx := 0; dx < q && x*q+dx < ow; dx++ {
						v = max(v, s.f[((y*q+dy)*ow+x*q+dx)*F+f])
					}
				}
				dst.Pix[(f*H+y)*W+x] = v
			}
		}
	}
	return dst
}

// features fills s.f with the positions×Features() encoder outputs of m and
// returns the position grid size.
func (t *Templates) features(s *tmplScratch, m *v1layer.Maps) (oh, ow int) {
	oh, ow = t.positions(m.H, m.W)
	np, dim, k, st := oh*ow, t.dim, t.k, t.cfg.Stride
	// Per-position mean and 1/sqrt(var + ε) of every C×p×p patch from box
	// sums of the channel-summed maps (the same moments normalizePatch
	// takes patch by patch, in one pass over the maps).
	s.pm = growF64(s.pm, np)
	s.pinv = growF64(s.pinv, np)
	t.patchMoments(s, m, oh, ow)
	s.p = grow(s.p, np*dim)
	s.r = grow(s.r, np*k)
	F := t.Features()
	s.f = grow(s.f, np*F)
	if t.cfg.Encoder == EncodeSoft {
		// r = F·(x̂ − μ) with x̂ = (x − m)·inv is (F·(x − m))·inv − F·μ:
		// the patches are only centred, the scale and the offset are applied
		// to the K responses instead of the dim inputs.
		for y := 0; y < oh; y++ {
			for x := 0; x < ow; x++ {
				i := y*ow + x
				extractCentred(s.p[i*dim:(i+1)*dim], m, y*st, x*st, t.p, float32(s.pm[i]))
			}
		}
		gemmNT(s.r, s.p, t.filt, np, k, dim)
		a := t.alpha
		for i := 0; i < np; i++ {
			r, f := s.r[i*k:(i+1)*k], s.f[i*F:(i+1)*F]
			inv := float32(s.pinv[i])
			for j, v := range r {
				v = v*inv - t.fmu[j]
				f[j] = max(0, v-a)
				f[k+j] = max(0, -v-a)
			}
		}
		return oh, ow
	}
	for y := 0; y < oh; y++ {
		for x := 0; x < ow; x++ {
			i := y*ow + x
			row := s.p[i*dim : (i+1)*dim]
			extractPatch(row, m, y*st, x*st, t.p)
			mean, inv := s.pm[i], s.pinv[i]
			for j, v := range row {
				row[j] = float32((float64(v)-mean)*inv) - t.mean[j]
			}
		}
	}
	// Triangle: u = W(x̂ − μ)/||W(x̂ − μ)||, z_j = ||u − t_j|| = sqrt(2 − 2·u·t_j).
	s.pw = grow(s.pw, np*dim)
	gemmNT(s.pw, s.p, t.whiten, np, dim, dim) // W symmetric: x·Wᵀ = x·W
	unitRows(s.pw, dim)
	gemmNT(s.r, s.pw, t.cent, np, k, dim)
	for i := 0; i < np; i++ {
		r, f := s.r[i*k:(i+1)*k], s.f[i*F:(i+1)*F]
		var mz float64
		for j, c := range r {
			z := math.Sqrt(max(0, 2-2*float64(c)))
			f[j] = float32(z)
			mz += z
		}
		mz /= float64(k)
		for j, z := range f {
			f[j] = float32(max(0, mz-float64(z)))
		}
	}
	return oh, ow
}

// poolGrids pools the positions×F features f on every grid into dst.
func (t *Templates) poolGrids(dst, f []float32, oh, ow int) {
	F := t.Features()
	off := 0
	avg := t.cfg.Pool == PoolAvg
	for _, g := range t.cfg.Grids {
		for gy := 0; gy < g; gy++ {
			y0, y1 := gy*oh/g, (gy+1)*oh/g
			for gx := 0; gx < g; gx++ {
				x0, x1 := gx*ow/g, (gx+1)*ow/g
				for ff := 0; ff < F; ff++ {
					var v float32
					if avg {
						var s float64
						for y := y0; y < y1; y++ {
							for x := x0; x < x1; x++ {
								s += float64(f[(y*ow+x)*F+ff])
							}
						}
						v = float32(s / float64((y1-y0)*(x1-x0)))
					} else {
						v = float32(math.Inf(-1))
						for y := y0; y < y1; y++ {
							for x := x0; x < x1; x++ {
								v = max(v, f[(y*ow+x)*F+ff])
							}
						}
					}
					dst[off+(ff*g+gy)*g+gx] = v
				}
			}
		}
		off += F * g * g
	}
}

// resample resizes every channel of m to h×w by bilinear interpolation with
// pixel centres aligned (source coordinate (i + 0.5)·H/h − 0.5, clamped to
// the edge).
func resample(dst, m *v1layer.Maps, h, w int) {
	dst.Resize(m.C, h, w)
	sy, sx := float64(m.H)/float64(h), float64(m.W)/float64(w)
	coord := func(i int, s float64, n int) (int, int, float32) {
		c := (float64(i)+0.5)*s - 0.5
		c = math.Max(0, math.Min(c, float64(n-1)))
		i0 := int(c)
		i1 := min(i0+1, n-1)
		return i0, i1, float32(c - float64(i0))
	}
	for c := 0; c < m.C; c++ {
		src := m.Pix[c*m.H*m.W : (c+1)*m.H*m.W]
		out := dst.Pix[c*h*w : (c+1)*h*w]
		for y := 0; y < h; y++ {
			y0, y1, fy := coord(y, sy, m.H)
			for x := 0; x < w; x++ {
				x0, x1, fx := coord(x, sx, m.W)
				a := src[y0*m.W+x0]*(1-fx) + src[y0*m.W+x1]*fx
				b := src[y1*m.W+x0]*(1-fx) + src[y1*m.W+x1]*fx
				out[y*w+x] = a*(1-fy) + b*fy
			}
		}
	}
}
