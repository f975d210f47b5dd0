package pipeline

import (
	"cmp"
	"slices"
)

// areaScratch is the working memory of areaOpen: the pixel order and the
// union-find forest, each one entry per pixel.
type areaScratch struct {
	order, parent, area []int32
}

func (s *areaScratch) grow(n int) {
	if cap(s.order) < n {
		s.order, s.parent, s.area = make([]int32, n), make([]int32, n), make([]int32, n)
	}
	s.order, s.parent, s.area = s.order[:n], s.parent[:n], s.area[:n]
}

// areaOpen writes the grey-level area opening of src (h×w) with area
// threshold lambda into dst (which may not alias src): every connected
// component of every upper level set {v ≥ t} that holds fewer than lambda
// pixels is lowered to the highest level at which it joins a component of
// at least lambda pixels (Vincent 1993, "Morphological area openings and
// closings for grey-scale images", NATO ASI Shape in Picture; the
// supremum of the openings by all connected structuring elements of lambda
// pixels). Connectivity is 8 (diagonal neighbours join) when conn8 is set,
// otherwise 4. The filter is connected: it removes bright detail smaller
// than lambda pixels — an impulse, a speck, a short dash — whatever its
// contrast, and leaves the contours of everything larger exactly where they
// were (Salembier & Serra 1995, IEEE Trans. Image Processing 4:1153).
//
// It uses the union-find form of Meijster & Wilkinson (2002, IEEE PAMI
// 24:484): pixels are visited from bright to dark (ties by index) and merged
// with their visited neighbours; a component stops absorbing others once it
// has lambda pixels. lambda ≤ 1 copies src.
func areaOpen(dst, src []float32, h, w, lambda int, conn8 bool, s *areaScratch) {
	n := h * w
	if lambda <= 1 {
		copy(dst[:n], src[:n])
		return
	}
	s.grow(n)
	order, parent, area := s.order, s.parent, s.area
	for i := range order {
		order[i] = int32(i)
		parent[i] = -1
	}
	slices.SortFunc(order, func(a, b int32) int {
		if c := cmp.Compare(src[b], src[a]); c != 0 {
			return c
		}
		return cmp.Compare(a, b)
	})
	find := func(p int32) int32 {
		r := p
		for parent[r] != r {
			r = parent[r]
		}
		for parent[p] != r {
			parent[p], p = r, parent[p]
		}
		return r
	}
	lam := int32(lambda)
	for _, p := range order {
		parent[p], area[p] = p, 1
		y, x := int(p)/w, int(p)%w
		for dy := -1; dy <= 1; dy++ {
			for dx := -1; dx <= 1; dx++ {
				if (dy == 0 && dx == 0) || (!conn8 && dy != 0 && dx != 0) {
					continue
				}
				yy, xx := y+dy, x+dx
				if yy < 0 || yy >= h || xx < 0 || xx >= w {
					continue
				}
				q := int32(yy*w + xx)
				if parent[q] < 0 {
					continue
				}
				r := find(q)
				if r == p {
					continue
				}
				if src[r] == src[p] || area[r] < lam {
					area[p] += area[r]
					parent[r] = p
				} else {
					area[p] = max(area[p], lam)
				}
			}
		}
	}
	// Parents are visited after their children, so resolving in reverse
	// order settles every parent first. A node that kept fewer than lambda
	// pixels takes its parent's level; a node of lambda or more (or the
	// last root) keeps its own.
	for i := n - 1; i >= 0; i-- {
		p := order[i]
		if q := parent[p]; q == p || area[p] >= lam {
			dst[p] = src[p]
		} else {
			dst[p] = dst[q]
		}
	}
}

// areaClose is the dual of areaOpen, 1 − areaOpen(1 − src) for pixels in
// [0,1]: dark detail (holes, pepper, gaps) of fewer than lambda pixels is
// filled to the level of its surround. tmp holds h·w values.
func areaClose(dst, src, tmp []float32, h, w, lambda int, conn8 bool, s *areaScratch) {
	n := h * w
	for i, v := range src[:n] {
		tmp[i] = 1 - v
	}
	areaOpen(dst, tmp, h, w, lambda, conn8, s)
	for i, v := range dst[:n] {
		dst[i] = 1 - v
	}
}

// greyOpen3 writes the grey-level opening of src (h×w) by a flat 3×3
// square into dst: the erosion (3×3 minimum) followed by the dilation (3×3
// maximum), windows clipped at the border (the border ignored, as in
// scipy.ndimage.grey_opening with mode "nearest", which repeats edge pixels;
// for a minimum or maximum the two agree). It removes bright structures
// narrower than 3 px — a one- or two-pixel line, a dotted line, a speck —
// and keeps every bright region that contains a 3×3 square (Serra 1982,
// Image Analysis and Mathematical Morphology). tmp holds h·w values.
func greyOpen3(dst, src, tmp []float32, h, w int) {
	minMax3(tmp, src, h, w, false)
	minMax3(dst, tmp, h, w, true)
}

// greyClose3 is the dual of greyOpen3: the 3×3 maximum followed by the 3×3
// minimum (scipy.ndimage.grey_closing, size 3). It fills dark gaps
// narrower than 3 px between bright structures — the one- or two-pixel
// interior between the two edge lines an edge detector draws along a
// stroke, a crack — and keeps every dark region that contains a 3×3
// square (Serra 1982). tmp holds h·w values.
func greyClose3(dst, src, tmp []float32, h, w int) {
	minMax3(tmp, src, h, w, true)
	minMax3(dst, tmp, h, w, false)
}

// minMax3 writes the 3×3 minimum (max false) or maximum (max true) of src
// into dst, windows clipped at the border.
func minMax3(dst, src []float32, h, w int, isMax bool) {
	for y := 0; y < h; y++ {
		y0, y1 := max(y-1, 0), min(y+1, h-1)
		for x := 0; x < w; x++ {
			x0, x1 := max(x-1, 0), min(x+1, w-1)
			v := src[y0*w+x0]
			for yy := y0; yy <= y1; yy++ {
				for _, u := range src[yy*w+x0 : yy*w+x1+1] {
					if isMax {
						v = max(v, u)
					} else {
						v = min(v, u)
					}
				}
			}
			dst[y*w+x] = v
		}
	}
}
