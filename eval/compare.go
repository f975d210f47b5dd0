package eval

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
)

// CompareConfig sets up a paired comparison. The zero value means the
// defaults given beside each field.
type CompareConfig struct {
	Confidence float64 // interval level; 0 means 0.95
	Resamples  int     // paired bootstrap resamples; 0 means 2000
	Seed       uint64  // bootstrap seed; the same seed gives the same interval
}

func (c CompareConfig) withDefaults() CompareConfig {
	if c.Confidence == 0 {
		c.Confidence = 0.95
	}
	if c.Resamples == 0 {
		c.Resamples = 2000
	}
	return c
}

// Comparison is the paired comparison of two classifiers A and B on the same
// test samples.
type Comparison struct {
	NameA      string   `json:"a"`
	NameB      string   `json:"b"`
	Condition  string   `json:"condition,omitempty"` // test condition, e.g. "noise-0.2"; empty for clean images
	N          int      `json:"n"`
	AccuracyA  float64  `json:"accuracy_a"`
	AccuracyB  float64  `json:"accuracy_b"`
	OnlyA      int      `json:"only_a_correct"` // samples A gets right and B wrong (McNemar's b)
	OnlyB      int      `json:"only_b_correct"` // samples B gets right and A wrong (McNemar's c)
	PValue     float64  `json:"mcnemar_p"`      // exact two-sided McNemar p-value
	Diff       float64  `json:"diff"`           // AccuracyA − AccuracyB
	DiffCI     Interval `json:"diff_ci"`        // paired bootstrap percentile interval of Diff
	Resamples  int      `json:"resamples"`
	Seed       uint64   `json:"seed"`
	Confidence float64  `json:"confidence"`
}

// Compare compares the predictions predA and predB of two classifiers named
// nameA and nameB on the same samples with true classes labels.
//
// The exact McNemar test (McNemar 1947; the exact form in Edwards 1948 and
// Dietterich 1998) looks only at the discordant pairs: with b samples only A
// gets right and c only B gets right, under the null hypothesis of equal
// accuracy b ~ Binomial(b+c, 1/2), and the two-sided p-value is
// min(1, 2·P(X ≤ min(b,c))) (1 when b+c = 0).
//
// The accuracy difference gets a paired bootstrap percentile interval
// (Efron & Tibshirani 1993, ch. 13): Resamples times, draw N sample indices
// with replacement, score both classifiers on the same draw, and take the
// (1−conf)/2 and (1+conf)/2 quantiles of the differences.
func Compare(nameA, nameB string, labels, predA, predB []int, cfg CompareConfig) (*Comparison, error) {
	cfg = cfg.withDefaults()
	n := len(labels)
	if n == 0 {
		return nil, fmt.Errorf("eval: compare %s vs %s: no samples", nameA, nameB)
	}
	if len(predA) != n || len(predB) != n {
		return nil, fmt.Errorf("eval: compare %s vs %s: %d labels but %d and %d predictions; want the same test samples for both", nameA, nameB, n, len(predA), len(predB))
	}
	if !(cfg.Confidence > 0 && cfg.Confidence < 1) {
		return nil, fmt.Errorf("eval: compare confidence %v outside (0,1); use e.g. 0.95", cfg.Confidence)
	}
	if cfg.Resamples < 100 {
		return nil, fmt.Errorf("eval: compare with %d bootstrap resamples; want at least 100 (2000 is the default)", cfg.Resamples)
	}
	// d[i] = 1 if only A right, -1 if only B right, 0 if both or neither.
	d := make([]int8, n)
	var ca, cb, b, c int
	for i, l := range labels {
		ra, rb := predA[i] == l, predB[i] == l
		if ra {
			ca++
		}
		if rb {
			cb++
		}
		switch {
		case ra && !rb:
			d[i], b = 1, b+1
		case rb && !ra:
			d[i], c = -1, c+1
		}
	}
	cmp := &Comparison{NameA: nameA, NameB: nameB, N: n,
		AccuracyA: float64(ca) / float64(n), AccuracyB: float64(cb) / float64(n),
		OnlyA: b, OnlyB: c, PValue: McNemarExact(b, c),
		Resamples: cfg.Resamples, Seed: cfg.Seed, Confidence: cfg.Confidence}
	cmp.Diff = float64(b-c) / float64(n)
	cmp.DiffCI = pairedBootstrap(d, cfg)
	return cmp, nil
}

// McNemarExact returns the exact two-sided McNemar p-value for b and c
// discordant pairs: min(1, 2·P(X ≤ min(b,c))) with X ~ Binomial(b+c, 1/2);
// 1 when b+c = 0. It equals scipy.stats.binomtest(b, b+c, 0.5).pvalue.
// It panics if b or c is negative.
func McNemarExact(b, c int) float64 {
	if b < 0 || c < 0 {
		panic(fmt.Sprintf("eval: McNemarExact(%d, %d) with a negative count", b, c))
	}
	return binomTwoSidedHalf(b, b+c)
}

func pairedBootstrap(d []int8, cfg CompareConfig) Interval {
	diffs := bootstrapDiffs(d, cfg)
	sort.Float64s(diffs)
	a := (1 - cfg.Confidence) / 2
	return Interval{quantileSorted(diffs, a), quantileSorted(diffs, 1-a), cfg.Confidence}
}

// bootstrapDiffs returns the mean of d over cfg.Resamples resamples drawn
// with replacement, in draw order.
func bootstrapDiffs(d []int8, cfg CompareConfig) []float64 {
	n := len(d)
	r := rand.New(rand.NewPCG(cfg.Seed, 0x5eed_b007))
	diffs := make([]float64, cfg.Resamples)
	for s := range diffs {
		var t int
		for range n {
			t += int(d[r.IntN(n)])
		}
		diffs[s] = float64(t) / float64(n)
	}
	return diffs
}

// quantileSorted returns the q-quantile of sorted x by linear interpolation
// between order statistics (numpy.quantile's default, "linear").
func quantileSorted(x []float64, q float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	pos := q * float64(len(x)-1)
	i := int(math.Floor(pos))
	if i >= len(x)-1 {
		return x[len(x)-1]
	}
	f := pos - float64(i)
	return x[i] + f*(x[i+1]-x[i])
}

// CompareRobustness compares two robustness sweeps of the same conditions
// on the same test set (swept with the same Seed, so image i was perturbed
// identically for both): one Comparison per perturbed condition, in sweep
// order, with Condition set to the perturbation's label. Clean conditions
// are skipped (compare those with Compare).
func CompareRobustness(a, b *Robustness, labels []int, cfg CompareConfig) ([]*Comparison, error) {
	if len(a.Points) != len(b.Points) {
		return nil, fmt.Errorf("eval: robustness sweeps of %s and %s have %d and %d conditions; sweep both with the same conditions", a.Model, b.Model, len(a.Points), len(b.Points))
	}
	if a.Seed != b.Seed || a.Data != b.Data {
		return nil, fmt.Errorf("eval: robustness sweeps of %s and %s used different data or seeds (%q/%d, %q/%d); pairs need the same perturbed images", a.Model, b.Model, a.Data, a.Seed, b.Data, b.Seed)
	}
	var out []*Comparison
	for i, pa := range a.Points {
		pb := b.Points[i]
		if pa.Label != pb.Label {
			return nil, fmt.Errorf("eval: condition %d is %s for %s but %s for %s", i, pa.Label, a.Model, pb.Label, b.Model)
		}
		if pa.Label == "clean" {
			continue
		}
		c, err := Compare(a.Model, b.Model, labels, pa.Pred, pb.Pred, cfg)
		if err != nil {
			return nil, fmt.Errorf("eval: under %s: %w", pa.Label, err)
		}
		c.Condition = pa.Label
		out = append(out, c)
	}
	return out, nil
}
