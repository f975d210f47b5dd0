package v1layer

import "math"

// Element-wise loops of the complex-cell and pooling stages. A SIMD build
// replaces them at init (conv_simd_amd64.go); TestSIMDMatchesPortable
// compares the two.
var (
	energyTo = energyGo // dst[i] = sqrt(e[i]² + o[i]²)
	maxInto  = maxIntoGo
	max2To   = max2Go // dst[i] = max(a[i], b[i])
	max3To   = max3Go // dst[i] = max(a[i], b[i], c[i])
)

func max2Go(dst, a, b []float32) {
	a, b = a[:len(dst)], b[:len(dst)]
	for i, v := range a {
		if u := b[i]; u > v {
			v = u
		}
		dst[i] = v
	}
}

func max3Go(dst, a, b, c []float32) {
	a, b, c = a[:len(dst)], b[:len(dst)], c[:len(dst)]
	for i, v := range a {
		if u := b[i]; u > v {
			v = u
		}
		if u := c[i]; u > v {
			v = u
		}
		dst[i] = v
	}
}

// maxIntoGo sets dst[i] = max(dst[i], src[i]).
func maxIntoGo(dst, src []float32) {
	src = src[:len(dst)]
	for i, v := range src {
		if v > dst[i] {
			dst[i] = v
		}
	}
}

// Loops of the fused pooling path (poolfused.go), replaced the same way.
var (
	min2To  = min2Go  // dst[i] = min(a[i], b[i])
	min3To  = min3Go  // dst[i] = min(a[i], b[i], c[i])
	esq2To  = esq2Go  // dst[i] = max over the two rows of e²+o²
	esq3To  = esq3Go  // dst[i] = max over the three rows of e²+o²
	sqrtsOf = sqrtsGo // x[i] = sqrt(x[i]) in place
)

func min2Go(dst, a, b []float32) {
	a, b = a[:len(dst)], b[:len(dst)]
	for i, v := range a {
		if u := b[i]; u < v {
			v = u
		}
		dst[i] = v
	}
}

func min3Go(dst, a, b, c []float32) {
	a, b, c = a[:len(dst)], b[:len(dst)], c[:len(dst)]
	for i, v := range a {
		if u := b[i]; u < v {
			v = u
		}
		if u := c[i]; u < v {
			v = u
		}
		dst[i] = v
	}
}

func esq2Go(dst, e0, e1, o0, o1 []float32) {
	e0, e1, o0, o1 = e0[:len(dst)], e1[:len(dst)], o0[:len(dst)], o1[:len(dst)]
	for i := range dst {
		v := e0[i]*e0[i] + o0[i]*o0[i]
		if u := e1[i]*e1[i] + o1[i]*o1[i]; u > v {
			v = u
		}
		dst[i] = v
	}
}

func esq3Go(dst, e0, e1, e2, o0, o1, o2 []float32) {
	n := len(dst)
	e0, e1, e2, o0, o1, o2 = e0[:n], e1[:n], e2[:n], o0[:n], o1[:n], o2[:n]
	for i := range dst {
		v := e0[i]*e0[i] + o0[i]*o0[i]
		if u := e1[i]*e1[i] + o1[i]*o1[i]; u > v {
			v = u
		}
		if u := e2[i]*e2[i] + o2[i]*o2[i]; u > v {
			v = u
		}
		dst[i] = v
	}
}

func sqrtsGo(x []float32) {
	for i, v := range x {
		x[i] = float32(math.Sqrt(float64(v)))
	}
}
