package eval

import (
	"fmt"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
	"github.com/striate/striate/v1layer"
)

// This file holds the steps the commands and MainJob run on a fitted
// pipeline.Model; everything else in the package needs only a Predictor.

// PredictScore predicts every image of d with p and scores the predictions
// (Score with the default MetricsConfig).
func PredictScore(p Predictor, d *Data, run RunOptions) ([][]float32, *Metrics, error) {
	probs, err := Predict(p, d.Images, d.H, d.W, run)
	if err != nil {
		return nil, nil, err
	}
	met, err := Score(d.Labels, probs, d.Classes, MetricsConfig{})
	if err != nil {
		return nil, nil, err
	}
	return probs, met, nil
}

// ModelSpeed measures m's feature-extraction and prediction speed on imgs
// (MeasureSpeed, with workers goroutines) and the size of its model file.
func ModelSpeed(m *pipeline.Model, imgs [][]float32, h, w, workers int) (*Speed, error) {
	extract := func(b [][]float32, h, w, workers int) error {
		_, err := m.ExtractFloats(b, h, w, workers)
		return err
	}
	sp, err := MeasureSpeed(m, extract, imgs, h, w, SpeedConfig{Workers: workers})
	if err != nil {
		return nil, err
	}
	if sp.ModelBytes, err = ModelSize(m.Save); err != nil {
		return nil, err
	}
	return sp, nil
}

// FrontInvariance probes the front end of m (rebuilt from its saved
// configuration) with drifting gratings (Invariance with the default
// InvarianceConfig) and returns the result under name together with the
// front end's kernels, for the report's mosaic.
func FrontInvariance(name string, m *pipeline.Model) (InvarianceResult, *v1layer.Bank, error) {
	fe, err := v1layer.New(m.Config().Front)
	if err != nil {
		return InvarianceResult{}, nil, err
	}
	rows, err := Invariance(fe.Apply, InvarianceConfig{})
	if err != nil {
		return InvarianceResult{}, nil, err
	}
	return InvarianceResult{Model: name, Channels: fe.Channels(), Rows: rows}, &v1layer.Bank{Kernels: fe.Kernels()}, nil
}

// ExtractRange returns the feature vectors of images [lo, hi) of s, row
// after row (hi−lo rows of m.FeatureLen() values), extracting batch images
// per call with workers goroutines; p (may be nil) sees the rows done.
func ExtractRange(m *pipeline.Model, s *datasets.Set, lo, hi, batch, workers int, p Progress) ([]float32, error) {
	if lo < 0 || hi > s.N || lo > hi || batch < 1 {
		return nil, fmt.Errorf("eval: ExtractRange of images %d-%d of %d in batches of %d; want 0 ≤ lo ≤ hi ≤ N and batch ≥ 1", lo, hi, s.N, batch)
	}
	h, w := s.H, s.W
	feats := make([]float32, 0, (hi-lo)*m.FeatureLen())
	buf := make([]float32, batch*h*w)
	imgs := make([][]float32, 0, batch)
	for b := lo; b < hi; b += batch {
		e := min(b+batch, hi)
		imgs = imgs[:0]
		for j := b; j < e; j++ {
			k := j - b
			imgs = append(imgs, s.Float(buf[k*h*w:(k+1)*h*w], j))
		}
		rows, err := m.ExtractFloats(imgs, h, w, workers)
		if err != nil {
			return nil, err
		}
		for _, r := range rows {
			feats = append(feats, r...)
		}
		if p != nil {
			p.Step(e-lo, hi-lo, "extract")
		}
	}
	return feats, nil
}
