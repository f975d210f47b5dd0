package eval

import (
	"encoding/json"
	"errors"
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// sklTol: scikit-learn and Score form the same ratios of integer counts in
// float64; they may round differently in the last bit.
const sklTol = 1e-12

func TestScoreMatchesSklearn(t *testing.T) {
	p := loadPredictions(t)
	var ref struct {
		Confusion [][]int                    `json:"confusion"`
		Report    map[string]json.RawMessage `json:"report"`
		LogLoss   float64                    `json:"log_loss"`
		TopK      map[string]float64         `json:"top_k"`
	}
	readJSON(t, "sklearn.json", &ref) // scikit-learn 1.2.1, see gen_reference.py
	m, err := Score(p.Labels, p.Probs, p.Classes, MetricsConfig{TopK: []int{1, 2, 3}})
	if err != nil {
		t.Fatal(err)
	}
	// confusion_matrix
	for i := range ref.Confusion {
		for j := range ref.Confusion[i] {
			if m.Confusion[i][j] != ref.Confusion[i][j] {
				t.Fatalf("confusion[%d][%d] = %d; scikit-learn %d", i, j, m.Confusion[i][j], ref.Confusion[i][j])
			}
		}
	}
	// classification_report, per class
	near := func(what string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > sklTol {
			t.Errorf("%s = %.17g; scikit-learn %.17g", what, got, want)
		}
	}
	row := func(name string) map[string]float64 {
		var r map[string]float64
		if err := json.Unmarshal(ref.Report[name], &r); err != nil {
			t.Fatalf("sklearn.json report %q: %v", name, err)
		}
		return r
	}
	for _, cs := range m.PerClass {
		r := row(cs.Class)
		near(cs.Class+" precision", cs.Precision, r["precision"])
		near(cs.Class+" recall", cs.Recall, r["recall"])
		near(cs.Class+" f1", cs.F1, r["f1-score"])
		if cs.Support != int(r["support"]) {
			t.Errorf("%s has %d test images; scikit-learn support %g", cs.Class, cs.Support, r["support"])
		}
	}
	// The fixture has a never-predicted class, so zero_division matters.
	if m.PerClass[5].Precision != 0 {
		t.Errorf("never-predicted class has precision %g; want 0", m.PerClass[5].Precision)
	}
	macro, weighted := row("macro avg"), row("weighted avg")
	near("macro precision", m.Macro.Precision, macro["precision"])
	near("macro recall", m.Macro.Recall, macro["recall"])
	near("macro f1", m.Macro.F1, macro["f1-score"])
	near("weighted precision", m.Weighted.Precision, weighted["precision"])
	near("weighted recall", m.Weighted.Recall, weighted["recall"])
	near("weighted f1", m.Weighted.F1, weighted["f1-score"])
	var acc float64
	if err := json.Unmarshal(ref.Report["accuracy"], &acc); err != nil {
		t.Fatal(err)
	}
	near("accuracy", m.Accuracy, acc)
	// log_loss: same float32 inputs upcast to float64; clip + renormalise +
	// mean of −ln; relative 1e-12 covers summation order.
	if math.Abs(m.LogLoss-ref.LogLoss) > 1e-12*ref.LogLoss {
		t.Errorf("log-loss %.17g; scikit-learn %.17g", m.LogLoss, ref.LogLoss)
	}
	// top_k_accuracy_score: ratios of counts.
	for _, tk := range m.TopK {
		want, ok := ref.TopK[strconv.Itoa(tk.K)]
		if !ok {
			t.Fatalf("top-%d missing from sklearn.json", tk.K)
		}
		near("top-k", tk.Accuracy, want)
	}
	if m.TopK[0].Accuracy != m.Accuracy {
		t.Errorf("top-1 %g differs from accuracy %g", m.TopK[0].Accuracy, m.Accuracy)
	}
}

// TestECEHandWorked works the Guo et al. (2017) definition by hand with the
// default 15 bins, bin m = (m/15, (m+1)/15]:
//
//	sample  probs        label  pred  conf  correct  bin (range)
//	1       [.90 .10]    0      0     .90   yes      13 (.8667, .9333]
//	2       [.95 .05]    1      0     .95   no       14 (.9333, 1]
//	3       [.62 .38]    0      0     .62   yes       9 (.6, .6667]
//	4       [.35 .65]    0      1     .65   no        9
//	5       [.88 .12]    0      0     .88   yes      13
//
//	bin 13: acc 1,   conf (.90+.88)/2 = .89  → 2/5 · .11  = .044
//	bin 14: acc 0,   conf .95               → 1/5 · .95  = .190
//	bin  9: acc 1/2, conf (.62+.65)/2 = .635 → 2/5 · .135 = .054
//	ECE = .044 + .190 + .054 = .288
//
// Tolerance 1e-6: the inputs are float32, each within 3e-8 of the decimals.
func TestECEHandWorked(t *testing.T) {
	probs := [][]float32{{.90, .10}, {.95, .05}, {.62, .38}, {.35, .65}, {.88, .12}}
	labels := []int{0, 1, 0, 0, 0}
	m, err := Score(labels, probs, []string{"a", "b"}, MetricsConfig{})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(m.ECE-0.288) > 1e-6 {
		t.Errorf("ECE = %.9f; hand-worked 0.288", m.ECE)
	}
	if len(m.Bins) != 15 {
		t.Fatalf("%d bins; want 15 (default)", len(m.Bins))
	}
	want := map[int]int{9: 2, 13: 2, 14: 1}
	for i, b := range m.Bins {
		if b.Count != want[i] {
			t.Errorf("bin %d (%.4f, %.4f] holds %d samples; want %d", i, b.Lo, b.Hi, b.Count, want[i])
		}
	}
	if math.Abs(m.Bins[9].Confidence-0.635) > 1e-6 || m.Bins[9].Accuracy != 0.5 {
		t.Errorf("bin 9 conf %g acc %g; want .635, .5", m.Bins[9].Confidence, m.Bins[9].Accuracy)
	}
}

// TestECECalibratedIsSmall: samples whose correctness is drawn with
// probability equal to their confidence are calibrated by construction, so
// the ECE is only sampling noise, about sqrt(2/π)·sqrt(p(1−p)/(n/15)) ≈ 0.003
// for n = 100 000; 0.01 leaves a 3× margin. Overconfident scores (correct
// with probability conf − 0.2) must give ECE ≈ 0.2.
func TestECECalibratedIsSmall(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	n := 100000
	build := func(shift float64) (labels []int, probs [][]float32) {
		for range n {
			conf := 0.5 + 0.5*r.Float64()
			label := 0
			if r.Float64() >= conf-shift {
				label = 1
			}
			labels = append(labels, label)
			probs = append(probs, []float32{float32(conf), float32(1 - conf)})
		}
		return
	}
	l, p := build(0)
	if ece, _ := Calibration(l, p, 15); ece > 0.01 {
		t.Errorf("calibrated scores: ECE %.4f; want < 0.01", ece)
	}
	l, p = build(0.2)
	if ece, _ := Calibration(l, p, 15); math.Abs(ece-0.2) > 0.01 {
		t.Errorf("overconfident by 0.2: ECE %.4f; want 0.2 ± 0.01", ece)
	}
}

func TestScoreRejectsBadInput(t *testing.T) {
	classes := []string{"a", "b"}
	_, err := Score([]int{0}, [][]float32{{0.7, 0.7}}, classes, MetricsConfig{})
	var pe *PredictionError
	if !errors.As(err, &pe) {
		t.Errorf("unnormalised probabilities: err %v; want *PredictionError", err)
	}
	if _, err := Score([]int{0}, [][]float32{{float32(math.NaN()), 1}}, classes, MetricsConfig{}); !errors.As(err, &pe) {
		t.Errorf("NaN probability: err %v; want *PredictionError", err)
	}
	if _, err := Score([]int{2}, [][]float32{{0.5, 0.5}}, classes, MetricsConfig{}); err == nil {
		t.Error("label 2 with 2 classes accepted")
	}
	if _, err := Score([]int{0}, [][]float32{{0.5, 0.5}}, classes, MetricsConfig{TopK: []int{3}}); err == nil {
		t.Error("top-3 with 2 classes accepted")
	}
	if _, err := Score(nil, nil, classes, MetricsConfig{}); err == nil {
		t.Error("empty input accepted")
	}
}

func TestLogLossClips(t *testing.T) {
	// A confident wrong answer costs −ln(1e-15) ≈ 34.54 nats, not +Inf
	// (scikit-learn 1.2's eps clipping).
	m, err := Score([]int{1}, [][]float32{{1, 0}}, []string{"a", "b"}, MetricsConfig{})
	if err != nil {
		t.Fatal(err)
	}
	want := -math.Log(1e-15 / (1 + 1e-15 - 1e-15))
	if math.Abs(m.LogLoss-want) > 1e-9 {
		t.Errorf("log-loss %g; want %g", m.LogLoss, want)
	}
}
