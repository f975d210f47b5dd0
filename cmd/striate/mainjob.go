package main

import (
	"fmt"
	"os"
	"strings"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
	"github.com/striate/striate/v1layer"
)

// jobSizes sets how much work the main job does. The full job must stay
// within about 15 minutes on two cores and the quick one within about two.
type jobSizes struct {
	trainPerClass int   // labelled training images per class; 0 = the whole split
	test          int   // test images scored (first N of the published test split); 0 = all
	sweepTest     int   // test images in the robustness sweeps (first N); 0 = all
	labelBudgets  []int // labels per class for the label-efficiency curve
	levels        map[datasets.PerturbKind][]float64
	speedImages   int
	headMinSteps  int // pipeline.Config.HeadMinSteps for the small label budgets; 0 = default
	unlabeled     int // pipeline.Config.Unlabeled; 0 = default
	bankPatches   int // photo patches for the learned bank; 0 = default
	bankEpochs    int // dictionary-learning passes; 0 = default
	bankAtoms     int // atoms of the learned bank; 0 = default (fewer atoms, fewer channels for the templates)
}

// demoLevels are the robustness levels of the full job: the conditions the
// accuracy targets name, fewer in-between levels than eval.StandardLevels so
// that four models are swept within the time budget.
var demoLevels = map[datasets.PerturbKind][]float64{
	datasets.Noise:    {0, 0.1, 0.3, 0.5},
	datasets.Blur:     {0, 1, 2},
	datasets.Contrast: {0.25, 0.5, 1},
	datasets.Shift:    {0, 2, 4},
	datasets.Rotate:   {0, 15, 30},
	datasets.Scale:    {0.8, 1, 1.25},
}

func sizesFor(quick bool) jobSizes {
	if quick {
		return jobSizes{trainPerClass: 300, test: 2000, sweepTest: 1000, labelBudgets: []int{10, 100},
			levels: eval.QuickLevels, speedImages: 500, headMinSteps: 600, unlabeled: 3000, bankPatches: 6000, bankEpochs: 4, bankAtoms: 12}
	}
	return jobSizes{trainPerClass: 0, test: 0, sweepTest: 5000, labelBudgets: []int{10, 100, 1000},
		levels: demoLevels, speedImages: 2000}
}

// shrink applies the quick job's smaller budgets to c.
func (sz jobSizes) shrink(c *pipeline.Config) {
	if sz.headMinSteps > 0 {
		c.HeadMinSteps = sz.headMinSteps
	}
	if sz.unlabeled > 0 {
		c.Unlabeled = sz.unlabeled
	}
	if c.LearnBank != nil {
		lb := *c.LearnBank
		if sz.bankPatches > 0 {
			lb.Patches = sz.bankPatches
		}
		if sz.bankEpochs > 0 {
			lb.Dict.Epochs = sz.bankEpochs
		}
		if sz.bankAtoms > 0 {
			lb.Dict.Atoms = sz.bankAtoms
		}
		c.LearnBank = &lb
	}
}

// modelSpec is one of the pipelines the main job trains.
type modelSpec struct {
	name, desc string
	cfg        pipeline.Config
}

// demoHead is the head of the main job's pipelines: the default MLP with 128
// hidden units and 8 epochs instead of 512 and 15, which trains about six
// times faster and costs a few tenths of a point; the accuracy runs of the
// pipeline package (and "striate train") use the full default.
var demoHead = learn.HeadConfig{Kind: learn.KindMLP, Hidden: 128, Epochs: 8, Schedule: learn.ScheduleCosine, ValFrac: -1}

// mainJobSpecs returns the hand-set and the learned pipeline built on base
// (the demo's own defaults unless --config names a file). The learned one
// differs only in its simple-cell bank, which Fit learns from the embedded
// photos by sparse coding, so the comparison isolates the bank.
func mainJobSpecs(base pipeline.Config, seed uint64) []modelSpec {
	hand := base
	hand.Seed = seed
	learned := base
	learned.Seed = seed
	if learned.LearnBank == nil {
		learned.LearnBank = &pipeline.LearnBankConfig{}
	}
	learned.Front.Bank = nil
	return []modelSpec{
		{"hand-set", "DoG + hand-set Gabor bank (default front end)", hand},
		{"learned", "DoG + bank learned by sparse coding of whitened photo patches", learned},
	}
}

// demoConfig is the pipeline the main job trains on one dataset: the
// preset for its images (garments for Fashion-MNIST, digits for MNIST) with
// demoHead, or the file named by --config for both.
func demoConfig(path, preset string) (pipeline.Config, error) {
	if path != "" {
		return pipeline.LoadConfig(path)
	}
	c, err := pipeline.Preset(preset)
	c.Head = demoHead
	if c.Mirror {
		// Mirror doubles the training rows: half the epochs keep the
		// number of head steps, and so the demo's time, as without it.
		c.Head.Epochs = max(1, demoHead.Epochs/2)
	}
	return c, err
}

// runMainJob learns a bank, trains the hand-set and learned pipelines on
// Fashion-MNIST (the garment-sorting station) and MNIST, compares them, runs
// the robustness and label-efficiency sweeps and writes the report.
func runMainJob(g *globals, d *demoData, quick bool) error {
	start := time.Now()
	sz := sizesFor(quick)
	w := g.stdout
	rep := &eval.Report{
		Title: "striate: hand-set and learned V1-like front ends",
		Summary: "A garment-sorting station at a second-hand clothing depot sorts items by type on a small CPU board. " +
			"This report trains two recognizers that differ only in their simple-cell bank (hand-set Gabor filters, or " +
			"filters learned by sparse coding of whitened natural-photo patches) on Fashion-MNIST (the garments) and " +
			"MNIST, and evaluates them on the published test splits.",
		Command: "striate " + strings.Join(os.Args[1:], " "),
	}
	if quick {
		rep.Notes = append(rep.Notes, fmt.Sprintf("Quick run: %d labelled training images per class and the first %d test images; "+
			"figures are indicative only. Run without --quick for the full result.", sz.trainPerClass, sz.test))
	}
	// specs[k] are the two pipelines of dataset k (Fashion-MNIST, MNIST).
	var specs [2][]modelSpec
	configs := map[string]pipeline.Config{}
	for k, ds := range []struct{ name, preset string }{{"Fashion-MNIST", "garments"}, {"MNIST", "digits"}} {
		base, err := demoConfig(g.config, ds.preset)
		if err != nil {
			return err
		}
		specs[k] = mainJobSpecs(base, g.seed)
		for i := range specs[k] {
			sz.shrink(&specs[k][i].cfg)
			configs[specs[k][i].name+" on "+ds.name] = specs[k][i].cfg
		}
		if g.config == "" {
			rep.Notes = append(rep.Notes, fmt.Sprintf("On %s both pipelines use the %q preset (%s).", ds.name, ds.preset, pipeline.PresetAbout(ds.preset)))
		}
	}
	rep.Config = configs

	type dataPair struct {
		train, test *datasets.Set
	}
	sets := []dataPair{{d.fashionTrain, d.fashionTest}, {d.mnistTrain, d.mnistTest}}
	var mnistModels = map[string]*pipeline.Model{}
	var banksDrawn bool
	for k, dp := range sets {
		specs := specs[k]
		train := dp.train
		if sz.trainPerClass > 0 {
			train = train.Subset(datasets.PerClass(train.Labels, sz.trainPerClass, g.seed))
		}
		test := firstN(dp.test, sz.test)
		td := eval.FromSet(test)
		rep.Data = append(rep.Data, eval.Provenance{Name: dp.test.Name, Source: dp.test.Source, Train: train.N, Test: test.N,
			H: test.H, W: test.W, Classes: test.Classes})
		preds := map[string][]int{}
		for _, s := range specs {
			fmt.Fprintf(w, "training %s on %s (%d images)\n", s.name, train.Name, train.N)
			bar := g.newProgress(train.N, s.name)
			t0 := time.Now()
			m, frep, err := pipeline.FitReported(s.cfg, train, pipeline.FitOptions{Workers: g.workers, Progress: bar})
			bar.Done()
			if err != nil {
				return fmt.Errorf("training %s on %s: %w", s.name, train.Name, err)
			}
			secs := time.Since(t0).Seconds()
			if !banksDrawn && frep.Bank != nil {
				if err := addBankFigures(rep, m, frep); err != nil {
					return err
				}
				banksDrawn = true
			}
			bar = g.newProgress(len(td.Images), "test "+s.name)
			probs, err := eval.Predict(m, td.Images, td.H, td.W, eval.RunOptions{Workers: g.workers, Progress: bar})
			bar.Done()
			if err != nil {
				return err
			}
			met, err := eval.Score(td.Labels, probs, td.Classes, eval.MetricsConfig{})
			if err != nil {
				return err
			}
			preds[s.name] = eval.Classify(probs)
			mr := eval.ModelResult{Name: s.name, Data: dp.test.Name, Description: s.desc, TrainSeconds: secs, Metrics: met}
			n := min(sz.speedImages, len(td.Images))
			sp, err := eval.MeasureSpeed(m, func(imgs [][]float32, h, w, workers int) error {
				_, err := m.ExtractFloats(imgs, h, w, workers)
				return err
			}, td.Images[:n], td.H, td.W, eval.SpeedConfig{Workers: g.workers})
			if err != nil {
				return err
			}
			if sp.ModelBytes, err = eval.ModelSize(m.Save); err != nil {
				return err
			}
			mr.Speed = sp
			rep.Models = append(rep.Models, mr)
			fmt.Fprintf(w, "  %s on %s: accuracy %.2f%% [%.2f, %.2f] (trained in %.0f s)\n", s.name, test.Name,
				100*met.Accuracy, 100*met.CI.Lo, 100*met.CI.Hi, secs)

			bar = g.newProgress(0, "robustness "+s.name)
			conds, err := eval.StandardConditions(sz.levels)
			if err != nil {
				return err
			}
			rob, err := eval.RobustnessSweep(s.name, m, firstData(td, sz.sweepTest), conds, eval.RobustnessConfig{Seed: g.seed,
				Run: eval.RunOptions{Workers: g.workers, Progress: bar}})
			bar.Done()
			if err != nil {
				return err
			}
			rob.Data = dp.test.Name
			rep.Robustness = append(rep.Robustness, rob)
			if dp.train == d.mnistTrain {
				mnistModels[s.name] = m
			}
		}
		cmp, err := eval.Compare(specs[0].name, specs[1].name, td.Labels, preds[specs[0].name], preds[specs[1].name],
			eval.CompareConfig{Seed: g.seed})
		if err != nil {
			return err
		}
		rep.Comparisons = append(rep.Comparisons, cmp)
		fmt.Fprintf(w, "  %s vs %s on %s: difference %+.2f points [%+.2f, %+.2f], exact McNemar p = %.3g\n",
			cmp.NameA, cmp.NameB, test.Name, 100*cmp.Diff, 100*cmp.DiffCI.Lo, 100*cmp.DiffCI.Hi, cmp.PValue)
	}

	// Label efficiency on MNIST: the unsupervised stages see the whole
	// training split without labels; the head sees only the budget.
	mt := firstN(d.mnistTest, sz.test)
	mtd := eval.FromSet(mt)
	hand := specs[1][0] // hand-set on MNIST
	fmt.Fprintf(w, "label efficiency of %s on MNIST: %v labels per class\n", hand.name, sz.labelBudgets)
	bar := g.newProgress(len(sz.labelBudgets), "label efficiency")
	curve, err := eval.LabelEfficiency(hand.name, func(idx []int) (eval.Predictor, error) {
		return pipeline.Fit(hand.cfg, d.mnistTrain.Subset(idx), pipeline.FitOptions{Workers: g.workers, Unlabeled: d.mnistTrain})
	}, d.mnistTrain.Labels, mtd, eval.LabelConfig{PerClass: sz.labelBudgets, Seed: g.seed,
		Run: eval.RunOptions{Workers: g.workers, Progress: bar}})
	bar.Done()
	if err != nil {
		return err
	}
	curve.Data = mt.Name
	rep.Labels = append(rep.Labels, curve)
	for _, p := range curve.Points {
		fmt.Fprintf(w, "  %4d labels per class: %.2f%%\n", p.PerClass, 100*p.Accuracy)
	}

	// The front end's invariance: grating probe of each pipeline's front end.
	for _, s := range specs[1] {
		m := mnistModels[s.name]
		if m == nil {
			continue
		}
		fe, err := v1layer.New(m.Config().Front)
		if err != nil {
			return err
		}
		rows, err := eval.Invariance(fe.Apply, eval.InvarianceConfig{})
		if err != nil {
			return err
		}
		rep.Invariance = append(rep.Invariance, eval.InvarianceResult{Model: s.name, Channels: fe.Channels(), Rows: rows})
	}

	rep.Notes = append(rep.Notes, fmt.Sprintf("The whole job took %s with %d workers.", time.Since(start).Round(time.Second), g.workers))
	files, err := eval.WriteReport(g.out, rep)
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "report written to %s (%d files) in %s\n", g.out, len(files), time.Since(start).Round(time.Second))
	return nil
}

// addBankFigures puts the hand-set and the learned bank side by side in the
// report, with the learned atoms' Gabor-fit statistics and histograms.
func addBankFigures(rep *eval.Report, learned *pipeline.Model, frep pipeline.FitReport) error {
	hb, err := v1layer.GaborBank(v1layer.GaborConfig{})
	if err != nil {
		return err
	}
	rep.Banks = append(rep.Banks,
		eval.BankPanel{Name: "hand-set", Bank: hb},
		eval.BankPanel{Name: "learned", Bank: learned.Config().Front.Bank, Report: frep.Bank})
	return nil
}

// firstN returns the first n images of s (all of them when n is 0 or at
// least s.N): a fixed, unshuffled prefix of a published test split.
func firstN(s *datasets.Set, n int) *datasets.Set {
	if n <= 0 || n >= s.N {
		return s
	}
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	return s.Subset(idx)
}

// firstData returns the first n images of d (all when n is 0 or ≥ len).
func firstData(d *eval.Data, n int) *eval.Data {
	if n <= 0 || n >= len(d.Images) {
		return d
	}
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	return d.Subset(idx)
}
