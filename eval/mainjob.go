package eval

import (
	"fmt"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
	"github.com/striate/striate/v1layer"
)

// MainJobData holds the four splits the main job uses: the published
// training and test splits of Fashion-MNIST and MNIST.
type MainJobData struct {
	FashionTrain, FashionTest, MNISTTrain, MNISTTest *datasets.Set
}

// MainJobConfig configures MainJob. The zero value runs the full job with
// seed 0, the presets and one worker.
type MainJobConfig struct {
	// Quick runs small subsets (300 labelled images per class, the first
	// 2,000 test images, smaller unsupervised budgets): figures are
	// indicative only.
	Quick bool
	// Config, when not nil, is trained on both datasets in place of the
	// presets (digits for MNIST, garments for Fashion-MNIST) with
	// MainJobHead.
	Config *pipeline.Config
	// Seed seeds every fit, subset and sweep.
	Seed uint64
	// Workers is the number of goroutines for batch work, passed to every fit,
	// prediction and sweep.
	Workers int
	// Command is recorded in the report (the command line that ran it).
	Command string
}

// JobProgress is the progress of one step of a long job; Done ends it.
type JobProgress interface {
	Progress
	Done()
}

// JobMonitor receives a long job's progress and results, for the caller to
// show (a library never prints): Start begins a step of total units (0 when
// not known in advance), Logf is one line of result text without a newline.
type JobMonitor interface {
	Start(total int, what string) JobProgress
	Logf(format string, a ...any)
}

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
	bankAtoms     int // atoms of the learned bank; 0 = default (fewer atoms: fewer channels, features and memory)
}

// mainJobLevels are the robustness levels of the full job: the conditions the
// accuracy targets name, fewer in-between levels than StandardLevels so
// that four models are swept within the time budget.
var mainJobLevels = map[datasets.PerturbKind][]float64{
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
			levels: QuickLevels, speedImages: 500, headMinSteps: 600, unlabeled: 3000, bankPatches: 6000, bankEpochs: 4, bankAtoms: 12}
	}
	// The full job's learned bank has 12 atoms, as the quick job's: with
	// LearnBank's default 24, the learned garments pipeline (mirror images
	// double its rows) holds 1.4 GB of training features, and the job's
	// peak resident memory was 2.45 GB; with 12 it is 0.9 GB at most
	// (Plan.FitWork's bound) and the job stays within 1.5 GB.
	return jobSizes{trainPerClass: 0, test: 0, sweepTest: 5000, labelBudgets: []int{10, 100, 1000},
		levels: mainJobLevels, speedImages: 2000, bankAtoms: 12}
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

// MainJobHead is the head of the main job's pipelines: the default MLP with 128
// hidden units and 8 epochs instead of 512 and 15, which trains about six
// times faster and costs a few tenths of a point; the accuracy runs of the
// pipeline package (and "striate train") use the full default.
var MainJobHead = learn.HeadConfig{Kind: learn.KindMLP, Hidden: 128, Epochs: 8, Schedule: learn.ScheduleCosine, ValFrac: -1}

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
// MainJobHead, or c for both when it is not nil.
func demoConfig(c *pipeline.Config, preset string) (pipeline.Config, error) {
	if c != nil {
		return *c, nil
	}
	p, err := pipeline.Preset(preset)
	p.Head = MainJobHead
	if p.Mirror {
		// Mirror doubles the training rows: half the epochs keep the
		// number of head steps, and so the demo's time, as without it.
		p.Head.Epochs = max(1, MainJobHead.Epochs/2)
	}
	return p, err
}

// MainJob is the job "striate demo" runs: it learns a bank, trains the hand-set and learned pipelines on
// Fashion-MNIST (the garment-sorting station) and MNIST, compares them, runs
// the robustness and label-efficiency sweeps, scans belt frames of several
// items of each dataset's test split (the belt step; the threshold chosen
// on frames of its training split) and returns the report (which
// the caller writes with WriteReport). Progress and one-line results go to
// mon. The full job takes about 15 minutes on two cores, the quick one
// (cfg.Quick) about two.
func MainJob(d *MainJobData, cfg MainJobConfig, mon JobMonitor) (*Report, error) {
	start := time.Now()
	sz := sizesFor(cfg.Quick)
	bsz := beltSizesFor(cfg.Quick)
	rep := &Report{
		Title: "striate: hand-set and learned V1-like front ends",
		Summary: "A garment-sorting station at a second-hand clothing depot sorts items by type on a small CPU board. " +
			"This report trains two recognizers that differ only in their simple-cell bank (hand-set Gabor filters, or " +
			"filters learned by sparse coding of whitened natural-photo patches) on Fashion-MNIST (the garments) and " +
			"MNIST, and evaluates them on the published test splits.",
		Command: cfg.Command,
	}
	if cfg.Quick {
		rep.Notes = append(rep.Notes, fmt.Sprintf("Quick run: %d labelled training images per class and the first %d test images; "+
			"figures are indicative only. Run without --quick for the full result.", sz.trainPerClass, sz.test))
	}
	// specs[k] are the two pipelines of dataset k (Fashion-MNIST, MNIST).
	var specs [2][]modelSpec
	configs := map[string]pipeline.Config{}
	for k, ds := range []struct{ name, preset string }{{"Fashion-MNIST", "garments"}, {"MNIST", "digits"}} {
		base, err := demoConfig(cfg.Config, ds.preset)
		if err != nil {
			return nil, err
		}
		specs[k] = mainJobSpecs(base, cfg.Seed)
		for i := range specs[k] {
			sz.shrink(&specs[k][i].cfg)
			configs[specs[k][i].name+" on "+ds.name] = specs[k][i].cfg
		}
		if cfg.Config == nil {
			rep.Notes = append(rep.Notes, fmt.Sprintf("On %s both pipelines use the %q preset (%s).", ds.name, ds.preset, pipeline.PresetAbout(ds.preset)))
		}
	}
	rep.Config = configs

	type dataPair struct {
		train, test *datasets.Set
	}
	sets := []dataPair{{d.FashionTrain, d.FashionTest}, {d.MNISTTrain, d.MNISTTest}}
	var mnistModels = map[string]*pipeline.Model{}
	var banksDrawn bool
	for k, dp := range sets {
		specs := specs[k]
		train := dp.train
		val, valNote := dp.train, dp.train.Name+" training images (all of them fitted: the full job fits the whole training split)"
		if sz.trainPerClass > 0 {
			idx := datasets.PerClass(train.Labels, sz.trainPerClass, cfg.Seed)
			train = train.Subset(idx)
			val, valNote = unfitted(dp.train, idx), dp.train.Name+" training images the fit left out"
		}
		var beltModel *pipeline.Model
		test := dp.test.First(sz.test)
		td := FromSet(test)
		rep.Data = append(rep.Data, Provenance{Name: dp.test.Name, Source: dp.test.Source, TrainName: dp.train.Name, Train: train.N,
			Test: test.N, H: test.H, W: test.W, Classes: test.Classes})
		preds := map[string][]int{}
		for _, s := range specs {
			mon.Logf("training %s on %s (%d images)", s.name, train.Name, train.N)
			bar := mon.Start(train.N, s.name)
			t0 := time.Now()
			m, frep, err := pipeline.FitReported(s.cfg, train, pipeline.FitOptions{Workers: cfg.Workers, Progress: bar})
			bar.Done()
			if err != nil {
				return nil, fmt.Errorf("training %s on %s: %w", s.name, train.Name, err)
			}
			secs := time.Since(t0).Seconds()
			if !banksDrawn && frep.Bank != nil {
				if err := addBankFigures(rep, m, frep); err != nil {
					return nil, err
				}
				banksDrawn = true
			}
			bar = mon.Start(len(td.Images), "test "+s.name)
			probs, met, err := PredictScore(m, td, RunOptions{Workers: cfg.Workers, Progress: bar})
			bar.Done()
			if err != nil {
				return nil, err
			}
			preds[s.name] = Classify(probs)
			mr := ModelResult{Name: s.name, Data: dp.test.Name, Description: s.desc, TrainSeconds: secs, Metrics: met}
			n := min(sz.speedImages, len(td.Images))
			if mr.Speed, err = ModelSpeed(m, td.Images[:n], td.H, td.W, cfg.Workers); err != nil {
				return nil, err
			}
			rep.Models = append(rep.Models, mr)
			mon.Logf("  %s on %s: accuracy %.2f%% [%.2f, %.2f] (trained in %.0f s)", s.name, test.Name,
				100*met.Accuracy, 100*met.CI.Lo, 100*met.CI.Hi, secs)

			bar = mon.Start(0, "robustness "+s.name)
			conds, err := StandardConditions(sz.levels)
			if err != nil {
				return nil, err
			}
			rob, err := RobustnessSweep(s.name, m, firstData(td, sz.sweepTest), conds, RobustnessConfig{Seed: cfg.Seed,
				Run: RunOptions{Workers: cfg.Workers, Progress: bar}})
			bar.Done()
			if err != nil {
				return nil, err
			}
			rob.Data = dp.test.Name
			rep.Robustness = append(rep.Robustness, rob)
			if dp.train == d.MNISTTrain {
				mnistModels[s.name] = m
			}
			if beltModel == nil {
				beltModel = m
			}
		}
		cmp, err := Compare(specs[0].name, specs[1].name, td.Labels, preds[specs[0].name], preds[specs[1].name],
			CompareConfig{Seed: cfg.Seed})
		if err != nil {
			return nil, err
		}
		rep.Comparisons = append(rep.Comparisons, cmp)
		mon.Logf("  %s vs %s on %s: difference %+.2f points [%+.2f, %+.2f], exact McNemar p = %.3g",
			cmp.NameA, cmp.NameB, test.Name, 100*cmp.Diff, 100*cmp.DiffCI.Lo, 100*cmp.DiffCI.Hi, cmp.PValue)

		// The belt step: whole frames of several items, scanned by the
		// hand-set model.
		mon.Logf("belt step on %s: %d validation scenes (training split), %d test scenes (test split)", dp.test.Name, bsz.val, bsz.test)
		sr, st, err := beltStep(beltModel, specs[0].name, val, dp.test, bsz, valNote, cfg.Seed, cfg.Workers, mon)
		if err != nil {
			return nil, err
		}
		rep.Scenes = append(rep.Scenes, sr)
		rep.Notes = append(rep.Notes, fmt.Sprintf("Belt step on %s: the %s model scans %d test frames of %d×%d px (1-%d items at %.1f-%.1f× size on "+
			"photo-textured belts with %d lint fragments, a tenth empty) built from the %s test split only; its \"no item\" threshold %.4f "+
			"was chosen on %d validation frames of the same layout built from %s (F1 %.3f there), never on test images.",
			dp.test.Name, specs[0].name, bsz.test, datasets.DefaultSceneSize, datasets.DefaultSceneSize, datasets.DefaultSceneMaxItems,
			datasets.DefaultMinItemScale, datasets.DefaultMaxItemScale, BeltScenes.Lint, dp.test.Name, st.Config.Threshold, st.Scenes, valNote, st.F1))
	}

	// Label efficiency on MNIST: the unsupervised stages see the whole
	// training split without labels; the head sees only the budget.
	mt := d.MNISTTest.First(sz.test)
	mtd := FromSet(mt)
	hand := specs[1][0] // hand-set on MNIST
	mon.Logf("label efficiency of %s on MNIST: %v labels per class", hand.name, sz.labelBudgets)
	bar := mon.Start(len(sz.labelBudgets), "label efficiency")
	curve, err := LabelEfficiency(hand.name, func(idx []int) (Predictor, error) {
		return pipeline.Fit(hand.cfg, d.MNISTTrain.Subset(idx), pipeline.FitOptions{Workers: cfg.Workers, Unlabeled: d.MNISTTrain})
	}, d.MNISTTrain.Labels, mtd, LabelConfig{PerClass: sz.labelBudgets, Seed: cfg.Seed,
		Run: RunOptions{Workers: cfg.Workers, Progress: bar}})
	bar.Done()
	if err != nil {
		return nil, err
	}
	curve.Data = mt.Name
	rep.Labels = append(rep.Labels, curve)
	for _, p := range curve.Points {
		mon.Logf("  %4d labels per class: %.2f%%", p.PerClass, 100*p.Accuracy)
	}

	// The front end's invariance: grating probe of each pipeline's front end.
	for _, s := range specs[1] {
		m := mnistModels[s.name]
		if m == nil {
			continue
		}
		iv, _, err := FrontInvariance(s.name, m)
		if err != nil {
			return nil, err
		}
		rep.Invariance = append(rep.Invariance, iv)
	}

	took := fmt.Sprintf("The whole job took %s with %d workers", time.Since(start).Round(time.Second), cfg.Workers)
	if rss := peakRSS(); rss > 0 {
		// getrusage's high-water mark covers the whole process, so a caller
		// that did other work first sees its peak too.
		took += fmt.Sprintf("; the process's peak resident memory was %.2f GB", float64(rss)/1e9)
	}
	rep.Notes = append(rep.Notes, took+".")
	mon.Logf("%s.", took)
	return rep, nil
}

// addBankFigures puts the hand-set and the learned bank side by side in the
// report, with the learned atoms' Gabor-fit statistics and histograms.
func addBankFigures(rep *Report, learned *pipeline.Model, frep pipeline.FitReport) error {
	hb, err := v1layer.GaborBank(v1layer.GaborConfig{})
	if err != nil {
		return err
	}
	rep.Banks = append(rep.Banks,
		BankPanel{Name: "hand-set", Bank: hb},
		BankPanel{Name: "learned", Bank: learned.Config().Front.Bank, Report: frep.Bank})
	return nil
}

// firstData returns the first n images of d (all when n is 0 or ≥ len).
func firstData(d *Data, n int) *Data {
	if n <= 0 || n >= len(d.Images) {
		return d
	}
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	return d.Subset(idx)
}
