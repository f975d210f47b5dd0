package v1layer

// Band path. At 256×256 one response map is 256 KB and the reference bank
// has 18 of them: written whole and then pooled, they stream through the
// last-level cache twice. When every output map is the fused pooling of
// one stage channel (poolfused.go) and every kernel has a separable plan,
// apply instead runs each size group's first passes over the whole image,
// then its second passes bandRows output rows at a time into small band
// buffers, and pools each band straight away, while it is still in the
// core's own caches. The sums and the pooling are the same operations in
// the same order as on whole maps, so the output is the same bit for bit
// (TestBandsMatchWholeMaps).

// bandRows is the number of response rows per band: even, so that a band
// holds whole pooling windows, and a multiple of 3, so that the three-row
// blocks of hrows and vrows fall on the same rows as on whole maps (the
// portable loops group taps by four from the first tap of a block, so a
// different grouping would change the rounding). With the 8 kernels of the
// largest size group the band buffers take 8 × 31 rows × 1 KB at 256 px
// width.
const bandRows = 30

// bandStage is one stage channel pooled in the band path, and the output
// channel it writes.
type bandStage struct{ stage, out int }

// planBands sets f.bands when the band path applies.
func (f *FrontEnd) planBands() {
	if !f.fused {
		return
	}
	p := f.eng.p
	groupOf := make([]int, len(f.kernels))
	for i := range groupOf {
		groupOf[i] = -1
	}
	for g, grp := range p.groups {
		for _, ki := range p.order[grp[0]:grp[1]] {
			groupOf[ki] = g
		}
	}
	bands := make([][]bandStage, len(p.groups))
	for o, grp := range f.groups {
		if len(grp) != 1 {
			return
		}
		sc := &f.stage[grp[0]]
		g := groupOf[sc.k]
		if g < 0 || sc.op == opEnergy && groupOf[sc.k2] != g {
			return // a direct kernel, or a pair across sizes
		}
		bands[g] = append(bands[g], bandStage{stage: grp[0], out: o})
	}
	f.bands = bands
}

// banded reports whether apply takes the band path for images of height h:
// only when there is more than one band.
func (f *FrontEnd) banded(h int) bool { return f.bands != nil && h > bandRows }

// applyBands is apply on the band path.
func (f *FrontEnd) applyBands(dst *Maps, img []float32, h, w int, s *scratch) {
	e, es, b := f.eng, s.es, f.cfg.Border
	padImage(es.pad, img, h, w, e.R, es.pw, b)
	on := dst.H * dst.W
	oh := poolOut(h, 2)
	for g, grp := range e.p.groups {
		e.firstPasses(g, h, w, b, es)
		for y0 := 0; y0 < h; y0 += bandRows {
			// Band buffer row j holds image row y0 − 1 + j; row 0 is the
			// last row of the previous band (a pooling window's top row).
			y1 := min(y0+bandRows, h)
			e.secondPasses(g, s.band, (1-y0)*w, y0, y1, h, w, b, es)
			i0, i1 := y0/2, y1/2
			if y1 == h {
				i1 = oh
			}
			for _, bs := range f.bands[g] {
				sc := &f.stage[bs.stage]
				var odd []float32
				if sc.op == opEnergy {
					odd = s.band[sc.k2]
				}
				pool3s2Rows(dst.Pix[bs.out*on:(bs.out+1)*on], s.band[sc.k], odd, h, w, i0, i1, y0-1, sc.op, s.tmp)
			}
			if y1 < h {
				for _, ki := range e.p.order[grp[0]:grp[1]] {
					copy(s.band[ki][:w], s.band[ki][(y1-y0)*w:][:w])
				}
			}
		}
	}
}
