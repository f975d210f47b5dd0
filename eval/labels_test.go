package eval

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"
)

// TestLabelEfficiencyApproachesBayes fits nearest-centroid classifiers on
// growing class-balanced subsets of two Gaussian classes whose means differ
// by Δ = μ√2 (unit covariance). With the true means the nearest-mean rule
// is Bayes-optimal with accuracy Φ(Δ/2) (e.g. Duda, Hart & Stork, Pattern
// Classification, §2.6); with estimated means it is worse and converges to
// Φ(Δ/2) as the labels grow. At 500 per class the estimated-mean penalty is
// below 0.5% here; the test set has 4000 images, so the 99.9% Wilson
// interval (±2.5%) decides.
func TestLabelEfficiencyApproachesBayes(t *testing.T) {
	const mu, pixels = 1.5, 8
	train := gaussData(600, 2, pixels, mu, 1)
	test := gaussData(2000, 2, pixels, mu, 2)
	fit := func(idx []int) (Predictor, error) { return fitCentroids(train, idx), nil }
	curve, err := LabelEfficiency("centroid", fit, train.Labels, test,
		LabelConfig{PerClass: []int{500, 1, 5}, Seed: 3, Confidence: 0.999})
	if err != nil {
		t.Fatal(err)
	}
	if len(curve.Points) != 3 {
		t.Fatalf("%d points; want 3", len(curve.Points))
	}
	var sizes []int
	for _, p := range curve.Points {
		sizes = append(sizes, p.PerClass)
		if p.NTrain != 2*p.PerClass {
			t.Errorf("%d per class trained on %d images; want %d", p.PerClass, p.NTrain, 2*p.PerClass)
		}
	}
	if !slices.Equal(sizes, []int{1, 5, 500}) {
		t.Errorf("sizes %v; want increasing 1, 5, 500", sizes)
	}
	bayes := distuv.UnitNormal.CDF(mu * math.Sqrt2 / 2)
	last := curve.Points[2]
	if bayes < last.CI.Lo || bayes > last.CI.Hi+0.005 {
		t.Errorf("500/class accuracy %.4f %v; Bayes limit Φ(Δ/2) = %.4f", last.Accuracy, last.CI, bayes)
	}
	if first := curve.Points[0]; first.Accuracy >= last.Accuracy {
		t.Errorf("1 label/class accuracy %.4f not below 500/class %.4f", first.Accuracy, last.Accuracy)
	}
}

func TestLabelEfficiencyRepeatsAndErrors(t *testing.T) {
	train := gaussData(50, 3, 4, 2, 1)
	test := gaussData(50, 3, 4, 2, 2)
	var calls [][]int
	fit := func(idx []int) (Predictor, error) {
		calls = append(calls, idx)
		return fitCentroids(train, idx), nil
	}
	curve, err := LabelEfficiency("c", fit, train.Labels, test, LabelConfig{PerClass: []int{2, 4}, Repeats: 2, Seed: 10})
	if err != nil {
		t.Fatal(err)
	}
	if len(curve.Points) != 4 || curve.Points[1].Seed != 11 || curve.Points[1].Repeat != 1 {
		t.Errorf("points %+v; want 2 sizes × 2 repeats with seeds 10, 11", curve.Points)
	}
	// datasets.PerClass subsets are nested for one seed: calls 0 (2/class,
	// seed 10) ⊂ 2 (4/class, seed 10).
	for _, i := range calls[0] {
		if !slices.Contains(calls[2], i) {
			t.Errorf("subset %v not inside %v", calls[0], calls[2])
			break
		}
	}
	if _, err := LabelEfficiency("c", fit, train.Labels, test, LabelConfig{PerClass: []int{0}}); err == nil {
		t.Error("0 labels per class accepted")
	}
	if _, err := LabelEfficiency("c", fit, []int{0, 7}, test, LabelConfig{}); err == nil {
		t.Error("training label 7 with 3 classes accepted")
	}
}
