package eval

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestRobustnessMatchesNormalTheory sweeps Gaussian noise over constant
// images 0.5 ± δ classified by their mean against 0.5. The mean of n noisy
// pixels has standard deviation σ/√n, so the expected accuracy is the normal
// CDF Φ(δ√n/σ). Each measured accuracy must lie inside its own 99.9% Wilson
// interval's distance from the expected value (seeded, so the test is
// deterministic; the level only sets how unlucky a seed may be).
func TestRobustnessMatchesNormalTheory(t *testing.T) {
	const h, w, delta = 4, 4, 0.02
	test := twoLevelData(2000, h, w, delta)
	levels := []float64{0.04, 0.08, 0.16, 0.32}
	conds := []Condition{{Kind: "noise", Unit: "σ", Level: 0}}
	for _, s := range levels {
		conds = append(conds, Condition{Kind: "noise", Unit: "σ", Level: s, P: noiseP{s}})
	}
	rob, err := RobustnessSweep("mean", meanPredictor{0.5}, test, conds, RobustnessConfig{Seed: 9, Confidence: 0.999})
	if err != nil {
		t.Fatal(err)
	}
	if len(rob.Points) != 5 || rob.Points[0].Accuracy != 1 || rob.Points[0].Label != "clean" {
		t.Fatalf("clean point %+v; want accuracy 1", rob.Points[0])
	}
	for _, p := range rob.Points[1:] {
		want := distuv.UnitNormal.CDF(delta * math.Sqrt(h*w) / p.Level)
		if want < p.CI.Lo || want > p.CI.Hi {
			t.Errorf("σ=%g: accuracy %.4f %v; normal theory %.4f", p.Level, p.Accuracy, p.CI, want)
		}
	}
	if k := rob.Kinds(); len(k) != 1 || k[0] != "noise" || len(rob.Series("noise")) != 5 {
		t.Errorf("Kinds %v, series %d", k, len(rob.Series("noise")))
	}
}

// TestRobustnessPaired: two sweeps with the same seed see identical
// perturbed images, so identical models give identical predictions; a
// different seed changes them.
func TestRobustnessPaired(t *testing.T) {
	test := twoLevelData(400, 4, 4, 0.02)
	conds := []Condition{{Kind: "noise", Level: 0.2, P: noiseP{0.2}}}
	a, _ := RobustnessSweep("a", meanPredictor{0.5}, test, conds, RobustnessConfig{Seed: 5})
	b, _ := RobustnessSweep("b", meanPredictor{0.5}, test, conds, RobustnessConfig{Seed: 5})
	c, _ := RobustnessSweep("c", meanPredictor{0.5}, test, conds, RobustnessConfig{Seed: 6})
	same := func(x, y []int) bool {
		for i := range x {
			if x[i] != y[i] {
				return false
			}
		}
		return true
	}
	if !same(a.Points[0].Pred, b.Points[0].Pred) {
		t.Error("same seed, same model: predictions differ")
	}
	if same(a.Points[0].Pred, c.Points[0].Pred) {
		t.Error("different seeds gave identical noisy predictions")
	}
}

func TestRobustnessErrors(t *testing.T) {
	test := twoLevelData(10, 2, 2, 0.1)
	if _, err := RobustnessSweep("m", meanPredictor{0.5}, test, nil, RobustnessConfig{}); err == nil {
		t.Error("no conditions accepted")
	}
	test.Classes = append(test.Classes, "third")
	if _, err := RobustnessSweep("m", meanPredictor{0.5}, test, []Condition{{Kind: "clean"}}, RobustnessConfig{}); err == nil {
		t.Error("class-count mismatch accepted")
	}
}

func normalCDF(x float64) float64 { return distuv.UnitNormal.CDF(x) }

func TestCompareRobustness(t *testing.T) {
	test := twoLevelData(600, 4, 4, 0.02)
	conds := []Condition{{Kind: "noise", Level: 0}, {Kind: "noise", Level: 0.1, P: noiseP{0.1}}, {Kind: "noise", Level: 0.3, P: noiseP{0.3}}}
	a, err := RobustnessSweep("a", meanPredictor{0.5}, test, conds, RobustnessConfig{Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	b, err := RobustnessSweep("b", meanPredictor{0.51}, test, conds, RobustnessConfig{Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	cs, err := CompareRobustness(a, b, test.Labels, CompareConfig{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if len(cs) != 2 || cs[0].Condition != "noise-0.1" || cs[1].Condition != "noise-0.3" {
		t.Fatalf("comparisons %+v; want the two noisy conditions", cs)
	}
	for i, c := range cs {
		p := a.Points[i+1]
		if c.AccuracyA != p.Accuracy || c.AccuracyB != b.Points[i+1].Accuracy {
			t.Errorf("%s: accuracies %g %g; sweeps say %g %g", c.Condition, c.AccuracyA, c.AccuracyB, p.Accuracy, b.Points[i+1].Accuracy)
		}
	}
	other, _ := RobustnessSweep("c", meanPredictor{0.5}, test, conds, RobustnessConfig{Seed: 3})
	if _, err := CompareRobustness(a, other, test.Labels, CompareConfig{}); err == nil {
		t.Error("sweeps with different seeds compared pair-wise")
	}
}
