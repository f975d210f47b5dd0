package eval

import (
	"fmt"
)

// Perturber alters one image: it writes the perturbed h×w image src into
// dst, drawing any randomness from seed only. datasets.Perturbation
// satisfies it.
type Perturber interface {
	Apply(dst, src []float32, h, w int, seed uint64)
	String() string
}

// Condition is one point of a robustness sweep: a perturbation kind, its
// level in Unit, and the Perturber that applies it (nil means the clean
// images, used for level 0).
type Condition struct {
	Kind  string
	Unit  string
	Level float64
	P     Perturber
}

// RobustnessConfig sets up a robustness sweep. The zero value means the
// defaults beside each field.
type RobustnessConfig struct {
	// Seed fixes the perturbation noise. Image i under every condition gets
	// the seed mix(Seed, i), so two models swept with the same Seed see
	// exactly the same perturbed images and can be compared pair-wise.
	Seed       uint64
	Confidence float64 // Wilson interval level; 0 means 0.95
	Run        RunOptions
}

// RobustPoint is the accuracy under one condition.
type RobustPoint struct {
	Kind     string   `json:"kind"`
	Unit     string   `json:"unit"`
	Level    float64  `json:"level"`
	Label    string   `json:"label"` // the Perturber's String(), or "clean"
	N        int      `json:"n"`
	Correct  int      `json:"correct"`
	Accuracy float64  `json:"accuracy"`
	CI       Interval `json:"accuracy_ci"`
	Pred     []int    `json:"-"` // predicted class per test image
}

// Robustness is one model's robustness sweep.
type Robustness struct {
	Model  string        `json:"model"`
	Data   string        `json:"data"`
	Seed   uint64        `json:"seed"`
	Points []RobustPoint `json:"points"`
}

// Kinds returns the perturbation kinds in first-seen order.
func (r *Robustness) Kinds() []string {
	var out []string
	seen := map[string]bool{}
	for _, p := range r.Points {
		if !seen[p.Kind] {
			seen[p.Kind] = true
			out = append(out, p.Kind)
		}
	}
	return out
}

// Series returns the points of one kind, in sweep order.
func (r *Robustness) Series(kind string) []RobustPoint {
	var out []RobustPoint
	for _, p := range r.Points {
		if p.Kind == kind {
			out = append(out, p)
		}
	}
	return out
}

// mixSeed derives the seed of image i from the sweep seed (SplitMix64
// finaliser, Steele, Lea & Flood 2014), so that neighbouring images draw
// unrelated noise.
func mixSeed(seed uint64, i int) uint64 {
	z := seed + uint64(i+1)*0x9E3779B97F4A7C15
	z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9
	z = (z ^ (z >> 27)) * 0x94D049BB133111EB
	return z ^ (z >> 31)
}

// RobustnessSweep evaluates p, fitted on clean data, on test perturbed by
// each condition in turn and returns the accuracy of each. Conditions with a
// nil Perturber score the clean test set (predicted once and reused).
// Progress, if set, counts conditions.
func RobustnessSweep(model string, p Predictor, test *Data, conds []Condition, cfg RobustnessConfig) (*Robustness, error) {
	if err := test.Validate(); err != nil {
		return nil, err
	}
	if len(conds) == 0 {
		return nil, fmt.Errorf("eval: robustness sweep of %s with no conditions", model)
	}
	if err := checkClassCount(model, p, test.Name, len(test.Classes)); err != nil {
		return nil, err
	}
	conf, err := confidenceLevel(cfg.Confidence)
	if err != nil {
		return nil, err
	}
	n, hw := len(test.Images), test.H*test.W
	buf := make([]float32, n*hw)
	pert := make([][]float32, n)
	for i := range pert {
		pert[i] = buf[i*hw : (i+1)*hw : (i+1)*hw]
	}
	run := cfg.Run
	prog := run.Progress
	run.Progress = nil
	out := &Robustness{Model: model, Data: test.Name, Seed: cfg.Seed}
	var clean []int // predictions on the clean images, computed once
	for ci, c := range conds {
		label := "clean"
		var pred []int
		if c.P == nil && clean != nil {
			pred = clean
		} else {
			imgs := test.Images
			if c.P != nil {
				for i, src := range test.Images {
					c.P.Apply(pert[i], src, test.H, test.W, mixSeed(cfg.Seed, i))
				}
				imgs = pert
				label = c.P.String()
			}
			probs, err := Predict(p, imgs, test.H, test.W, run)
			if err != nil {
				return nil, fmt.Errorf("eval: robustness %s under %s: %w", model, label, err)
			}
			pred = Classify(probs)
			if c.P == nil {
				clean = pred
			}
		}
		correct := 0
		for i, l := range test.Labels {
			if pred[i] == l {
				correct++
			}
		}
		out.Points = append(out.Points, RobustPoint{Kind: c.Kind, Unit: c.Unit, Level: c.Level, Label: label,
			N: n, Correct: correct, Accuracy: float64(correct) / float64(n), CI: Wilson(correct, n, conf), Pred: pred})
		if prog != nil {
			prog.Step(ci+1, len(conds), label)
		}
	}
	return out, nil
}
