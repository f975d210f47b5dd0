package nn

// l2Add adds the L2 term's gradient lam·w to dst (dst[j] += lam·w[j], one
// float32 multiplication and addition per element); l2Sq returns Σ w²,
// summed in float64. The SIMD build replaces them by 8-lane versions
// (loops_simd_amd64.go) with the same gradient bits and the sum taken over
// eight float64 lanes, whose order is fixed by the length alone. They are
// separate because Eval takes Σ w² while the weights are still those the
// loss is of, and the gradient term where the optimiser may step at once.
var (
	l2Add = l2AddGo
	l2Sq  = l2SqGo
)

func l2AddGo(dst, w []float32, lam float32) {
	dst = dst[:len(w)]
	for j, v := range w {
		dst[j] += float32(lam * v) // the conversion keeps the product rounded (no FMA)
	}
}

func l2SqGo(w []float32) float64 {
	var sq float64
	for _, v := range w {
		sq += float64(v) * float64(v)
	}
	return sq
}

// biasReLU sets row[i] = max(0, row[i] + b): a hidden unit's activations
// over a chunk's rows (the SIMD build: 8 lanes, the same bits but for the
// sign of an exact zero).
var biasReLU = biasReLUGo

func biasReLUGo(row []float32, b float32) {
	for i, v := range row {
		row[i] = max(0, v+b)
	}
}

// biasReLURows applies biasReLU to the rows of m (len(b) rows of n
// values), row h with bias b[h]. The SIMD build runs all rows in one call,
// with biasReLU's operations.
var biasReLURows = biasReLURowsGo

func biasReLURowsGo(m, b []float32, n int) {
	for h, bh := range b {
		biasReLU(m[h*n:(h+1)*n], bh)
	}
}

// maskReLU sets dst[i] = src[i] where act[i] > 0 and 0 elsewhere (a NaN
// activation included: its NaN already reaches the loss): the gradient
// through the ReLU.
var maskReLU = maskReLUGo

func maskReLUGo(dst, src, act []float32) {
	src, act = src[:len(dst)], act[:len(dst)]
	for i, v := range src {
		if !(act[i] > 0) {
			v = 0
		}
		dst[i] = v
	}
}
