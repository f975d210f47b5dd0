package pipeline

import (
	"fmt"
	"sync/atomic"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
)

// Perturb chooses the perturbation (and its noise seed) applied to test
// image i before it is classified.
type Perturb func(i int) (p datasets.Perturbation, seed uint64)

// Accuracy returns the fraction of the images of s that m classifies as
// labelled, each image first altered by perturb(i) when perturb is not nil.
// Work is spread over workers goroutines; progress (nil is silent) is
// reported from the calling goroutine. It is the quick score behind
// "striate train"; package eval has the full metrics and intervals.
func Accuracy(m *Model, s *datasets.Set, perturb Perturb, workers int, progress learn.Progress) (float64, error) {
	if err := checkSet(s, "test set"); err != nil {
		return 0, err
	}
	if len(s.Classes) != m.NumClasses() {
		return 0, fmt.Errorf("pipeline: test set %q has %d classes; the model has %d", s.Name, len(s.Classes), m.NumClasses())
	}
	var correct atomic.Int64
	k := m.NumClasses()
	m.plan.eachImage(s, nil, perturb, workers, progress, "scoring", &m.scratch, func(i int, in []float32, w *work) {
		if len(w.score) != k {
			w.score = make([]float32, k)
		}
		if argmax(m.classify(w.score, in, w)) == s.Labels[i] {
			correct.Add(1)
		}
	})
	return float64(correct.Load()) / float64(s.N), nil
}
