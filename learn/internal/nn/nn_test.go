package nn

import (
	"fmt"
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

// naiveGemmNT and naiveGemmNN are the textbook triple loops of c = a·bᵀ
// and c = a·b, in float64.
func naiveGemmNT(c, a, b []float32, m, n, p int) {
	naiveGemm(c, a, m, n, p, func(j, l int) float32 { return b[j*p+l] })
}

func naiveGemmNN(c, a, b []float32, m, n, p int) {
	naiveGemm(c, a, m, n, p, func(j, l int) float32 { return b[l*n+j] })
}

func naiveGemm(c, a []float32, m, n, p int, bAt func(j, l int) float32) {
	for i := 0; i < m; i++ {
		for j := 0; j < n; j++ {
			var s float64
			for l := 0; l < p; l++ {
				s += float64(a[i*p+l]) * float64(bAt(j, l))
			}
			c[i*n+j] = float32(s)
		}
	}
}

func TestPlainMatchesGraph(t *testing.T) {
	for _, kern := range []Kernels{{}, {NT: naiveGemmNT, NN: naiveGemmNN}} {
		testPlainMatchesGraph(t, kern)
	}
}

func testPlainMatchesGraph(t *testing.T, kern Kernels) {
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
		checkGrads(t, fmt.Sprintf("%+v plain vs graph", sp), gg, gp, lg, lp, plainTol)
		gr.Close()
	}
}

// chunkTol bounds |g_C − g_1| / (max |g_1| over the tensor) between the plain
// engine with C row chunks and with one chunk on the same batch. Chunking
// only regroups the sum over the batch rows of each gradient entry (and of
// the loss): both are sums of B products in float32, whose rounding error is
// at most ~B·ε relative to the sum of magnitudes (Higham 2002, "Accuracy and
// Stability of Numerical Algorithms", §4.2), B·ε ≈ 65·6e-8 ≈ 4e-6 here; the
// magnitudes can exceed the largest entry a little, so 2e-5 is the bound. A
// chunk that is dropped, counted twice or scaled by its own size instead of
// B moves entries by O(1/C) relative and fails.
const chunkTol = 2e-5

// TestChunkedGradient checks the chunked plain engine against the one-chunk
// engine (within chunkTol) and against gorgonia's graph (within plainTol,
// the outside reference), and that 1, 2 and 3 workers give the same
// gradient and loss bit for bit.
func TestChunkedGradient(t *testing.T) {
	for _, sp := range []Spec{
		{In: 37, Out: 5, Batch: 19, L2: 0.01, Chunks: 3},
		{In: 130, Hidden: 70, Out: 10, Batch: 65, L2: 0.02, Chunks: 4},
		{In: 30, Hidden: 23, Out: 4, Batch: 17, Chunks: 17},
		{In: 50, Hidden: 300, Out: 6, Batch: 40, L2: 0.01, Chunks: 5}, // 3 hidden blocks, the last partial
	} {
		one := sp
		one.Chunks = 1
		gr, err := New(one)
		if err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(5, uint64(sp.In)))
		for i := range gr.X32() {
			gr.X32()[i] = float32(rng.NormFloat64())
		}
		for i := 0; i < sp.Batch; i++ {
			gr.Y32()[i*sp.Out+rng.IntN(sp.Out)] = 1
		}
		for _, p := range gr.Params32() {
			for j := range p {
				p[j] = float32(0.3 * rng.NormFloat64())
			}
		}
		eval := func(e Engine) ([][]float32, float64) {
			if e != Engine(gr) {
				copy(e.X32(), gr.X32())
				copy(e.Y32(), gr.Y32())
				for pi, p := range gr.Params32() {
					copy(e.Params32()[pi], p)
				}
			}
			var g [][]float32
			for _, p := range gr.Params32() {
				g = append(g, make([]float32, len(p)))
			}
			l, err := e.Eval(g)
			if err != nil {
				t.Fatal(err)
			}
			return g, l
		}
		compare := func(what string, ref, got [][]float32, lref, lgot, tol float64) {
			checkGrads(t, fmt.Sprintf("%+v %s", sp, what), ref, got, lref, lgot, tol)
		}
		gGraph, lGraph := eval(gr)
		single, err := NewPlain(one, Kernels{}, nil)
		if err != nil {
			t.Fatal(err)
		}
		gOne, lOne := eval(single)
		var gW1 [][]float32
		var lW1 float64
		for _, workers := range []int{1, 2, 3} {
			team := NewTeam(workers)
			pl, err := NewPlain(sp, Kernels{}, team)
			if err != nil {
				t.Fatal(err)
			}
			g, l := eval(pl)
			team.Close()
			if workers == 1 {
				gW1, lW1 = g, l
				compare("chunked vs one chunk", gOne, g, lOne, l, chunkTol)
				compare("chunked vs gorgonia", gGraph, g, lGraph, l, plainTol)
				continue
			}
			if math.Float64bits(l) != math.Float64bits(lW1) {
				t.Errorf("%+v: loss with %d workers %v, with 1 %v", sp, workers, l, lW1)
			}
			for pi := range g {
				for j := range g[pi] {
					if math.Float32bits(g[pi][j]) != math.Float32bits(gW1[pi][j]) {
						t.Fatalf("%+v: grad %d[%d] with %d workers %v, with 1 %v", sp, pi, j, workers, g[pi][j], gW1[pi][j])
					}
				}
			}
		}
		gr.Close()
	}
}

// TestPlainEvalAllocatesNothing: a chunked evaluation on two workers reuses
// its scratch and the team's goroutines.
func TestPlainEvalAllocatesNothing(t *testing.T) {
	sp := Spec{In: 64, Hidden: 32, Out: 10, Batch: 64, L2: 1e-4, Chunks: 4}
	team := NewTeam(2)
	defer team.Close()
	pl, err := NewPlain(sp, Kernels{}, team)
	if err != nil {
		t.Fatal(err)
	}
	var g [][]float32
	for _, p := range pl.Params32() {
		for j := range p {
			p[j] = 0.01 * float32(j%7)
		}
		g = append(g, make([]float32, len(p)))
	}
	for i := 0; i < sp.Batch; i++ {
		pl.Y32()[i*sp.Out+i%sp.Out] = 1
	}
	var ga any = g
	if n := testing.AllocsPerRun(50, func() {
		if _, err := pl.Eval(ga); err != nil {
			t.Fatal(err)
		}
	}); n != 0 {
		t.Errorf("Eval allocates %v times per call, want 0", n)
	}
}

// checkGrads fails unless the losses agree within tol relative and every
// gradient entry within tol times the largest magnitude of its reference
// tensor.
func checkGrads(t *testing.T, what string, ref, got [][]float32, lref, lgot, tol float64) {
	t.Helper()
	if math.Abs(lref-lgot) > tol*math.Abs(lref) {
		t.Errorf("%s: loss %.8g, reference %.8g", what, lgot, lref)
	}
	for pi := range ref {
		scale := 0.0
		for _, v := range ref[pi] {
			scale = math.Max(scale, math.Abs(float64(v)))
		}
		for j := range ref[pi] {
			if d := math.Abs(float64(ref[pi][j] - got[pi][j])); d > tol*scale {
				t.Fatalf("%s: grad %d[%d] %g, reference %g", what, pi, j, got[pi][j], ref[pi][j])
			}
		}
	}
}
