package eval

import (
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
