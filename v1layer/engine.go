package v1layer

// engine computes the correlation of one image with every kernel, running
// the separable plan (see separable.go) over pre-padded planes.
//
// Layout: the input is copied into a padded plane of (h+2R) rows and pw
// columns (pw ≥ 2R + roundUp(w, 8) + 8), image pixel (y,x) at row R+y,
// column R+x. First passes write planes of the same layout; the inner
// loops compute nx ≥ w outputs per row (nx = w rounded up to lanes: whole
// SIMD blocks, or exactly w for the portable loops), so every buffer has
// slack for the extra columns, whose values are never used.
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
	taps, full   []filt
	taps2, full2 []filt
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
	nx := roundUp(w, lanes)
	pw := roundUp(2*e.R+roundUp(w, 8)+8, 8)
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
	s.full = make([]filt, maxTerms)
	s.taps2 = make([]filt, maxTerms)
	s.full2 = make([]filt, maxTerms)
	s.h, s.w, s.nx, s.pw = h, w, nx, pw
	return s
}

// responses writes the h×w correlation of img with kernel i to resp[i]
// (each of length ≥ respLen(h, w)).
func (e *engine) responses(resp [][]float32, img []float32, h, w int, b Border, s *engineScratch) {
	padImage(s.pad, img, h, w, e.R, s.pw, b)
	for g := range e.p.groups {
		e.firstPasses(g, h, w, b, s)
		e.secondPasses(g, resp, 0, 0, h, h, w, b, s)
	}
	e.directPasses(resp, h, w, s)
}

// pairsFor reports whether the paired loops (vsum2) run for rows of nx.
func pairsFor(nx int) bool { return vsum2 != nil && nx%16 == 0 && nx > 32 }

// firstPasses runs size group g's first passes over the padded image
// (s.pad, written by padImage) into s.planes.
func (e *engine) firstPasses(g, h, w int, b Border, s *engineScratch) {
	R, nx, pw := e.R, s.nx, s.pw
	p := e.p
	pairs := pairsFor(nx)
	fo := p.firstOf[g]
	for slot := 0; slot < len(fo); slot++ {
		q := &p.first[fo[slot]]
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
			// Two horizontal first passes in a row run as one (vsum2).
			if q2 := slot + 1; pairs && q2 < len(fo) && !p.first[fo[q2]].vertical && p.first[fo[q2]].r == q.r {
				taps2 := s.taps2[:1]
				taps2[0] = p.first[fo[q2]].taps
				hrows2(pl, s.planes[q2], R, pw, y0, y1, nx, srcs, taps, taps2, R-q.r, pw)
				slot++
				continue
			}
			hrows(pl, R, pw, y0, y1, nx, srcs, taps, R-q.r, pw)
		} else {
			c0, nc := R, nx
			if b == BorderReflect {
				c0, nc = R-q.r, roundUp(w+2*q.r, lanes)
			}
			full := s.full[:1]
			full[0] = q.taps
			vrows(pl, R*pw+c0, pw, 0, h, h, nc, srcs, full, taps, q.r, R*pw+c0, pw, b, R)
		}
	}
}

// secondPasses writes rows [y0,y1) of the responses of size group g's
// kernels, from the planes firstPasses wrote: row y of kernel i goes to
// resp[i][d0 + y·w:] (d0 = 0 for whole maps; a band buffer whose row 0 is
// image row y0 − 1 has d0 = (1 − y0)·w). Each row's overrun past w lands
// in the next row, which is written afterwards (see hrows and vrows), or
// in the buffer's slack after the last.
func (e *engine) secondPasses(g int, resp [][]float32, d0, y0, y1, h, w int, b Border, s *engineScratch) {
	R, nx, pw := e.R, s.nx, s.pw
	p := e.p
	pairs := pairsFor(nx)
	fo := p.firstOf[g]
	grp := p.groups[g]
	for _, ki := range p.order[grp[0]:grp[1]] {
		kp := &p.ks[ki]
		if kp.mated && pairs {
			continue // runs with its mate
		}
		srcs, taps, full := s.srcs[:len(kp.terms)], s.taps[:len(kp.terms)], s.full[:len(kp.terms)]
		for t, tm := range kp.terms {
			srcs[t] = s.planes[slotIn(fo, tm.src)]
			full[t] = tm.taps
		}
		if kp.mate >= 0 && pairs {
			mp := &p.ks[kp.mate]
			full2, taps2 := s.full2[:len(mp.terms)], s.taps2[:len(mp.terms)]
			for t, tm := range mp.terms {
				full2[t] = tm.taps
			}
			if kp.vertical2 {
				vrows2(resp[ki], resp[kp.mate], d0, w, y0, y1, h, nx, srcs, full, full2, taps, taps2, kp.r, R*pw+R, pw, b)
			} else {
				hrows2(resp[ki], resp[kp.mate], d0, w, y0, y1, nx, srcs, full, full2, R*pw+R-kp.r, pw)
			}
		} else if kp.vertical2 {
			vrows(resp[ki], d0, w, y0, y1, h, nx, srcs, full, taps, kp.r, R*pw+R, pw, b, R)
		} else {
			hrows(resp[ki], d0, w, y0, y1, nx, srcs, full, R*pw+R-kp.r, pw)
		}
	}
}

// directPasses writes the responses of the kernels without a separable
// plan: the 2-D correlation as a sum of horizontal passes, one per kernel
// row v, over the padded rows starting v rows further down
// (srcs[v] = pad[v·pw:]).
func (e *engine) directPasses(resp [][]float32, h, w int, s *engineScratch) {
	R, nx, pw := e.R, s.nx, s.pw
	for ki := range e.p.ks {
		kp := &e.p.ks[ki]
		if !kp.direct {
			continue
		}
		r := kp.r
		srcs := s.srcs[:len(kp.rows)]
		for v := range srcs {
			srcs[v] = s.pad[v*pw:]
		}
		hrows(resp[ki], 0, w, 0, h, nx, srcs, kp.rows, (R-r)*pw+R-r, pw)
	}
}

// bulkOf splits a row of n outputs into a bulk [0,nb) run one row at a
// time (48-wide SIMD blocks) and a tail [nb,n) of at most 32 run three
// rows at a time (sum3), so that no part of a row runs with fewer than six
// independent FMA chains; rows of at most 32 are all tail.
func bulkOf8(n int) int {
	if n <= 32 {
		return 0
	}
	nt := n % 48
	if nt > 32 {
		nt -= 16
	}
	return n - nt
}

// hrows runs a horizontal pass over rows [y0,y1): row y writes n values
// to dst[d0 + y·ds:] from sources at off0 + y·rstep. Rows go in increasing
// order (each row's overrun past its width is rewritten by the next) in
// threes: the three tails first (sum3; only a tail overruns), then the
// bulks.
func hrows(dst []float32, d0, ds, y0, y1, n int, srcs [][]float32, taps []filt, off0, rstep int) {
	y := y0
	if nb := bulkOf(n); nb < n {
		for ; y+3 <= y1; y += 3 {
			sum3(dst[d0+y*ds+nb:], ds, n-nb, srcs, taps, off0+y*rstep+nb, 1, rstep)
			for j := y; j < y+3 && nb > 0; j++ {
				hsum(dst[d0+j*ds:], nb, srcs, taps, off0+j*rstep)
			}
		}
	}
	for ; y < y1; y++ {
		hsum(dst[d0+y*ds:], n, srcs, taps, off0+y*rstep)
	}
}

// vrows runs a vertical pass of radius r (taps full, per term) for output
// rows [y0,y1) of h: row y writes n values to dst[d0 + y·ds:] from source rows
// starting (y − r + k0)·pw after src0, where [k0,k1) is trim's tap range.
// Rows go as in hrows; the three-row tails run over the union of the
// three rows' tap ranges: the extra taps read rows outside the image,
// which are zero in every buffer this reads with a zero border (R ≥ 2
// keeps them inside the buffer). taps is scratch for the trimmed filters.
//
// (Column strips sized to keep a strip's source rows in L1 were tried and
// measured ~30% slower at 256×256: whole rows stream from L3 in order and
// are then reused from L2 by the next 2r output rows.)
func vrows(dst []float32, d0, ds, y0, y1, h, n int, srcs [][]float32, full, taps []filt, r, src0, pw int, b Border, R int) {
	s0 := 2*r + 1
	taps = taps[:len(full)]
	one := func(y, nn int) {
		k0, k1 := trim(y, h, r, s0, b)
		for t, f := range full {
			taps[t] = f.sub(k0, k1)
		}
		vsum(dst[d0+y*ds:], nn, srcs, taps, src0+(y-r+k0)*pw, pw)
	}
	y := y0
	if nb := bulkOf(n); nb < n && R >= 2 {
		for ; y+3 <= y1; y += 3 {
			k0, _ := trim(y+2, h, r, s0, b)
			_, k1 := trim(y, h, r, s0, b)
			for t, f := range full {
				taps[t] = f.sub(k0, k1)
			}
			sum3(dst[d0+y*ds+nb:], ds, n-nb, srcs, taps, src0+(y-r+k0)*pw+nb, pw, pw)
			for j := y; j < y+3 && nb > 0; j++ {
				one(j, nb)
			}
		}
	}
	for ; y < y1; y++ {
		one(y, n)
	}
}

// hrows2 is hrows for two filter sets over the same sources (row y
// writes da[d0 + y·ds:] with taps ta and db[d0 + y·ds:] with tb), one row
// at a time.
func hrows2(da, db []float32, d0, ds, y0, y1, n int, srcs [][]float32, ta, tb []filt, off0, rstep int) {
	for y := y0; y < y1; y++ {
		vsum2(da[d0+y*ds:], db[d0+y*ds:], n, srcs, ta, tb, off0+y*rstep, 1)
	}
}

// vrows2 is vrows (zero or reflect border, no three-row tails) for a
// kernel pair over the same sources (plan.pairUp): full and full2 are the
// two kernels' taps per term, da and db their outputs.
func vrows2(da, db []float32, d0, ds, y0, y1, h, n int, srcs [][]float32, full, full2, taps, taps2 []filt, r, src0, pw int, b Border) {
	s0 := 2*r + 1
	for y := y0; y < y1; y++ {
		k0, k1 := trim(y, h, r, s0, b)
		for t := range full {
			taps[t] = full[t].sub(k0, k1)
			taps2[t] = full2[t].sub(k0, k1)
		}
		vsum2(da[d0+y*ds:], db[d0+y*ds:], n, srcs, taps, taps2, src0+(y-r+k0)*pw, pw)
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
	sum3 = sum3Go

	bulkOf = bulkOf8

	// lanes is the multiple of outputs per row the loops compute (nx = w
	// rounded up to it): 1 for the portable loops, which then compute no
	// column beyond the image (12% of the work at 28×28 with 8); a SIMD
	// build sets its vector width.
	lanes = 1

	// vsum2, when set, is two vsum calls over the same sources in one
	// pass (dst da with taps ta, db with tb), for n a multiple of 16.
	vsum2 func(da, db []float32, n int, srcs [][]float32, ta, tb []filt, off, stride int)
)

// sum3Go is three rows of a pass at once, row j writing dst[j·ds:] from
// sources at off + j·rstep, taps step apart (1: horizontal, the row stride:
// vertical); n ≤ 32 (narrow images, see sum3SIMD).
func sum3Go(dst []float32, ds, n int, srcs [][]float32, taps []filt, off, step, rstep int) {
	for j := 0; j < 3; j++ {
		if step == 1 {
			hsumGo(dst[j*ds:], n, srcs, taps, off+j*rstep)
		} else {
			vsumGo(dst[j*ds:], n, srcs, taps, off+j*rstep, step)
		}
	}
}

var build = "plain (portable Go loops)"

// Build names the inner loops this binary runs: "plain" for the portable
// Go loops, or the SIMD variant selected at start-up (build with
// GOEXPERIMENT=simd on amd64 to get it).
func Build() string { return build }
