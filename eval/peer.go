package eval

import (
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"os"
	"slices"
	"strings"
)

// PeerFigures are a peer recognizer's accuracies on a development suite, as
// testdata/peer/lenet5.py writes them: one entry per condition (the clean
// images first, named "clean") with the accuracy of each training seed and
// their mean.
type PeerFigures struct {
	Name       string          `json:"name,omitempty"` // shown in tables; ReadPeer sets "LeNet-5" when empty
	Source     string          `json:"source,omitempty"`
	Generator  string          `json:"generator"`
	Dataset    string          `json:"dataset"`
	SuiteSeed  uint64          `json:"suite_seed"`
	Seeds      []int64         `json:"seeds"`
	Conditions []PeerCondition `json:"conditions"`
}

// PeerCondition is the peer's accuracy under one condition.
type PeerCondition struct {
	Name     string    `json:"name"`
	Group    string    `json:"group"`
	Kind     string    `json:"kind,omitempty"`
	Unit     string    `json:"unit,omitempty"`
	Level    float64   `json:"level,omitempty"`
	Accuracy []float64 `json:"accuracy"` // one per seed
	Mean     float64   `json:"mean"`
}

// MaxPeerBytes bounds a peer file: the full suite (131 conditions, a few
// seeds) takes about 40 kB, so 16 MiB is far beyond any honest file while
// keeping a wrong path from filling memory.
const MaxPeerBytes = 16 << 20

// peerMeanTol is how far a condition's stored mean may differ from the mean
// of its per-seed accuracies: both are float64 sums of a few values, so they
// agree to a few ulps; 1e-9 still catches a hand-edited figure.
const peerMeanTol = 1e-9

// ReadPeer reads a peer figures file written by testdata/peer/lenet5.py and
// checks it: every accuracy in [0,1], at least one seed per condition, the
// same seed count everywhere, each mean equal to the mean of its seeds,
// condition names unique. name labels the peer in the report ("" means
// "LeNet-5").
func ReadPeer(path, name string) (*PeerFigures, error) {
	fi, err := os.Stat(path)
	if err != nil {
		return nil, fmt.Errorf("eval: peer figures: %w", err)
	}
	if fi.Size() > MaxPeerBytes {
		return nil, fmt.Errorf("eval: peer figures %s holds %d bytes, more than the %d a peer file can hold; is it the JSON written by testdata/peer/lenet5.py?", path, fi.Size(), MaxPeerBytes)
	}
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("eval: peer figures: %w", err)
	}
	return ParsePeer(b, path, name)
}

// ParsePeer decodes and checks peer figures as ReadPeer does; source names
// the file in errors and in the report.
func ParsePeer(b []byte, source, name string) (*PeerFigures, error) {
	var p PeerFigures
	if err := json.Unmarshal(b, &p); err != nil {
		return nil, fmt.Errorf("eval: peer figures %s: %w (want the JSON written by testdata/peer/lenet5.py)", source, err)
	}
	if name == "" {
		name = "LeNet-5"
	}
	p.Name, p.Source = name, source
	if len(p.Conditions) == 0 {
		return nil, fmt.Errorf("eval: peer figures %s list no conditions", source)
	}
	seen := map[string]bool{}
	for i, c := range p.Conditions {
		if c.Name == "" || seen[c.Name] {
			return nil, fmt.Errorf("eval: peer figures %s: condition %d has an empty or repeated name %q", source, i, c.Name)
		}
		seen[c.Name] = true
		if len(c.Accuracy) == 0 || len(c.Accuracy) != len(p.Conditions[0].Accuracy) {
			return nil, fmt.Errorf("eval: peer figures %s: condition %q has %d accuracies; want one per seed, %d as in %q",
				source, c.Name, len(c.Accuracy), len(p.Conditions[0].Accuracy), p.Conditions[0].Name)
		}
		for _, a := range c.Accuracy {
			if !(a >= 0 && a <= 1) {
				return nil, fmt.Errorf("eval: peer figures %s: condition %q has accuracy %v; want a fraction in [0,1]", source, c.Name, a)
			}
		}
		if m := meanOf(c.Accuracy); math.Abs(m-c.Mean) > peerMeanTol {
			return nil, fmt.Errorf("eval: peer figures %s: condition %q gives mean %v but its seeds average %v", source, c.Name, c.Mean, m)
		}
	}
	return &p, nil
}

// PeerSummary is a peer's figures aligned with a SuiteResult: Points[i] is
// the peer's mean accuracy under the result's Points[i] condition.
type PeerSummary struct {
	Name      string    `json:"name"`
	Source    string    `json:"source,omitempty"`
	Generator string    `json:"generator,omitempty"`
	Seeds     int       `json:"seeds"` // training seeds averaged
	Clean     float64   `json:"clean"` // mean accuracy on the clean images
	Points    []float64 `json:"points"`
	SuiteSummary
}

// SetPeer attaches peer figures to r. The peer must have been scored on the
// same images: the same suite seed, the clean images and every condition of
// r (extra peer conditions are ignored).
func (r *SuiteResult) SetPeer(p *PeerFigures) error {
	if p.SuiteSeed != r.Seed {
		return fmt.Errorf("eval: peer figures %s were taken at suite seed %d, %s's at %d; rerun the peer on the images of seed %d",
			p.Source, p.SuiteSeed, r.Model, r.Seed, r.Seed)
	}
	by := map[string]*PeerCondition{}
	for i := range p.Conditions {
		by[p.Conditions[i].Name] = &p.Conditions[i]
	}
	clean, ok := by["clean"]
	if !ok {
		return fmt.Errorf("eval: peer figures %s have no \"clean\" condition", p.Source)
	}
	s := &PeerSummary{Name: p.Name, Source: p.Source, Generator: p.Generator, Seeds: len(clean.Accuracy), Clean: clean.Mean}
	n := len(r.Points)
	groups, kinds := make([]string, n), make([]string, n)
	for i, q := range r.Points {
		c, ok := by[q.Name]
		if !ok {
			return fmt.Errorf("eval: peer figures %s have no condition %q; rerun the peer on the whole suite", p.Source, q.Name)
		}
		s.Points = append(s.Points, c.Mean)
		groups[i], kinds[i] = q.Group, q.Kind
	}
	s.SuiteSummary = summarise(groups, kinds, s.Points)
	r.Peer = s
	return nil
}

// ReadPeers reads one or more peer figures files, given comma-separated
// ("lenet5_mnist.json,lenet5_mnist_heldout.json"), with ReadPeer and merges
// them with MergePeers, so one peer can be shown beside a suite scored in
// several runs of the peer script.
func ReadPeers(paths string) (*PeerFigures, error) {
	list := strings.Split(paths, ",")
	for _, p := range list {
		if strings.TrimSpace(p) == "" {
			return nil, fmt.Errorf("eval: peer figures list %q has an empty entry; give files separated by single commas", paths)
		}
	}
	var all []*PeerFigures
	for _, p := range list {
		f, err := ReadPeer(strings.TrimSpace(p), "")
		if err != nil {
			return nil, err
		}
		all = append(all, f)
	}
	return MergePeers(all...)
}

// MergePeers joins the conditions of figures taken from the same peer
// models on different suites: they must share the dataset, the suite seed
// and the training seeds, and their "clean" conditions must agree seed by
// seed (the clean test images are scored in every run; a difference means
// the models were trained again, differently). A condition named in two
// files must agree in the same way; it is kept once.
func MergePeers(figs ...*PeerFigures) (*PeerFigures, error) {
	if len(figs) == 0 {
		return nil, errors.New("eval: no peer figures to merge")
	}
	out := *figs[0]
	out.Conditions = append([]PeerCondition(nil), figs[0].Conditions...)
	index := map[string]int{}
	for i, c := range out.Conditions {
		index[c.Name] = i
	}
	for _, f := range figs[1:] {
		if f.Dataset != out.Dataset || f.SuiteSeed != out.SuiteSeed || !slices.Equal(f.Seeds, out.Seeds) {
			return nil, fmt.Errorf("eval: peer figures %s (dataset %q, suite seed %d, seeds %v) do not match %s (%q, %d, %v); merge only runs of the same peer models",
				f.Source, f.Dataset, f.SuiteSeed, f.Seeds, out.Source, out.Dataset, out.SuiteSeed, out.Seeds)
		}
		for _, c := range f.Conditions {
			i, ok := index[c.Name]
			if !ok {
				index[c.Name] = len(out.Conditions)
				out.Conditions = append(out.Conditions, c)
				continue
			}
			if !slices.Equal(c.Accuracy, out.Conditions[i].Accuracy) {
				return nil, fmt.Errorf("eval: peer figures %s and %s give condition %q accuracies %v and %v; they come from different peer models (rerun both suites with the same weights cache)",
					out.Source, f.Source, c.Name, out.Conditions[i].Accuracy, c.Accuracy)
			}
		}
		out.Source += "," + f.Source
	}
	return &out, nil
}
