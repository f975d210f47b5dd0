package eval

import (
	"encoding/json"
	"fmt"
	"math"
	"os"

	"github.com/striate/striate/datasets"
)

// SuiteConfig sets up ScoreSuite. The zero value means the defaults beside
// each field.
type SuiteConfig struct {
	// Seed is the run seed of the perturbed images (image i of every
	// condition gets datasets.ImageSeed(Seed, i)); 0 means
	// datasets.SuiteSeed, the seed the LeNet-5 peer's figures were taken at.
	Seed       uint64
	Confidence float64 // Wilson interval level; 0 means 0.95
	// Run.Workers is used both to perturb the images (Set.Perturbed) and by
	// the predictor; Run.Progress, if set, counts conditions.
	Run RunOptions
}

// SuitePoint is the accuracy under one condition of a development suite.
type SuitePoint struct {
	Name     string   `json:"name"`  // the condition's name, "shot_noise-3", "noise-0.05", "clean"
	Group    string   `json:"group"` // datasets.GroupMNISTC, datasets.GroupGrid or "clean"
	Kind     string   `json:"kind"`
	Unit     string   `json:"unit"`
	Level    float64  `json:"level"`
	N        int      `json:"n"`
	Correct  int      `json:"correct"`
	Accuracy float64  `json:"accuracy"`
	CI       Interval `json:"accuracy_ci"` // Wilson score interval
	Pred     []int    `json:"-"`           // predicted class per test image
}

// KindScore is the accuracy of one corruption or perturbation kind: the
// unweighted mean over its conditions (severities or levels), each scored on
// the same number of images.
type KindScore struct {
	Kind       string  `json:"kind"`
	Group      string  `json:"group"`
	Conditions int     `json:"conditions"` // severities or levels averaged
	Accuracy   float64 `json:"accuracy"`
}

// SuiteSummary condenses per-condition accuracies: per-kind means, the mean
// corruption accuracy over the MNIST-C kinds and the worst of them.
type SuiteSummary struct {
	Kinds []KindScore `json:"kinds"` // every kind in first-seen order, both groups
	// MeanCorruption is the mean over the CorruptionKinds MNIST-C kinds of
	// their per-kind accuracy (Mu & Gilmer 2019 report this mean over their
	// 15 corruptions); it is 0 and CorruptionKinds 0 when the suite holds no
	// MNIST-C condition.
	MeanCorruption  float64    `json:"mean_corruption_accuracy"`
	CorruptionKinds int        `json:"corruption_kinds"`
	Worst           *KindScore `json:"worst_kind,omitempty"` // the MNIST-C kind of lowest accuracy (first on ties)
	// MeanHeldOut is the mean over the held-out kinds (group
	// datasets.GroupHeldOut) of their per-kind accuracy, 0 with HeldOutKinds
	// 0 when the suite holds none.
	MeanHeldOut  float64 `json:"mean_heldout_accuracy,omitempty"`
	HeldOutKinds int     `json:"heldout_kinds,omitempty"`
}

// SuiteResult is one model's scores on a development suite.
type SuiteResult struct {
	Model  string       `json:"model"`
	Data   string       `json:"data"`
	Seed   uint64       `json:"seed"`
	Clean  SuitePoint   `json:"clean"`
	Points []SuitePoint `json:"points"` // in suite order
	SuiteSummary
	Peer *PeerSummary `json:"peer,omitempty"` // a peer's figures on the same conditions, if attached
}

// summarise computes the SuiteSummary of conditions given as parallel
// group, kind and accuracy lists.
func summarise(groups, kinds []string, acc []float64) SuiteSummary {
	var s SuiteSummary
	index := map[[2]string]int{}
	for i, k := range kinds {
		key := [2]string{groups[i], k}
		j, ok := index[key]
		if !ok {
			j = len(s.Kinds)
			index[key] = j
			s.Kinds = append(s.Kinds, KindScore{Kind: k, Group: groups[i]})
		}
		s.Kinds[j].Conditions++
		s.Kinds[j].Accuracy += acc[i]
	}
	for j := range s.Kinds {
		ks := &s.Kinds[j]
		ks.Accuracy /= float64(ks.Conditions)
		if ks.Group == datasets.GroupHeldOut {
			s.HeldOutKinds++
			s.MeanHeldOut += ks.Accuracy
		}
		if ks.Group != datasets.GroupMNISTC {
			continue
		}
		s.CorruptionKinds++
		s.MeanCorruption += ks.Accuracy
		if s.Worst == nil || ks.Accuracy < s.Worst.Accuracy {
			w := *ks
			s.Worst = &w
		}
	}
	if s.CorruptionKinds > 0 {
		s.MeanCorruption /= float64(s.CorruptionKinds)
	}
	if s.HeldOutKinds > 0 {
		s.MeanHeldOut /= float64(s.HeldOutKinds)
	}
	return s
}

func (r *SuiteResult) summarise() {
	n := len(r.Points)
	groups, kinds, acc := make([]string, n), make([]string, n), make([]float64, n)
	for i, p := range r.Points {
		groups[i], kinds[i], acc[i] = p.Group, p.Kind, p.Accuracy
	}
	r.SuiteSummary = summarise(groups, kinds, acc)
}

// Kind returns the score of kind in group, and false if the suite has no
// such kind.
func (s *SuiteSummary) Kind(group, kind string) (KindScore, bool) {
	for _, k := range s.Kinds {
		if k.Group == group && k.Kind == kind {
			return k, true
		}
	}
	return KindScore{}, false
}

// GridCurve returns the points of one grid kind sorted by level, with the
// clean point inserted at the kind's identity level (0, or 1 for scale and
// contrast), so the curve starts, or for scale passes, through the clean
// accuracy.
func (r *SuiteResult) GridCurve(kind string) []SuitePoint {
	var out []SuitePoint
	for _, p := range r.Points {
		if p.Group == datasets.GroupGrid && p.Kind == kind {
			out = append(out, p)
		}
	}
	if len(out) == 0 {
		return nil
	}
	if id, ok := gridIdentity(kind); ok && r.Clean.N > 0 {
		c := r.Clean
		c.Kind, c.Unit, c.Level = kind, out[0].Unit, id
		out = append(out, c)
	}
	sortPoints(out)
	return out
}

// GridKinds returns the grid kinds in first-seen order.
func (s *SuiteSummary) GridKinds() []string {
	var out []string
	for _, k := range s.Kinds {
		if k.Group == datasets.GroupGrid {
			out = append(out, k.Kind)
		}
	}
	return out
}

func sortPoints(ps []SuitePoint) {
	// Insertion sort: curves hold a dozen points, and it is stable.
	for i := 1; i < len(ps); i++ {
		for j := i; j > 0 && ps[j].Level < ps[j-1].Level; j-- {
			ps[j], ps[j-1] = ps[j-1], ps[j]
		}
	}
}

// gridIdentity returns the level at which a datasets perturbation kind,
// named as PerturbKind.String gives it, leaves the image unchanged.
func gridIdentity(kind string) (float64, bool) {
	for _, k := range sweepKinds {
		if k.String() == kind {
			return identityLevel(k), true
		}
	}
	return 0, false
}

// ScoreSuite scores p, fitted on clean images, on the clean test set and on
// test.Perturbed(c.Op, seed, workers) for every condition c of suite (such
// as datasets.DevelopmentSuite()), one condition at a time, so only one
// perturbed copy is held. Each condition's images are exactly the bytes the
// peer script (testdata/peer/lenet5.py) reads for the same seed, and the
// result does not depend on the number of workers (for a deterministic
// predictor). It fails on an empty suite, repeated condition names, an
// invalid condition or a class count that differs from test's.
func ScoreSuite(model string, p Predictor, test *datasets.Set, suite []datasets.SuiteCondition, cfg SuiteConfig) (*SuiteResult, error) {
	if err := test.Validate(); err != nil {
		return nil, err
	}
	if test.N == 0 {
		return nil, fmt.Errorf("eval: development suite of %s: test set %q has no images", model, test.Name)
	}
	if len(suite) == 0 {
		return nil, fmt.Errorf("eval: development suite of %s has no conditions; use datasets.DevelopmentSuite()", model)
	}
	seen := map[string]bool{"clean": true}
	for i, c := range suite {
		if seen[c.Name] {
			return nil, fmt.Errorf("eval: development suite condition %d is named %q, which is taken (the clean images are \"clean\"); give every condition its own name", i, c.Name)
		}
		seen[c.Name] = true
		if c.Op == nil {
			return nil, fmt.Errorf("eval: development suite condition %q has no Op; use a datasets.Corruption or datasets.Perturbation", c.Name)
		}
	}
	if err := checkClassCount(model, p, test.Name, len(test.Classes)); err != nil {
		return nil, err
	}
	conf, err := confidenceLevel(cfg.Confidence)
	if err != nil {
		return nil, err
	}
	seed := cfg.Seed
	if seed == 0 {
		seed = datasets.SuiteSeed
	}
	run := cfg.Run
	prog := run.Progress
	run.Progress = nil
	hw := test.H * test.W
	buf := make([]float32, test.N*hw)
	imgs := make([][]float32, test.N)
	for i := range imgs {
		imgs[i] = buf[i*hw : (i+1)*hw : (i+1)*hw]
	}
	score := func(s *datasets.Set, c datasets.SuiteCondition) (SuitePoint, error) {
		for i := range imgs {
			s.Float(imgs[i], i)
		}
		probs, err := Predict(p, imgs, test.H, test.W, run)
		if err != nil {
			return SuitePoint{}, fmt.Errorf("eval: development suite %s under %s: %w", model, c.Name, err)
		}
		pred := Classify(probs)
		correct := 0
		for i, l := range test.Labels {
			if pred[i] == l {
				correct++
			}
		}
		return SuitePoint{Name: c.Name, Group: c.Group, Kind: c.Kind, Unit: c.Unit, Level: c.Level, N: test.N, Correct: correct,
			Accuracy: float64(correct) / float64(test.N), CI: Wilson(correct, test.N, conf), Pred: pred}, nil
	}
	out := &SuiteResult{Model: model, Data: test.Name, Seed: seed}
	if out.Clean, err = score(test, datasets.SuiteCondition{Name: "clean", Group: "clean", Kind: "clean"}); err != nil {
		return nil, err
	}
	for ci, c := range suite {
		s, err := test.Perturbed(c.Op, seed, run.Workers)
		if err != nil {
			return nil, fmt.Errorf("eval: development suite condition %q: %w", c.Name, err)
		}
		pt, err := score(s, c)
		if err != nil {
			return nil, err
		}
		out.Points = append(out.Points, pt)
		if prog != nil {
			prog.Step(ci+1, len(suite), c.Name)
		}
	}
	out.summarise()
	return out, nil
}

// meanOf returns the arithmetic mean of xs (NaN for none).
func meanOf(xs []float64) float64 {
	if len(xs) == 0 {
		return math.NaN()
	}
	var s float64
	for _, x := range xs {
		s += x
	}
	return s / float64(len(xs))
}

// ReadSuiteResult reads the first suite result of a results.json written by
// `striate evaluate --suite … --out DIR` (a Report's "suites"), with its
// summary recomputed from the points; an attached peer is dropped (attach
// one with SetPeer).
func ReadSuiteResult(path string) (*SuiteResult, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("eval: suite result: %w", err)
	}
	var rep struct {
		Suites []*SuiteResult `json:"suites"`
	}
	if err := json.Unmarshal(b, &rep); err != nil {
		return nil, fmt.Errorf("eval: suite result %s: %w (want the results.json of striate evaluate --suite)", path, err)
	}
	if len(rep.Suites) == 0 || rep.Suites[0] == nil || len(rep.Suites[0].Points) == 0 {
		return nil, fmt.Errorf("eval: suite result %s holds no suite; run striate evaluate with --suite and --out", path)
	}
	r := rep.Suites[0]
	r.Peer = nil
	r.summarise()
	return r, nil
}

// MergeSuiteResults joins results of one model scored on different suites
// (the development suite in one run, the held-out suite in another) into
// one, points in the order given. They must share the model name, the suite
// seed and the clean score (the same model on the same test images); no
// condition may appear twice. Peers are dropped.
func MergeSuiteResults(rs ...*SuiteResult) (*SuiteResult, error) {
	if len(rs) == 0 {
		return nil, fmt.Errorf("eval: no suite results to merge")
	}
	out := *rs[0]
	out.Peer = nil
	out.Points = nil
	seen := map[string]bool{}
	for _, r := range rs {
		if r.Model != out.Model || r.Seed != out.Seed || r.Clean.N != out.Clean.N || r.Clean.Correct != out.Clean.Correct {
			return nil, fmt.Errorf("eval: suite results of %s (seed %d, clean %d/%d) and %s (seed %d, clean %d/%d) are not of one model on the same images",
				out.Model, out.Seed, out.Clean.Correct, out.Clean.N, r.Model, r.Seed, r.Clean.Correct, r.Clean.N)
		}
		for _, p := range r.Points {
			if seen[p.Name] {
				return nil, fmt.Errorf("eval: suite results of %s both hold condition %q", out.Model, p.Name)
			}
			seen[p.Name] = true
			out.Points = append(out.Points, p)
		}
	}
	out.summarise()
	return &out, nil
}
