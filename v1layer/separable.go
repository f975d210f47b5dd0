package v1layer

import (
	"math"

	"gonum.org/v1/gonum/mat"
)

// A separable plan writes each kernel as a sum of rank-1 terms,
//
//	K = Σ_i σ_i·u_i·v_iᵀ   (singular value decomposition, u_i vertical, v_i horizontal)
//
// so that correlating with K costs Σ_i (2s) multiply-adds per pixel instead
// of s². DoG kernels have rank 2, Gabors at 0° and 90° rank 1, at 45° and
// 135° rank 2 (odd) or 3 (even). Each term is run as a first 1-D pass over
// the padded image (horizontal v_i "row-first", or vertical u_i
// "column-first") into a plane, then a second 1-D pass in the other
// direction. Kernels of one size often share first-pass vectors (the 0°
// even and odd Gabors share their vertical envelope, the 45° and 135° ones
// their singular vectors), so the planner picks the direction per kernel
// that minimises the number of distinct first passes and runs each once.

// svdTol is the relative singular-value cut-off. A dropped term changes a
// response by at most σ_i·||patch||₂ ≤ σ_i·s for pixels in [0,1]; with
// unit-L2 kernels and s ≤ 29 a cut of 1e-6·σ_1 keeps that below 3e-5 in
// the worst case and ~1e-7 typically — at the level of the float32
// rounding already present in the kernel weights (whose own spurious
// singular values are ~1e-7).
const svdTol = 1e-6

// dedupTol is the max-abs tolerance under which two unit first-pass
// vectors count as the same filter. Kernels that are exact mirror images
// in float64 (45° and 135° Gabors) differ after float32 rounding by ~6e-8
// per weight, so their singular vectors differ by ~1e-7; 1e-6 merges
// those and nothing a real difference would separate. The float64
// reference test bounds the effect on responses.
const dedupTol = 1e-6

type factor struct {
	u, v []float64 // vertical, horizontal; σ folded into u
}

// separate returns the rank-1 factors of the size×size kernel w.
func separate(w []float32, size int) []factor {
	a := mat.NewDense(size, size, nil)
	for i, x := range w {
		a.Set(i/size, i%size, float64(x))
	}
	var svd mat.SVD
	if !svd.Factorize(a, mat.SVDThin) {
		return nil
	}
	s := svd.Values(nil)
	var u, v mat.Dense
	svd.UTo(&u)
	svd.VTo(&v)
	var out []factor
	for i, si := range s {
		if si <= svdTol*s[0] || si == 0 {
			break
		}
		f := factor{u: make([]float64, size), v: make([]float64, size)}
		for j := 0; j < size; j++ {
			f.u[j] = si * u.At(j, i)
			f.v[j] = v.At(j, i)
		}
		out = append(out, f)
	}
	return out
}

// canon scales x to unit L2 with its largest-magnitude entry positive and
// returns the scale a with x = a·canon(x).
func canon(x []float64) ([]float64, float64) {
	var n2 float64
	best := 0
	for i, v := range x {
		n2 += v * v
		if math.Abs(v) > math.Abs(x[best])+1e-12 {
			best = i
		}
	}
	a := math.Sqrt(n2)
	if x[best] < 0 {
		a = -a
	}
	c := make([]float64, len(x))
	for i, v := range x {
		c[i] = v / a
	}
	return c, a
}

// pass1 is one first-pass filter.
type pass1 struct {
	vertical bool
	taps     filt
	r        int
}

// term is one second pass: read plane src, filter with taps in the other direction.
type term struct {
	src  int
	taps filt
}

// kplan says how one kernel's response is computed.
type kplan struct {
	direct    bool   // plain 2-D correlation, one horizontal term per kernel row
	rows      []filt // direct: the kernel's rows
	vertical2 bool   // second pass is vertical (the first passes were horizontal)
	terms     []term
	r         int
	mate      int // ≥ 0: a later kernel of the group whose second pass reads the same planes the same way (see pairUp)
	mated     bool
}

type plan struct {
	first   []pass1
	firstC  [][]float64 // canonical float64 first-pass vectors, for sharing
	ks      []kplan
	order   []int    // kernels in execution order (grouped by size)
	groups  [][2]int // [start,end) into order per size group; first passes of a group are firstOf[g]
	firstOf [][]int
}

// makePlan builds the plan for the kernels. Kernels whose rank makes the
// separable cost 2·rank·s not cheaper than s² are run directly.
func makePlan(kernels []Kernel) *plan {
	p := &plan{ks: make([]kplan, len(kernels))}
	for i := range p.ks {
		p.ks[i].mate = -1
	}
	facs := make([][]factor, len(kernels))
	bySize := map[int][]int{}
	var sizes []int
	for i, k := range kernels {
		p.ks[i].r = k.Size / 2
		f := separate(k.W, k.Size)
		if f == nil || 2*len(f)*k.Size >= k.Size*k.Size {
			p.ks[i].direct = true
			for v := 0; v < k.Size; v++ {
				p.ks[i].rows = append(p.ks[i].rows, mkFilt(append([]float32(nil), k.W[v*k.Size:(v+1)*k.Size]...)))
			}
			continue
		}
		facs[i] = f
		if _, ok := bySize[k.Size]; !ok {
			sizes = append(sizes, k.Size)
		}
		bySize[k.Size] = append(bySize[k.Size], i)
	}
	for _, s := range sizes {
		idx := bySize[s]
		dirs := chooseDirections(idx, facs)
		f0 := len(p.first)
		start := len(p.order)
		for j, ki := range idx {
			p.addKernel(ki, facs[ki], dirs[j])
			p.order = append(p.order, ki)
		}
		p.groups = append(p.groups, [2]int{start, len(p.order)})
		p.pairUp(p.order[start:])
		var fo []int
		for i := f0; i < len(p.first); i++ {
			fo = append(fo, i)
		}
		p.firstOf = append(p.firstOf, fo)
	}
	for i := range p.ks {
		if p.ks[i].direct {
			p.order = append(p.order, i)
		}
	}
	return p
}

// chooseDirections picks, for the kernels idx of one size, row-first
// (false) or column-first (true) so that the number of distinct first
// passes is smallest: exhaustively for up to 12 kernels, greedily beyond.
func chooseDirections(idx []int, facs [][]factor) []bool {
	n := len(idx)
	count := func(dirs []bool) int {
		var seen [2][][]float64
		c := 0
		for j, ki := range idx {
			d := 0
			if dirs[j] {
				d = 1
			}
			for _, f := range facs[ki] {
				x := f.v
				if dirs[j] {
					x = f.u
				}
				cx, _ := canon(x)
				if findVec(seen[d], cx) < 0 {
					seen[d] = append(seen[d], cx)
					c++
				}
			}
		}
		return c
	}
	best := make([]bool, n)
	if n <= 12 {
		bestC := count(best)
		cur := make([]bool, n)
		for m := 1; m < 1<<n; m++ {
			for j := range cur {
				cur[j] = m>>j&1 == 1
			}
			if c := count(cur); c < bestC {
				bestC = c
				copy(best, cur)
			}
		}
		return best
	}
	for j := range best {
		best[j] = false
		a := count(best)
		best[j] = true
		if b := count(best); b >= a {
			best[j] = false
		}
	}
	return best
}

func findVec(list [][]float64, x []float64) int {
	for i, y := range list {
		if len(y) != len(x) {
			continue
		}
		ok := true
		for j := range x {
			if math.Abs(x[j]-y[j]) > dedupTol {
				ok = false
				break
			}
		}
		if ok {
			return i
		}
	}
	return -1
}

func (p *plan) addKernel(ki int, fs []factor, colFirst bool) {
	kp := &p.ks[ki]
	kp.vertical2 = !colFirst
	for _, f := range fs {
		a, b := f.v, f.u // first pass, second pass
		if colFirst {
			a, b = f.u, f.v
		}
		ca, scale := canon(a)
		src := -1
		for i, q := range p.first {
			if q.vertical == colFirst && findVec(p.firstC[i:i+1], ca) == 0 {
				src = i
				break
			}
		}
		if src < 0 {
			src = len(p.first)
			p.first = append(p.first, pass1{vertical: colFirst, taps: mkFilt(f32s(ca, 1)), r: len(ca) / 2})
			p.firstC = append(p.firstC, ca)
		}
		kp.terms = append(kp.terms, term{src: src, taps: mkFilt(f32s(b, scale))})
	}
}

// pairUp pairs the kernels of one size group whose second passes run in
// the same direction and read the same set of first-pass planes (the even
// and odd Gabors at 0° and at 90°, the 45° and 135° even ones, the 45° and
// 135° odd ones): such a pair can run as one pass in which each loaded
// plane value feeds both sums (vsum2). The later kernel's terms are put in the
// earlier one's plane order.
func (p *plan) pairUp(idx []int) {
	for i, a := range idx {
		ka := &p.ks[a]
		if ka.mate >= 0 || ka.mated {
			continue
		}
		for _, b := range idx[i+1:] {
			kb := &p.ks[b]
			if kb.vertical2 != ka.vertical2 || kb.mated || kb.mate >= 0 || len(kb.terms) != len(ka.terms) || kb.r != ka.r {
				continue
			}
			perm := make([]term, 0, len(ka.terms))
			for _, ta := range ka.terms {
				for _, tb := range kb.terms {
					if tb.src == ta.src {
						perm = append(perm, tb)
						break
					}
				}
			}
			if len(perm) != len(ka.terms) {
				continue
			}
			kb.terms = perm
			ka.mate, kb.mated = b, true
			break
		}
	}
}

func f32s(x []float64, scale float64) []float32 {
	out := make([]float32, len(x))
	for i, v := range x {
		out[i] = float32(v * scale)
	}
	return out
}

// filt is one 1-D filter: its taps, and each tap broadcast to 8 lanes for
// the SIMD loops (which then load a tap vector instead of broadcasting).
type filt struct {
	w  []float32
	wb [][16]float32
}

func mkFilt(w []float32) filt {
	f := filt{w: w, wb: make([][16]float32, len(w))}
	for i, v := range w {
		for j := range f.wb[i] {
			f.wb[i][j] = v
		}
	}
	return f
}

// sub returns taps [k0,k1).
func (f filt) sub(k0, k1 int) filt { return filt{w: f.w[k0:k1], wb: f.wb[k0:k1]} }
