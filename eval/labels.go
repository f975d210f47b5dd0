package eval

import (
	"fmt"
	"slices"

	"github.com/striate/striate/datasets"
)

// FitFunc fits a recognizer on the training samples trainIdx (indices into
// the caller's training set) and returns it. The label-efficiency sweep
// calls it once per point, so eval needs no knowledge of the pipeline.
type FitFunc func(trainIdx []int) (Predictor, error)

// LabelConfig sets up a label-efficiency sweep. The zero value means the
// defaults beside each field.
type LabelConfig struct {
	PerClass   []int  // labelled training images per class; nil means {5, 10, 20, 50, 100}
	Repeats    int    // subsets drawn per size, with seeds Seed, Seed+1, ...; 0 means 1
	Seed       uint64 // subset seed (datasets.PerClass: subsets are nested across sizes)
	Confidence float64
	Run        RunOptions // for the test predictions; Run.Progress counts fits
}

// LabelPoint is the test accuracy after training on PerClass labels per
// class (NTrain images in all; fewer than PerClass·classes when a class runs
// short).
type LabelPoint struct {
	PerClass int      `json:"per_class"`
	NTrain   int      `json:"n_train"`
	Repeat   int      `json:"repeat"`
	Seed     uint64   `json:"seed"`
	Accuracy float64  `json:"accuracy"`
	CI       Interval `json:"accuracy_ci"`
}

// LabelCurve is one model family's label-efficiency curve.
type LabelCurve struct {
	Model  string       `json:"model"`
	Data   string       `json:"data"`
	Points []LabelPoint `json:"points"`
}

// LabelEfficiency draws, for each size in cfg.PerClass and each repeat, a
// seeded class-balanced subset of trainLabels (datasets.PerClass), fits a
// recognizer on it with fit and scores it on test. Sizes are visited in
// increasing order.
func LabelEfficiency(model string, fit FitFunc, trainLabels []int, test *Data, cfg LabelConfig) (*LabelCurve, error) {
	if err := test.Validate(); err != nil {
		return nil, err
	}
	if err := checkLabels(trainLabels, len(test.Classes)); err != nil {
		return nil, fmt.Errorf("eval: label efficiency training labels: %w", err)
	}
	sizes := slices.Clone(cfg.PerClass)
	if sizes == nil {
		sizes = []int{5, 10, 20, 50, 100}
	}
	slices.Sort(sizes)
	if len(sizes) == 0 || sizes[0] < 1 {
		return nil, fmt.Errorf("eval: label-efficiency sizes %v; want positive labels-per-class counts", cfg.PerClass)
	}
	reps := cfg.Repeats
	if reps == 0 {
		reps = 1
	}
	if reps < 0 {
		return nil, fmt.Errorf("eval: %d label-efficiency repeats; want ≥ 1", reps)
	}
	conf, err := confidenceLevel(cfg.Confidence)
	if err != nil {
		return nil, err
	}
	run := cfg.Run
	prog := run.Progress
	run.Progress = nil
	out := &LabelCurve{Model: model, Data: test.Name}
	total, done := len(sizes)*reps, 0
	for _, k := range sizes {
		for r := range reps {
			seed := cfg.Seed + uint64(r)
			idx := datasets.PerClass(trainLabels, k, seed)
			p, err := fit(idx)
			if err != nil {
				return nil, fmt.Errorf("eval: label efficiency %s, %d per class: %w", model, k, err)
			}
			if p.NumClasses() != len(test.Classes) {
				return nil, fmt.Errorf("eval: label efficiency %s, %d per class: model predicts %d classes, data has %d", model, k, p.NumClasses(), len(test.Classes))
			}
			probs, err := Predict(p, test.Images, test.H, test.W, run)
			if err != nil {
				return nil, fmt.Errorf("eval: label efficiency %s, %d per class: %w", model, k, err)
			}
			correct := 0
			for i, c := range Classify(probs) {
				if c == test.Labels[i] {
					correct++
				}
			}
			n := len(test.Labels)
			out.Points = append(out.Points, LabelPoint{PerClass: k, NTrain: len(idx), Repeat: r, Seed: seed,
				Accuracy: float64(correct) / float64(n), CI: Wilson(correct, n, conf)})
			done++
			if prog != nil {
				prog.Step(done, total, fmt.Sprintf("%s: %d labels/class", model, k))
			}
		}
	}
	return out, nil
}
