package v1layer

// engine computes the correlation of one image with every kernel, running
// the separable plan (see separable.go) over pre-padded planes.
//
// Layout: the input is copied into a padded plane of (h+2R) rows and pw
// columns (pw ≥ 2R + nx + 8, nx = w rounded up to 8), image pixel (y,x) at
// row R+y, column R+x. First passes write planes of the same layout; the
// inner loops compute nx ≥ w outputs per row (whole SIMD blocks), so every
// buffer has slack for the extra columns, whose values are never used.
type engine struct {
	kernels []Kernel
	R       int
	p       *plan
	slots   int // first-pass planes live at once (largest size group)
}

type engineScratch struct {
	h, w, nx, pw int
	pad          []float32
	planes       [][]float32
	srcs         [][]float32
	taps         []filt
}

func newEngine(ks []Kernel, R int) *engine {
	e := &engine{kernels: ks, R: R, p: makePlan(ks)}
	for _, fo := range e.p.firstOf {
		e.slots = max(e.slots, len(fo))
	}
	return e
}

func roundUp(n, m int) int { return (n + m - 1) / m * m }

// respLen is the length each response buffer needs for an h×w image: h·w
// plus the overrun of the last row.
func respLen(h, w int) int { return h*w + roundUp(w, 8) - w + 8 }

func (e *engine) scratchFor(s *engineScratch, h, w int) *engineScratch {
	if s == nil {
		s = &engineScratch{}
	}
	nx := roundUp(w, 8)
	pw := roundUp(2*e.R+nx+8, 8)
	n := (h + 2*e.R) * pw
	s.pad = make([]float32, n)
	if len(s.planes) != e.slots {
		s.planes = make([][]float32, e.slots)
	}
	for i := range s.planes {
		s.planes[i] = make([]float32, n) // zero: the border regions are never written
	}
	maxTerms := 0
	for _, k := range e.p.ks {
		maxTerms = max(maxTerms, len(k.terms), len(k.rows))
	}
	s.srcs = make([][]float32, maxTerms)
	s.taps = make([]filt, maxTerms)
	s.h, s.w, s.nx, s.pw = h, w, nx, pw
	return s
}

// responses writes the h×w correlation of img with kernel i to resp[i]
// (each of length ≥ respLen(h, w)).
func (e *engine) responses(resp [][]float32, img []float32, h, w int, b Border, s *engineScratch) {
	R, nx, pw := e.R, s.nx, s.pw
	padImage(s.pad, img, h, w, R, pw, b)
	p := e.p
	for g, grp := range p.groups {
		fo := p.firstOf[g]
		for slot, fi := range fo {
			q := &p.first[fi]
			pl := s.planes[slot]
			taps := s.taps[:1]
			taps[0] = q.taps
			srcs := s.srcs[:1]
			srcs[0] = s.pad
			if !q.vertical {
				y0, y1 := R, R+h
				if b == BorderReflect {
					y0, y1 = R-q.r, R+h+q.r
				}
				for py := y0; py < y1; py++ {
					hsum(pl[py*pw+R:], nx, srcs, taps, py*pw+R-q.r)
				}
			} else {
				c0, nc := R, nx
				if b == BorderReflect {
					c0, nc = R-q.r, roundUp(w+2*q.r, 8)
				}
				s0 := 2*q.r + 1
				for y := 0; y < h; y++ {
					py := R + y
					k0, k1 := trim(y, h, q.r, s0, b)
					taps[0] = q.taps.sub(k0, k1)
					vsum(pl[py*pw+c0:], nc, srcs, taps, (py-q.r+k0)*pw+c0, pw)
				}
			}
		}
		for _, ki := range p.order[grp[0]:grp[1]] {
			kp := &p.ks[ki]
			srcs, taps := s.srcs[:len(kp.terms)], s.taps[:len(kp.terms)]
			for t, tm := range kp.terms {
				srcs[t] = s.planes[slotIn(fo, tm.src)]
				taps[t] = tm.taps
			}
			out := resp[ki]
			r := kp.r
			// Rows in increasing order: each row's overrun past w lands
			// in the next row, which is written afterwards.
			if kp.vertical2 {
				s0 := 2*r + 1
				for y := 0; y < h; y++ {
					k0, k1 := trim(y, h, r, s0, b)
					for t, tm := range kp.terms {
						taps[t] = tm.taps.sub(k0, k1)
					}
					vsum(out[y*w:], nx, srcs, taps, (R+y-r+k0)*pw+R, pw)
				}
			} else {
				for y := 0; y < h; y++ {
					hsum(out[y*w:], nx, srcs, taps, (R+y)*pw+R-r)
				}
			}
		}
	}
	// Kernels without a separable plan: the 2-D correlation as a sum of
	// horizontal passes, one per kernel row v, over the padded rows
	// starting v rows further down (srcs[v] = pad[v·pw:]).
	for ki := range p.ks {
		kp := &p.ks[ki]
		if !kp.direct {
			continue
		}
		r := kp.r
		srcs := s.srcs[:len(kp.rows)]
		for v := range srcs {
			srcs[v] = s.pad[v*pw:]
		}
		out := resp[ki]
		for y := 0; y < h; y++ {
			hsum(out[y*w:], nx, srcs, kp.rows, (R+y-r)*pw+R-r)
		}
	}
}

func slotIn(fo []int, fi int) int {
	for i, x := range fo {
		if x == fi {
			return i
		}
	}
	panic("v1layer: internal error: first pass not in its group")
}

// hsumGo is the portable horizontal second pass:
//
//	dst[x] = Σ_t Σ_u taps[t][u]·srcs[t][off+x+u],  x ∈ [0,n)
func hsumGo(dst []float32, n int, srcs [][]float32, taps []filt, off int) {
	d := dst[:n]
	clear(d)
	for t, f := range taps {
		tp := f.w
		src := srcs[t][off : off+n+len(tp)-1]
		u := 0
		for ; u+4 <= len(tp); u += 4 {
			c0, c1, c2, c3 := tp[u], tp[u+1], tp[u+2], tp[u+3]
			s0, s1, s2, s3 := src[u:][:len(d)], src[u+1:][:len(d)], src[u+2:][:len(d)], src[u+3:][:len(d)]
			for x := range d {
				d[x] += c0*s0[x] + c1*s1[x] + c2*s2[x] + c3*s3[x]
			}
		}
		for ; u < len(tp); u++ {
			c, s0 := tp[u], src[u:][:len(d)]
			for x := range d {
				d[x] += c * s0[x]
			}
		}
	}
}

// vsumGo is the portable vertical pass:
//
//	dst[x] = Σ_t Σ_k taps[t][k]·srcs[t][off+k·stride+x],  x ∈ [0,n)
func vsumGo(dst []float32, n int, srcs [][]float32, taps []filt, off, stride int) {
	d := dst[:n]
	clear(d)
	for t, f := range taps {
		tp := f.w
		src := srcs[t]
		k := 0
		for ; k+4 <= len(tp); k += 4 {
			c0, c1, c2, c3 := tp[k], tp[k+1], tp[k+2], tp[k+3]
			o := off + k*stride
			s0, s1 := src[o:][:len(d)], src[o+stride:][:len(d)]
			s2, s3 := src[o+2*stride:][:len(d)], src[o+3*stride:][:len(d)]
			for x := range d {
				d[x] += c0*s0[x] + c1*s1[x] + c2*s2[x] + c3*s3[x]
			}
		}
		for ; k < len(tp); k++ {
			c, o := tp[k], off+k*stride
			s0 := src[o:][:len(d)]
			for x := range d {
				d[x] += c * s0[x]
			}
		}
	}
}

// trim returns the tap range [k0,k1) of a vertical pass of radius r
// (s0 = 2r+1 taps) for output row y of h: with a zero border the taps that
// read rows outside the image (all zeros) are skipped.
func trim(y, h, r, s0 int, b Border) (k0, k1 int) {
	if b == BorderReflect {
		return 0, s0
	}
	return max(0, r-y), min(s0, r-y+h)
}

// The inner loops in use; a SIMD build replaces them at init when the CPU
// supports it (see conv_simd_amd64.go).
var (
	hsum = hsumGo
	vsum = vsumGo
)

var build = "plain (portable Go loops)"

// Build names the inner loops this binary runs: "plain" for the portable
// Go loops, or the SIMD variant selected at start-up (build with
// GOEXPERIMENT=simd on amd64 to get it).
func Build() string { return build }
