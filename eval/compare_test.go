package eval

import (
	"math"
	"math/rand/v2"
	"testing"
)

// mcnemarRelTol: both sides evaluate binomial tail sums in float64 (SciPy via
// Boost's binomial pdf, we via log-gamma); log-gamma of arguments up to 2100
// carries ~1e-13 relative error, so 1e-9 is loose enough for any platform yet
// far below any p-value difference that matters.
const mcnemarRelTol = 1e-9

func TestMcNemarMatchesSciPy(t *testing.T) {
	var ref struct {
		Cases []struct {
			B, C int
			P    float64
		} `json:"mcnemar_exact"`
	}
	readJSON(t, "scipy.json", &ref) // SciPy 1.10.1 binomtest(b, b+c, 0.5).pvalue
	if len(ref.Cases) < 10 {
		t.Fatalf("scipy.json has %d McNemar cases", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		got := McNemarExact(c.B, c.C)
		if math.Abs(got-c.P) > mcnemarRelTol*c.P {
			t.Errorf("McNemarExact(%d, %d) = %.17g; SciPy %.17g", c.B, c.C, got, c.P)
		}
	}
	if p := McNemarExact(0, 0); p != 1 {
		t.Errorf("McNemarExact(0, 0) = %g; want 1 (no discordant pairs)", p)
	}
}

// synthPaired returns labels and two prediction vectors of length n where
// exactly b samples are right only for A, c only for B, both means both
// right, the rest both wrong (shuffled with seed).
func synthPaired(n, b, c, both int, seed uint64) (labels, pa, pb []int) {
	labels = make([]int, n)
	pa = make([]int, n)
	pb = make([]int, n)
	r := rand.New(rand.NewPCG(seed, 1))
	perm := r.Perm(n)
	for j, i := range perm {
		labels[i] = r.IntN(3)
		wrong := (labels[i] + 1) % 3
		switch {
		case j < b:
			pa[i], pb[i] = labels[i], wrong
		case j < b+c:
			pa[i], pb[i] = wrong, labels[i]
		case j < b+c+both:
			pa[i], pb[i] = labels[i], labels[i]
		default:
			pa[i], pb[i] = wrong, wrong
		}
	}
	return
}

func TestCompareCounts(t *testing.T) {
	labels, pa, pb := synthPaired(1000, 80, 50, 700, 3)
	cmp, err := Compare("hand", "learned", labels, pa, pb, CompareConfig{Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	if cmp.OnlyA != 80 || cmp.OnlyB != 50 || cmp.N != 1000 {
		t.Fatalf("counts b=%d c=%d n=%d; want 80, 50, 1000", cmp.OnlyA, cmp.OnlyB, cmp.N)
	}
	if math.Abs(cmp.AccuracyA-0.78) > 1e-15 || math.Abs(cmp.AccuracyB-0.75) > 1e-15 || math.Abs(cmp.Diff-0.03) > 1e-15 {
		t.Errorf("accuracies %g %g diff %g; want 0.78 0.75 0.03", cmp.AccuracyA, cmp.AccuracyB, cmp.Diff)
	}
	if cmp.PValue != McNemarExact(80, 50) {
		t.Errorf("p = %g; want McNemarExact(80,50) = %g", cmp.PValue, McNemarExact(80, 50))
	}
	if cmp.DiffCI.Lo > cmp.Diff || cmp.DiffCI.Hi < cmp.Diff {
		t.Errorf("bootstrap interval %v does not contain the observed difference %g", cmp.DiffCI, cmp.Diff)
	}
}

// TestBootstrapWidthMatchesNormalTheory checks the bootstrap interval against
// the large-sample variance of a paired difference of proportions (the
// variance behind the Wald interval for matched pairs, e.g. Agresti,
// Categorical Data Analysis, 2nd ed., §10.1):
//
//	Var(p̂A − p̂B) = [(b+c)/n − ((b−c)/n)²] / n.
//
// With n = 1000 the sampling distribution is close to normal, so the 95%
// percentile interval should be ≈ 2·1.96·SE wide. Tolerance 10%: the 2.5% and
// 97.5% quantiles of 2000 resamples each carry ~5% relative noise.
func TestBootstrapWidthMatchesNormalTheory(t *testing.T) {
	n, b, c := 1000, 80, 50
	labels, pa, pb := synthPaired(n, b, c, 700, 11)
	cmp, err := Compare("a", "b", labels, pa, pb, CompareConfig{Seed: 42})
	if err != nil {
		t.Fatal(err)
	}
	nf := float64(n)
	se := math.Sqrt((float64(b+c)/nf - math.Pow(float64(b-c)/nf, 2)) / nf)
	want := 2 * 1.959963984540054 * se
	got := cmp.DiffCI.Hi - cmp.DiffCI.Lo
	if math.Abs(got/want-1) > 0.10 {
		t.Errorf("bootstrap 95%% width %.5f; normal theory %.5f (SE %.5f)", got, want, se)
	}
	mid := (cmp.DiffCI.Hi + cmp.DiffCI.Lo) / 2
	if math.Abs(mid-cmp.Diff) > 0.25*se {
		t.Errorf("bootstrap interval %v centred at %.5f; observed difference %.5f", cmp.DiffCI, mid, cmp.Diff)
	}
}

func TestBootstrapSeeded(t *testing.T) {
	labels, pa, pb := synthPaired(500, 40, 30, 300, 5)
	a, _ := Compare("a", "b", labels, pa, pb, CompareConfig{Seed: 1})
	b, _ := Compare("a", "b", labels, pa, pb, CompareConfig{Seed: 1})
	if a.DiffCI != b.DiffCI {
		t.Errorf("same seed gave %v and %v", a.DiffCI, b.DiffCI)
	}
	// The interval ends sit on a 1/n grid and may coincide across seeds, so
	// compare the resample sequences themselves.
	d := []int8{1, 0, 0, -1, 1, 0, 1, 0, -1, 0}
	s1 := bootstrapDiffs(d, CompareConfig{Resamples: 200, Seed: 1})
	s2 := bootstrapDiffs(d, CompareConfig{Resamples: 200, Seed: 2})
	same := true
	for i := range s1 {
		same = same && s1[i] == s2[i]
	}
	if same {
		t.Error("seeds 1 and 2 drew the same resamples; the seed is not used")
	}
}

func TestCompareIdentical(t *testing.T) {
	labels, pa, _ := synthPaired(200, 30, 0, 100, 9)
	cmp, err := Compare("x", "x", labels, pa, pa, CompareConfig{})
	if err != nil {
		t.Fatal(err)
	}
	if cmp.PValue != 1 || cmp.Diff != 0 || cmp.DiffCI.Lo != 0 || cmp.DiffCI.Hi != 0 {
		t.Errorf("identical predictions: p=%g diff=%g ci=%v; want 1, 0, [0,0]", cmp.PValue, cmp.Diff, cmp.DiffCI)
	}
}

func TestCompareErrors(t *testing.T) {
	if _, err := Compare("a", "b", []int{1, 2}, []int{1}, []int{1, 2}, CompareConfig{}); err == nil {
		t.Error("length mismatch accepted")
	}
	if _, err := Compare("a", "b", nil, nil, nil, CompareConfig{}); err == nil {
		t.Error("empty input accepted")
	}
	if _, err := Compare("a", "b", []int{1}, []int{1}, []int{1}, CompareConfig{Resamples: 5}); err == nil {
		t.Error("5 resamples accepted")
	}
}
