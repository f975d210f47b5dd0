package learn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// adamTol bounds the relative difference of an Adam step computed in
// float32 from the same step in float64: a handful of float32 roundings
// (≈ 6e-8 each) in the moments, the square root and the division.
const adamTol = 1e-6

// TestAdamRangeMatchesScalar checks adamRange (8 lanes in the SIMD build)
// against the scalar loop bit for bit, on lengths that leave every tail,
// and against Kingma & Ba (2015), Algorithm 1, evaluated in float64 with
// the bias corrections applied to the moments rather than folded into the
// step size.
func TestAdamRangeMatchesScalar(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 7, 8, 9, 31, 1000} {
		mk := func(scale float64, abs bool) []float32 {
			s := make([]float32, n)
			for i := range s {
				v := scale * r.NormFloat64()
				if abs {
					v = math.Abs(v)
				}
				s[i] = float32(v)
			}
			return s
		}
		p, g, m, v := mk(1, false), mk(0.1, false), mk(0.01, false), mk(1e-4, true)
		v[0] = 0 // a moment that has seen only zero gradients
		g[0] = 0
		p0, m0, v0 := append([]float32(nil), p...), append([]float32(nil), m...), append([]float32(nil), v...)
		p2, m2, v2 := append([]float32(nil), p...), append([]float32(nil), m...), append([]float32(nil), v...)
		const lr, tStep = 1e-3, 7
		c2 := math.Sqrt(1 - math.Pow(adamBeta2, tStep))
		step := float32(lr * c2 / (1 - math.Pow(adamBeta1, tStep)))
		eps := float32(adamEps * c2)
		adamRange(p, g, m, v, step, eps)
		adamRangeGo(p2, g, m2, v2, step, eps)
		for j := range p {
			if math.Float32bits(p[j]) != math.Float32bits(p2[j]) || math.Float32bits(m[j]) != math.Float32bits(m2[j]) || math.Float32bits(v[j]) != math.Float32bits(v2[j]) {
				t.Fatalf("n=%d element %d: adamRange gives p,m,v = %v,%v,%v, the scalar loop %v,%v,%v", n, j, p[j], m[j], v[j], p2[j], m2[j], v2[j])
			}
		}
		// The published algorithm in float64, from the state before the step.
		for j := range p {
			gj := float64(g[j])
			mj := adamBeta1*float64(m0[j]) + (1-adamBeta1)*gj
			vj := adamBeta2*float64(v0[j]) + (1-adamBeta2)*gj*gj
			mh, vh := mj/(1-math.Pow(adamBeta1, tStep)), vj/(1-math.Pow(adamBeta2, tStep))
			want := float64(p0[j]) - lr*mh/(math.Sqrt(vh)+adamEps)
			if d := math.Abs(float64(p[j]) - want); d > adamTol*math.Max(math.Abs(want), 1e-3) {
				t.Errorf("n=%d element %d: p = %v, Algorithm 1 in float64 gives %v", n, j, p[j], want)
			}
		}
	}
}

// TestAdamL2RangeMatchesTwoPasses: the optimiser step with the L2 term's
// gradient folded in (adamL2Range, 8 lanes in the SIMD build) gives the
// bits of the two passes it replaces — g + λ·p rounded as IEEE 754 float32
// prescribes (the product, then the sum), then adamRangeGo — so folding it
// into the update leaves every fit as it was.
func TestAdamL2RangeMatchesTwoPasses(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 8))
	for _, n := range []int{1, 7, 8, 9, 31, 1000} {
		mk := func(scale float64) []float32 {
			s := make([]float32, n)
			for i := range s {
				s[i] = float32(scale * r.NormFloat64())
			}
			return s
		}
		p, g, m, v := mk(1), mk(0.1), mk(0.01), mk(1e-4)
		for i := range v {
			v[i] = float32(math.Abs(float64(v[i])))
		}
		p2, g2, m2, v2 := append([]float32(nil), p...), append([]float32(nil), g...), append([]float32(nil), m...), append([]float32(nil), v...)
		const lam, step, eps = float32(1e-4), float32(3e-4), float32(1e-8)
		adamL2Range(p, g, m, v, lam, step, eps)
		for j := range g2 {
			g2[j] += float32(lam * p2[j])
		}
		adamRangeGo(p2, g2, m2, v2, step, eps)
		for j := range p {
			if math.Float32bits(p[j]) != math.Float32bits(p2[j]) || math.Float32bits(m[j]) != math.Float32bits(m2[j]) || math.Float32bits(v[j]) != math.Float32bits(v2[j]) {
				t.Fatalf("n=%d element %d: folded step gives p,m,v = %v,%v,%v, two passes %v,%v,%v", n, j, p[j], m[j], v[j], p2[j], m2[j], v2[j])
			}
		}
	}
}

// TestStandardizeRowMatchesScalar: the minibatch rows standardised by
// standardizeRow (8 lanes in the SIMD build) have the bits of the scalar
// loop, (x − mean)/std with each operation rounded once (IEEE 754 float32
// subtraction and division are correctly rounded), on lengths that leave
// every tail, standard deviations well below 1 included.
func TestStandardizeRowMatchesScalar(t *testing.T) {
	r := rand.New(rand.NewPCG(9, 10))
	for _, n := range []int{1, 7, 8, 9, 1085} {
		x, mean, std := make([]float32, n), make([]float32, n), make([]float32, n)
		for i := range x {
			x[i], mean[i] = float32(r.NormFloat64()), float32(r.NormFloat64())
			std[i] = float32(1e-3 + math.Abs(r.NormFloat64()))
		}
		got := make([]float32, n)
		standardizeRow(got, x, mean, std)
		for j := range x {
			want := (x[j] - mean[j]) / std[j]
			if math.Float32bits(got[j]) != math.Float32bits(want) {
				t.Fatalf("n=%d element %d: %v, scalar %v", n, j, got[j], want)
			}
		}
	}
}
