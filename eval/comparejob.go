package eval

import (
	"fmt"
	"slices"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// ModelComparison is two models scored on the same test images and compared
// (CompareModels).
type ModelComparison struct {
	Names   [2]string
	Models  [2]*pipeline.Model
	Set     *datasets.Set
	Data    *Data
	Results []ModelResult // one per model, in order
	Clean   *Comparison   // the paired comparison on the clean images
	preds   [2][]int
	cfg     CompareConfig
	run     RunOptions
	mon     JobMonitor
}

// Comparable reports whether a and b can be compared on the same images:
// the same input size and the same classes in the same order.
func Comparable(a, b *pipeline.Model) error {
	h, w := a.InputSize()
	if hb, wb := b.InputSize(); hb != h || wb != w {
		return fmt.Errorf("models take different input sizes (%d×%d and %d×%d); compare models built for the same images", h, w, hb, wb)
	}
	if !slices.Equal(a.Classes(), b.Classes()) {
		return fmt.Errorf("models have different classes (%v and %v)", a.Classes(), b.Classes())
	}
	return nil
}

// CompareModels predicts every image of set with both models and compares
// them (Compare with cfg). The models must take the same input size and
// have the same classes, in order, as each other and as set. Progress goes
// to mon; ModelComparison.Report adds the remaining sections.
func CompareModels(names [2]string, models [2]*pipeline.Model, set *datasets.Set, cfg CompareConfig, run RunOptions, mon JobMonitor) (*ModelComparison, error) {
	if err := Comparable(models[0], models[1]); err != nil {
		return nil, err
	}
	if err := CheckClasses(models[0], set); err != nil {
		return nil, err
	}
	mc := &ModelComparison{Names: names, Models: models, Set: set, Data: FromSet(set), cfg: cfg, run: run, mon: mon}
	for k, m := range models {
		bar := mon.Start(len(mc.Data.Images), "predict "+names[k])
		r := run
		r.Progress = bar
		probs, met, err := PredictScore(m, mc.Data, r)
		bar.Done()
		if err != nil {
			return nil, err
		}
		mc.Results = append(mc.Results, ModelResult{Name: names[k], Data: mc.Data.Name, Metrics: met})
		mc.preds[k] = Classify(probs)
	}
	var err error
	mc.Clean, err = Compare(names[0], names[1], mc.Data.Labels, mc.preds[0], mc.preds[1], cfg)
	return mc, err
}

// Report returns the comparison's report under title: provenance, both
// models' scores and configurations, the clean comparison and, when levels
// is not nil, both models' robustness sweeps on the same perturbed images
// with a comparison per condition (also returned, for printing), and each
// front end's invariance probe.
func (mc *ModelComparison) Report(title, command string, levels map[datasets.PerturbKind][]float64) (*Report, []*Comparison, error) {
	rep := NewReport(title, command)
	rep.Data = []Provenance{SetProvenance(mc.Set, "", 0)}
	rep.Models = mc.Results
	rep.Comparisons = []*Comparison{mc.Clean}
	rep.Config = map[string]pipeline.Config{mc.Names[0]: mc.Models[0].Config(), mc.Names[1]: mc.Models[1].Config()}
	var under []*Comparison
	if levels != nil {
		for k, m := range mc.Models {
			rb, err := sweepModel(mc.Names[k], m, mc.Data, levels, mc.cfg.Seed, mc.run, mc.mon)
			if err != nil {
				return nil, nil, err
			}
			rep.Robustness = append(rep.Robustness, rb)
		}
		var err error
		under, err = CompareRobustness(rep.Robustness[0], rep.Robustness[1], mc.Data.Labels, mc.cfg)
		if err != nil {
			return nil, nil, err
		}
		rep.Comparisons = append(rep.Comparisons, under...)
	}
	for k, m := range mc.Models {
		if iv, bank, err := FrontInvariance(mc.Names[k], m); err == nil {
			rep.Invariance = append(rep.Invariance, iv)
			rep.Banks = append(rep.Banks, BankPanel{Name: mc.Names[k], Bank: bank})
		}
	}
	return rep, under, nil
}
