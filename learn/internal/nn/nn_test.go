package nn

import (
	"math"
	"math/rand/v2"
	"testing"
)

// gradTol bounds the relative error |g − g_fd| / max(1e-8, |g| + |g_fd|) between
// gorgonia's gradient and a central finite difference with step fdStep in
// float64. The central difference's truncation error is O(h²·|f‴|) ≈ 1e-10 for
// h = 1e-5 on this well-scaled problem and its rounding error ε·|f|/h ≈ 1e-11,
// so 1e-6 leaves a wide margin while still catching any wrong term (a wrong
// gradient is off by O(1) relative). ReLU kinks are avoided by checking that no
// pre-activation lies within fdStep of zero (see kinkFree). Common practice
// (e.g. the gradient-checking recipe of numerical optimisation texts).
const (
	gradTol = 1e-6
	fdStep  = 1e-5
)

func fill(rng *rand.Rand, s []float64, scale float64) {
	for i := range s {
		s[i] = scale * rng.NormFloat64()
	}
}

func TestGradientCheck(t *testing.T) {
	for _, sp := range []Spec{
		{In: 5, Out: 3, Batch: 7, L2: 0.3, Float64: true},
		{In: 4, Hidden: 6, Out: 3, Batch: 5, L2: 0.1, Float64: true},
		{In: 4, Hidden: 6, Out: 2, Batch: 1, Float64: true},
	} {
		n, err := New(sp)
		if err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(1, 2))
		fill(rng, n.X64(), 1)
		y := n.Y64()
		for i := 0; i < sp.Batch; i++ {
			y[i*sp.Out+rng.IntN(sp.Out)] = 1
		}
		ps := n.Params64()
		for _, p := range ps {
			fill(rng, p, 0.7)
		}
		if sp.Hidden > 0 && !kinkFree(n) {
			t.Fatalf("%+v: a pre-activation is within %g of the ReLU kink; change the seed", sp, fdStep)
		}
		grads := make([][]float64, len(ps))
		for i, p := range ps {
			grads[i] = make([]float64, len(p))
		}
		if _, err := n.Eval(grads); err != nil {
			t.Fatal(err)
		}
		scratch := make([][]float64, len(ps))
		for i, p := range ps {
			scratch[i] = make([]float64, len(p))
		}
		worst := 0.0
		for pi, p := range ps {
			for j := range p {
				old := p[j]
				p[j] = old + fdStep
				lp, err := n.Eval(scratch)
				if err != nil {
					t.Fatal(err)
				}
				p[j] = old - fdStep
				lm, err := n.Eval(scratch)
				if err != nil {
					t.Fatal(err)
				}
				p[j] = old
				fd := (lp - lm) / (2 * fdStep)
				g := grads[pi][j]
				rel := math.Abs(g-fd) / math.Max(1e-8, math.Abs(g)+math.Abs(fd))
				worst = math.Max(worst, rel)
				if rel > gradTol {
					t.Errorf("%+v param %d[%d]: gorgonia %.10g, central difference %.10g (rel %.2g > %g)", sp, pi, j, g, fd, rel, gradTol)
				}
			}
		}
		t.Logf("%+v: worst relative gradient error %.2g", sp, worst)
		n.Close()
	}
}

// kinkFree reports whether every hidden pre-activation is at least 10·fdStep
// away from 0, so the finite difference does not straddle the ReLU kink.
func kinkFree(n *Net) bool {
	s := n.spec
	x, ps := n.X64(), n.Params64()
	for i := 0; i < s.Batch; i++ {
		for h := 0; h < s.Hidden; h++ {
			a := ps[1][h]
			for d := 0; d < s.In; d++ {
				a += x[i*s.In+d] * ps[0][h*s.In+d]
			}
			if math.Abs(a) < 10*fdStep {
				return false
			}
		}
	}
	return true
}

func TestLossValueMatchesFormula(t *testing.T) {
	// The loss must be the documented formula, evaluated here independently in plain Go.
	sp := Spec{In: 3, Out: 4, Batch: 6, L2: 0.5, Float64: true}
	n, err := New(sp)
	if err != nil {
		t.Fatal(err)
	}
	defer n.Close()
	rng := rand.New(rand.NewPCG(3, 4))
	fill(rng, n.X64(), 1)
	labels := make([]int, sp.Batch)
	for i := range labels {
		labels[i] = rng.IntN(sp.Out)
		n.Y64()[i*sp.Out+labels[i]] = 1
	}
	ps := n.Params64()
	fill(rng, ps[0], 1)
	fill(rng, ps[1], 1)
	grads := [][]float64{make([]float64, len(ps[0])), make([]float64, len(ps[1]))}
	got, err := n.Eval(grads)
	if err != nil {
		t.Fatal(err)
	}
	want := 0.0
	for i := 0; i < sp.Batch; i++ {
		z := make([]float64, sp.Out)
		mx := math.Inf(-1)
		for k := range z {
			z[k] = ps[1][k]
			for d := 0; d < sp.In; d++ {
				z[k] += n.X64()[i*sp.In+d] * ps[0][k*sp.In+d]
			}
			mx = math.Max(mx, z[k])
		}
		se := 0.0
		for k := range z {
			se += math.Exp(z[k] - mx)
		}
		want -= z[labels[i]] - mx - math.Log(se)
	}
	want /= float64(sp.Batch)
	for _, w := range ps[0] {
		want += sp.L2 / 2 * w * w
	}
	// lossTol: float64 rounding over a few dozen terms; 1e-12 relative is generous.
	const lossTol = 1e-12
	if math.Abs(got-want) > lossTol*math.Abs(want) {
		t.Errorf("loss %.15g, formula %.15g", got, want)
	}
}

func TestBadSpec(t *testing.T) {
	if _, err := New(Spec{In: 0, Out: 3, Batch: 1}); err == nil {
		t.Error("In 0 accepted")
	}
	if _, err := New(Spec{In: 2, Out: 1, Batch: 1}); err == nil {
		t.Error("Out 1 accepted")
	}
}

// plainTol bounds |g_plain − g_graph| / (max |g_graph| over the tensor) between
// the plain engine and gorgonia's graph, both float32 on the same batch. The
// two sum the same products in different orders, so they differ by float32
// rounding of sums of up to a few hundred terms: ~1e-6 relative; 1e-4 is a
// safe bound that any wrong formula (an O(1) error) still fails.
const plainTol = 1e-4

// naiveGemmNT is the textbook triple loop, in float64.
func naiveGemmNT(c, a, b []float32, m, n, p int) {
	for i := 0; i < m; i++ {
		for j := 0; j < n; j++ {
			var s float64
			for l := 0; l < p; l++ {
				s += float64(a[i*p+l]) * float64(b[j*p+l])
			}
			c[i*n+j] = float32(s)
		}
	}
}

func TestPlainMatchesGraph(t *testing.T) {
	for _, kern := range []GemmNTFunc{nil, naiveGemmNT} {
		testPlainMatchesGraph(t, kern)
	}
}

func testPlainMatchesGraph(t *testing.T, kern GemmNTFunc) {
	for _, sp := range []Spec{
		{In: 37, Out: 5, Batch: 19, L2: 0.01},
		{In: 30, Hidden: 23, Out: 4, Batch: 17, L2: 0.02},
		{In: 130, Hidden: 70, Out: 10, Batch: 65},
	} {
		gr, err := New(sp)
		if err != nil {
			t.Fatal(err)
		}
		pl, err := NewPlain(sp, kern, nil)
		if err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(9, uint64(sp.In)))
		for i := range gr.X32() {
			v := float32(rng.NormFloat64())
			gr.X32()[i], pl.X32()[i] = v, v
		}
		for i := 0; i < sp.Batch; i++ {
			c := rng.IntN(sp.Out)
			gr.Y32()[i*sp.Out+c], pl.Y32()[i*sp.Out+c] = 1, 1
		}
		for pi, p := range gr.Params32() {
			for j := range p {
				v := float32(0.3 * rng.NormFloat64())
				p[j], pl.Params32()[pi][j] = v, v
			}
		}
		mk := func() [][]float32 {
			var g [][]float32
			for _, p := range pl.Params32() {
				g = append(g, make([]float32, len(p)))
			}
			return g
		}
		gg, gp := mk(), mk()
		lg, err := gr.Eval(gg)
		if err != nil {
			t.Fatal(err)
		}
		lp, err := pl.Eval(gp)
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(lg-lp) > plainTol*math.Abs(lg) {
			t.Errorf("%+v: loss graph %.7g plain %.7g", sp, lg, lp)
		}
		for pi := range gg {
			scale := 0.0
			for _, v := range gg[pi] {
				scale = math.Max(scale, math.Abs(float64(v)))
			}
			for j := range gg[pi] {
				if d := math.Abs(float64(gg[pi][j] - gp[pi][j])); d > plainTol*scale {
					t.Fatalf("%+v: grad %d[%d] graph %g plain %g", sp, pi, j, gg[pi][j], gp[pi][j])
				}
			}
		}
		gr.Close()
	}
}
