package v1layer

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
