package v1layer

import "math"

// Element-wise loops of the complex-cell and pooling stages. A SIMD build
// replaces them at init (conv_simd_amd64.go); TestSIMDMatchesPortable
// compares the two.
var (
	energyTo = energyGo // dst[i] = sqrt(e[i]² + o[i]²)
	maxInto  = maxIntoGo
)

func energyGo(dst, e, o []float32) {
	e, o = e[:len(dst)], o[:len(dst)]
	for i := range dst {
		dst[i] = float32(math.Sqrt(float64(e[i]*e[i] + o[i]*o[i])))
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
