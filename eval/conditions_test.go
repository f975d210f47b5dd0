package eval

import (
	"testing"

	"github.com/striate/striate/datasets"
)

func TestStandardConditions(t *testing.T) {
	for name, levels := range map[string]map[datasets.PerturbKind][]float64{"standard": StandardLevels, "quick": QuickLevels} {
		conds, err := StandardConditions(levels)
		if err != nil {
			t.Fatal(err)
		}
		kinds := map[string][]Condition{}
		for _, c := range conds {
			kinds[c.Kind] = append(kinds[c.Kind], c)
		}
		if len(kinds) != 6 {
			t.Errorf("%s: %d kinds; want the six datasets perturbations", name, len(kinds))
		}
		for k, cs := range kinds {
			clean := 0
			for i, c := range cs {
				if i > 0 && c.Level <= cs[i-1].Level {
					t.Errorf("%s %s: levels not increasing at %g", name, k, c.Level)
				}
				if c.P == nil {
					clean++
				} else if c.P.String() == "none" {
					t.Errorf("%s %s: level %g is an identity perturbation; want a nil (clean) condition", name, k, c.Level)
				}
			}
			if clean != 1 || len(cs) < 3 {
				t.Errorf("%s %s: %d levels with %d clean; want ≥ 3 levels with exactly one clean", name, k, len(cs), clean)
			}
		}
	}
	if _, err := PerturbationConditions(datasets.Noise, 2); err == nil {
		t.Error("noise σ 2 accepted")
	}
	if _, err := PerturbationConditions(datasets.None, 1); err == nil {
		t.Error("kind none accepted")
	}
}

// TestRobustnessWithDatasetsNoise repeats the normal-theory check with the
// datasets noise (clipped to [0,1]): at 0.5 ± 0.02 and σ ≤ 0.08, clipping
// needs a 6σ excursion and is negligible, so accuracy must again be
// Φ(δ√n/σ) within the 99.9% Wilson interval.
func TestRobustnessWithDatasetsNoise(t *testing.T) {
	const h, w, delta = 4, 4, 0.02
	test := twoLevelData(2000, h, w, delta)
	conds, err := PerturbationConditions(datasets.Noise, 0, 0.04, 0.08)
	if err != nil {
		t.Fatal(err)
	}
	rob, err := RobustnessSweep("mean", meanPredictor{0.5}, test, conds, RobustnessConfig{Seed: 4, Confidence: 0.999})
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range rob.Points[1:] {
		want := normalCDF(delta * 4 / p.Level)
		if want < p.CI.Lo || want > p.CI.Hi {
			t.Errorf("%s: accuracy %.4f %v; normal theory %.4f", p.Label, p.Accuracy, p.CI, want)
		}
	}
}
