package eval

import (
	"fmt"
	"math"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
)

// Predictor is what eval needs from a fitted pipeline: the number of classes
// and class probabilities for a batch of grey images. Each image is h×w
// row-major float32 in [0,1]; the result holds one probability vector of
// length NumClasses per image. pipeline.Model satisfies it; so can any other
// recognizer, which is what lets two pipelines be compared on the same data.
type Predictor interface {
	NumClasses() int
	PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error)
}

// Progress receives a step count and a short message during long work. A nil
// Progress is silent. It is learn.Progress, so the command's progress bars
// serve every package.
type Progress = learn.Progress

// Data is a labelled set of grey images ready for a Predictor: image i is
// Images[i], H×W row-major float32 in [0,1], with class Labels[i] in
// [0, len(Classes)). Name and Source describe it in reports.
type Data struct {
	Name    string
	Source  string
	H, W    int
	Images  [][]float32
	Labels  []int
	Classes []string
}

// Validate checks sizes and labels.
func (d *Data) Validate() error {
	if d.H <= 0 || d.W <= 0 {
		return fmt.Errorf("eval: data %q has image size %d×%d; want positive H and W", d.Name, d.H, d.W)
	}
	if len(d.Images) == 0 {
		return fmt.Errorf("eval: data %q has no images", d.Name)
	}
	if len(d.Labels) != len(d.Images) {
		return fmt.Errorf("eval: data %q has %d labels for %d images; want one label per image", d.Name, len(d.Labels), len(d.Images))
	}
	if len(d.Classes) < 2 {
		return fmt.Errorf("eval: data %q names %d classes; want at least 2", d.Name, len(d.Classes))
	}
	for i, im := range d.Images {
		if len(im) != d.H*d.W {
			return fmt.Errorf("eval: data %q image %d has %d pixels; want %d (%d×%d)", d.Name, i, len(im), d.H*d.W, d.H, d.W)
		}
	}
	return checkLabels(d.Labels, len(d.Classes))
}

func checkLabels(labels []int, k int) error {
	for i, l := range labels {
		if l < 0 || l >= k {
			return fmt.Errorf("eval: label %d of sample %d is outside [0,%d)", l, i, k)
		}
	}
	return nil
}

// Subset returns the images and labels at idx (sharing the pixel slices).
func (d *Data) Subset(idx []int) *Data {
	s := &Data{Name: d.Name, Source: d.Source, H: d.H, W: d.W, Classes: d.Classes,
		Images: make([][]float32, len(idx)), Labels: make([]int, len(idx))}
	for j, i := range idx {
		s.Images[j], s.Labels[j] = d.Images[i], d.Labels[i]
	}
	return s
}

// PredictionError reports a probability vector a Predictor returned that is
// not a probability vector: wrong length, not finite, negative, or a sum far
// from 1.
type PredictionError struct {
	Index  int    // image index within the call
	Reason string // what was wrong
}

func (e *PredictionError) Error() string {
	return fmt.Sprintf("eval: prediction for image %d: %s", e.Index, e.Reason)
}

// sumTol is how far a probability vector's sum may stray from 1. float32
// softmax outputs sum to 1 within a few ulps times the class count; 1e-3
// leaves room for 1000 classes while still catching unnormalised scores.
const sumTol = 1e-3

func checkProbs(probs [][]float32, k, offset int) error {
	for i, p := range probs {
		if len(p) != k {
			return &PredictionError{offset + i, fmt.Sprintf("%d probabilities; want %d (NumClasses)", len(p), k)}
		}
		var s float64
		for c, v := range p {
			f := float64(v)
			if math.IsNaN(f) || math.IsInf(f, 0) || f < 0 {
				return &PredictionError{offset + i, fmt.Sprintf("probability of class %d is %v; want a finite value ≥ 0", c, v)}
			}
			s += f
		}
		if math.Abs(s-1) > sumTol {
			return &PredictionError{offset + i, fmt.Sprintf("probabilities sum to %.6g; want 1 within %g", s, sumTol)}
		}
	}
	return nil
}

// RunOptions control batch prediction.
type RunOptions struct {
	Workers  int      // passed to PredictBatch; 0 lets the predictor choose
	Batch    int      // images per PredictBatch call; 0 means 256
	Progress Progress // nil is silent
}

func (o RunOptions) batch() int {
	if o.Batch <= 0 {
		return 256
	}
	return o.Batch
}

// Predict runs p over imgs in batches and returns the checked probability
// vectors, one per image.
func Predict(p Predictor, imgs [][]float32, h, w int, opts RunOptions) ([][]float32, error) {
	k := p.NumClasses()
	if k < 1 {
		return nil, fmt.Errorf("eval: predictor reports %d classes; want at least 1", k)
	}
	out := make([][]float32, 0, len(imgs))
	bs := opts.batch()
	for lo := 0; lo < len(imgs); lo += bs {
		hi := min(lo+bs, len(imgs))
		got, err := p.PredictBatch(imgs[lo:hi], h, w, opts.Workers)
		if err != nil {
			return nil, fmt.Errorf("eval: predicting images %d-%d: %w", lo, hi-1, err)
		}
		if len(got) != hi-lo {
			return nil, fmt.Errorf("eval: predictor returned %d results for %d images", len(got), hi-lo)
		}
		if err := checkProbs(got, k, lo); err != nil {
			return nil, err
		}
		out = append(out, got...)
		if opts.Progress != nil {
			opts.Progress.Step(hi, len(imgs), "predict")
		}
	}
	return out, nil
}

// Argmax returns the index of the largest value, the lowest index on ties
// (as numpy.argmax does).
func Argmax(p []float32) int {
	best := 0
	for i, v := range p {
		if v > p[best] {
			best = i
		}
	}
	return best
}

// Classify returns Argmax of each probability vector.
func Classify(probs [][]float32) []int {
	out := make([]int, len(probs))
	for i, p := range probs {
		out[i] = Argmax(p)
	}
	return out
}

// FromSet converts a datasets.Set to Data (pixel/255 as float32; one
// allocation for all images).
func FromSet(s *datasets.Set) *Data {
	n := s.H * s.W
	flat := make([]float32, s.N*n)
	d := &Data{Name: s.Name, Source: s.Source, H: s.H, W: s.W, Images: make([][]float32, s.N),
		Labels: append([]int(nil), s.Labels...), Classes: append([]string(nil), s.Classes...)}
	for i := range s.N {
		d.Images[i] = s.Float(flat[i*n:(i+1)*n:(i+1)*n], i)
	}
	return d
}
