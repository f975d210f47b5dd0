package pipeline

import (
	"fmt"
	"sync/atomic"
	"time"

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
	var correct, done atomic.Int64
	fin := make(chan struct{})
	go func() {
		defer close(fin)
		type buf struct {
			w   *work
			px  []float32
			pb  []float32
			out []float32
		}
		parallelFor(s.N, workers,
			func() *buf { return &buf{w: m.scratch.Get().(*work), out: make([]float32, m.NumClasses())} },
			func(b *buf) { m.scratch.Put(b.w) },
			func(i int, b *buf) {
				b.px = s.Float(b.px, i)
				img := b.px
				if perturb != nil {
					p, seed := perturb(i)
					if cap(b.pb) < len(img) {
						b.pb = make([]float32, len(img))
					}
					b.pb = b.pb[:len(img)]
					p.Apply(b.pb, img, s.H, s.W, seed)
					img = b.pb
				}
				b.out = m.classify(b.out, m.prepare(b.w, img, s.H, s.W), b.w)
				if argmax(b.out) == s.Labels[i] {
					correct.Add(1)
				}
				done.Add(1)
			})
	}()
	if progress != nil {
		tick := time.NewTicker(250 * time.Millisecond)
		defer tick.Stop()
	loop:
		for {
			select {
			case <-fin:
				break loop
			case <-tick.C:
				progress.Step(int(done.Load()), s.N, "scoring")
			}
		}
		progress.Step(s.N, s.N, "scoring")
	}
	<-fin
	return float64(correct.Load()) / float64(s.N), nil
}
