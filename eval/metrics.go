package eval

import (
	"fmt"
	"math"
	"slices"
)

// MetricsConfig sets up Score. The zero value means the defaults beside each
// field.
type MetricsConfig struct {
	Confidence float64 // Wilson interval level; 0 means 0.95
	TopK       []int   // k values for top-k accuracy; nil means {1, 2, 3, 5} (those ≤ classes)
	Bins       int     // calibration bins; 0 means 15 (Guo et al. 2017)
	// Eps clips probabilities to [Eps, 1−Eps] before the logarithm in the
	// log-loss; 0 means 1e-15, scikit-learn 1.2's log_loss default.
	Eps float64
}

func (c MetricsConfig) withDefaults(k int) MetricsConfig {
	if c.Confidence == 0 {
		c.Confidence = 0.95
	}
	if c.TopK == nil {
		for _, t := range []int{1, 2, 3, 5} {
			if t <= k {
				c.TopK = append(c.TopK, t)
			}
		}
	}
	if c.Bins == 0 {
		c.Bins = 15
	}
	if c.Eps == 0 {
		c.Eps = 1e-15
	}
	return c
}

// ClassScore is precision, recall and F1 of one class: precision =
// TP/(TP+FP), recall = TP/(TP+FN), F1 = 2PR/(P+R), each 0 when its
// denominator is 0 (the textbook definitions, checked against scikit-learn's
// classification_report with zero_division=0, see testdata/eval).
type ClassScore struct {
	Class     string  `json:"class"`
	Precision float64 `json:"precision"`
	Recall    float64 `json:"recall"`
	F1        float64 `json:"f1"`
	Support   int     `json:"images"` // test images of this class
}

// Average is a mean of per-class scores.
type Average struct {
	Precision float64 `json:"precision"`
	Recall    float64 `json:"recall"`
	F1        float64 `json:"f1"`
}

// TopK is the fraction of samples whose true class is among the K most
// probable classes.
type TopK struct {
	K        int     `json:"k"`
	Accuracy float64 `json:"accuracy"`
}

// Metrics are the scores of one classifier on one labelled test set.
type Metrics struct {
	N         int          `json:"n"`
	Correct   int          `json:"correct"`
	Accuracy  float64      `json:"accuracy"`
	CI        Interval     `json:"accuracy_ci"` // Wilson score interval
	Classes   []string     `json:"classes"`
	Confusion [][]int      `json:"confusion"` // Confusion[true][predicted] counts
	PerClass  []ClassScore `json:"per_class"`
	Macro     Average      `json:"class_mean"`          // unweighted mean over classes
	Weighted  Average      `json:"image_weighted_mean"` // mean weighted by each class's test images
	TopK      []TopK       `json:"top_k"`
	LogLoss   float64      `json:"log_loss"` // mean −ln p(true class), nats
	ECE       float64      `json:"ece"`      // expected calibration error
	Bins      []Bin        `json:"reliability"`
}

// Score computes the metrics of probability vectors probs against the true
// classes labels. classes names the classes; its length is the class count.
// Predicted class = Argmax (lowest index on ties).
//
// Definitions (sources beside each): accuracy with a Wilson interval (see
// Wilson); precision/recall/F1 per class, their class mean and their mean
// weighted by each class's test images;
// top-k accuracy; log-loss −(1/N) Σ ln p̂ᵢ(yᵢ) with each row clipped to
// [Eps, 1−Eps] and renormalised (scikit-learn 1.2 log_loss); expected
// calibration error over equal-width confidence bins (see Calibration).
func Score(labels []int, probs [][]float32, classes []string, cfg MetricsConfig) (*Metrics, error) {
	k := len(classes)
	n := len(labels)
	if k < 2 {
		return nil, fmt.Errorf("eval: score with %d classes; want at least 2", k)
	}
	if n == 0 {
		return nil, fmt.Errorf("eval: score with no samples")
	}
	if len(probs) != n {
		return nil, fmt.Errorf("eval: score with %d labels but %d probability vectors; want one per sample", n, len(probs))
	}
	if err := checkLabels(labels, k); err != nil {
		return nil, err
	}
	if err := checkProbs(probs, k, 0); err != nil {
		return nil, err
	}
	cfg = cfg.withDefaults(k)
	if !(cfg.Confidence > 0 && cfg.Confidence < 1) {
		return nil, fmt.Errorf("eval: confidence %v outside (0,1); use e.g. 0.95", cfg.Confidence)
	}
	if cfg.Bins < 1 || cfg.Bins > 1000 {
		return nil, fmt.Errorf("eval: %d calibration bins; want 1 to 1000 (15 is the default)", cfg.Bins)
	}
	if !(cfg.Eps > 0 && cfg.Eps < 0.5) {
		return nil, fmt.Errorf("eval: log-loss eps %v; want a small positive value such as 1e-15", cfg.Eps)
	}
	for _, t := range cfg.TopK {
		if t < 1 || t > k {
			return nil, fmt.Errorf("eval: top-%d accuracy with %d classes; want k in [1,%d]", t, k, k)
		}
	}

	pred := Classify(probs)
	m := &Metrics{N: n, Classes: slices.Clone(classes), Confusion: ConfusionMatrix(labels, pred, k)}
	for i := range n {
		if pred[i] == labels[i] {
			m.Correct++
		}
	}
	m.Accuracy = float64(m.Correct) / float64(n)
	m.CI = Wilson(m.Correct, n, cfg.Confidence)
	m.PerClass, m.Macro, m.Weighted = classScores(m.Confusion, classes)
	for _, t := range cfg.TopK {
		m.TopK = append(m.TopK, TopK{t, topK(labels, probs, t)})
	}
	m.LogLoss = logLoss(labels, probs, cfg.Eps)
	m.ECE, m.Bins = Calibration(labels, probs, cfg.Bins)
	return m, nil
}

// ConfusionMatrix returns the k×k matrix of counts C[true][predicted], the
// layout of scikit-learn's confusion_matrix. It panics on a class outside
// [0,k).
func ConfusionMatrix(labels, pred []int, k int) [][]int {
	c := make([][]int, k)
	for i := range c {
		c[i] = make([]int, k)
	}
	for i, l := range labels {
		c[l][pred[i]]++
	}
	return c
}

func classScores(conf [][]int, classes []string) ([]ClassScore, Average, Average) {
	k := len(conf)
	div := func(a, b float64) float64 {
		if b == 0 {
			return 0
		}
		return a / b
	}
	scores := make([]ClassScore, k)
	var macro, weighted Average
	total := 0
	for c := range k {
		tp := conf[c][c]
		support, predicted := 0, 0
		for j := range k {
			support += conf[c][j]
			predicted += conf[j][c]
		}
		p := div(float64(tp), float64(predicted))
		r := div(float64(tp), float64(support))
		f := div(2*p*r, p+r)
		scores[c] = ClassScore{classes[c], p, r, f, support}
		macro.Precision += p
		macro.Recall += r
		macro.F1 += f
		w := float64(support)
		weighted.Precision += w * p
		weighted.Recall += w * r
		weighted.F1 += w * f
		total += support
	}
	kf, tf := float64(k), float64(total)
	macro = Average{macro.Precision / kf, macro.Recall / kf, macro.F1 / kf}
	weighted = Average{weighted.Precision / tf, weighted.Recall / tf, weighted.F1 / tf}
	return scores, macro, weighted
}

// topK counts a sample as correct when fewer than t classes have a strictly
// higher probability than the true class (ties resolved in the sample's
// favour).
func topK(labels []int, probs [][]float32, t int) float64 {
	hit := 0
	for i, p := range probs {
		v := p[labels[i]]
		above := 0
		for _, q := range p {
			if q > v {
				above++
			}
		}
		if above < t {
			hit++
		}
	}
	return float64(hit) / float64(len(labels))
}

func logLoss(labels []int, probs [][]float32, eps float64) float64 {
	var s float64
	for i, p := range probs {
		var sum, pt float64
		for c, v := range p {
			q := min(max(float64(v), eps), 1-eps)
			sum += q
			if c == labels[i] {
				pt = q
			}
		}
		s -= math.Log(pt / sum)
	}
	return s / float64(len(labels))
}
