package eval

import (
	"fmt"
	"slices"

	"github.com/striate/striate/datasets"
)

// perturbUnits names the unit of each datasets perturbation level.
var perturbUnits = map[datasets.PerturbKind]string{
	datasets.Noise:    "σ, fraction of full scale",
	datasets.Shift:    "px",
	datasets.Rotate:   "degrees",
	datasets.Scale:    "factor",
	datasets.Blur:     "σ, px",
	datasets.Contrast: "factor",
}

// identityLevel is the level at which each kind leaves the image unchanged.
func identityLevel(k datasets.PerturbKind) float64 {
	if k == datasets.Scale || k == datasets.Contrast {
		return 1
	}
	return 0
}

// PerturbationConditions returns one Condition per level of kind (a
// datasets perturbation; shifts go east), sorted by level. The identity
// level (0, or 1 for scale and contrast) becomes a clean condition.
func PerturbationConditions(kind datasets.PerturbKind, levels ...float64) ([]Condition, error) {
	unit, ok := perturbUnits[kind]
	if !ok {
		return nil, fmt.Errorf("eval: perturbation kind %v has no robustness sweep; use noise, shift, rot, scale, blur or contrast", kind)
	}
	ls := slices.Clone(levels)
	slices.Sort(ls)
	ls = slices.Compact(ls)
	out := make([]Condition, 0, len(ls))
	for _, l := range ls {
		c := Condition{Kind: kind.String(), Unit: unit, Level: l}
		if l != identityLevel(kind) {
			p := datasets.Perturbation{Kind: kind, Level: l}
			if err := p.Validate(); err != nil {
				return nil, fmt.Errorf("eval: robustness level: %w", err)
			}
			c.P = p
		}
		out = append(out, c)
	}
	return out, nil
}

// StandardLevels are the default robustness levels for 28×28 images, each
// list including the identity so every curve starts at the clean accuracy.
// Quick runs use QuickLevels.
var (
	StandardLevels = map[datasets.PerturbKind][]float64{
		datasets.Noise:    {0, 0.1, 0.2, 0.3, 0.5},
		datasets.Shift:    {0, 1, 2, 3, 4},
		datasets.Rotate:   {0, 10, 20, 30, 45},
		datasets.Scale:    {0.8, 0.9, 1, 1.1, 1.25},
		datasets.Blur:     {0, 0.5, 1, 1.5, 2},
		datasets.Contrast: {0.1, 0.25, 0.5, 1},
	}
	QuickLevels = map[datasets.PerturbKind][]float64{
		datasets.Noise:    {0, 0.2, 0.4},
		datasets.Shift:    {0, 2, 4},
		datasets.Rotate:   {0, 15, 30},
		datasets.Scale:    {0.8, 1, 1.25},
		datasets.Blur:     {0, 1, 2},
		datasets.Contrast: {0.25, 0.5, 1},
	}
)

// sweepKinds is the order of kinds in a standard sweep.
var sweepKinds = []datasets.PerturbKind{datasets.Noise, datasets.Blur, datasets.Contrast, datasets.Shift, datasets.Rotate, datasets.Scale}

// StandardConditions returns the conditions of a full robustness sweep over
// levels (StandardLevels or QuickLevels, or the caller's own map), in the
// order noise, blur, contrast, shift, rotation, scale.
func StandardConditions(levels map[datasets.PerturbKind][]float64) ([]Condition, error) {
	var out []Condition
	for _, k := range sweepKinds {
		ls, ok := levels[k]
		if !ok {
			continue
		}
		cs, err := PerturbationConditions(k, ls...)
		if err != nil {
			return nil, err
		}
		out = append(out, cs...)
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("eval: no robustness levels given")
	}
	return out, nil
}
