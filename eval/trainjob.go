package eval

import (
	"fmt"
	"strings"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/internal/safefile"
	"github.com/striate/striate/pipeline"
)

// AutoPreset is the preset chosen for a data spec when none is named: digits
// for "mnist", garments for "fashion", default otherwise.
func AutoPreset(spec string) string {
	switch spec {
	case "mnist":
		return "digits"
	case "fashion":
		return "garments"
	}
	return "default"
}

// TrainConfig says what Train fits, on what, and where the model goes.
type TrainConfig struct {
	Config   *pipeline.Config // the pipeline; nil means Preset
	Preset   string           // a pipeline.Preset name, used when Config is nil
	Data     string           // a data spec (datasets.Open): its training split is fitted, its test split scored
	PerClass int              // labelled images per class (seeded); 0 means all
	Mirror   bool             // also train on mirror images (sets the config's Mirror)
	Int8     bool             // save the model quantised to int8 (pipeline.Model.Quantize)
	Seed     uint64
	Workers  int
	Out      string // the model file
	// Scenes makes Train learn the scanner's "no item" decision: "" does
	// not; "auto" holds AutoHoldout training images out of the fit
	// (HoldOut) and builds AutoScenes validation scenes from them
	// (AutoValidationScenes, seeded by Seed), "auto:N" N of them (N in
	// [1, MaxAutoScenes]); anything else is a scene
	// folder, which must be built from the training split (see
	// ReadValidationFolder for what is checked). The threshold chosen
	// (ChooseScan) is stored in the model file.
	Scenes string
	// Scan holds the scan settings the threshold is chosen with; its zero
	// value is pipeline's default (its Threshold is ignored).
	Scan pipeline.ScanConfig
}

// SceneAuto is the TrainConfig.Scenes value that builds validation scenes
// from held-out training images.
const SceneAuto = "auto"

// MaxAutoScenes bounds N of TrainConfig.Scenes "auto:N" (10,000 frames of
// 128×128 float32 are 640 MiB).
const MaxAutoScenes = 10000

// autoScenes parses TrainConfig.Scenes: whether it asks for auto scenes,
// and how many.
func autoScenes(s string) (n int, auto bool, err error) {
	if s == SceneAuto {
		return AutoScenes, true, nil
	}
	v, ok := strings.CutPrefix(s, SceneAuto+":")
	if !ok {
		return 0, false, nil
	}
	if _, err := fmt.Sscan(v, &n); err != nil || n < 1 || n > MaxAutoScenes || fmt.Sprint(n) != v {
		return 0, true, fmt.Errorf("eval: --scenes %s: want auto, auto:N with N in [1, %d] (default %d scenes), or a scene folder", s, MaxAutoScenes, AutoScenes)
	}
	return n, true, nil
}

// TrainResult is what Train did.
type TrainResult struct {
	Model       *pipeline.Model
	Train, Test *datasets.Set // Train as fitted (the labelled subset); Test nil when the data has no test split
	Report      pipeline.FitReport
	Elapsed     time.Duration
	Accuracy    float64 // on Test; 0 without a test split
	// Scan is the scan section stored in the model (nil without
	// TrainConfig.Scenes).
	Scan *pipeline.StoredScan
}

// Train fits cfg's pipeline on the training split of cfg.Data, saves it to
// cfg.Out (atomically) and scores it on the test split when there is one.
// The output file and both splits are checked before the fit starts, so a
// bad path, a missing split or a bad scene folder costs no training. With
// cfg.Scenes it also chooses and stores the scanner's "no item" threshold
// on validation scenes of the training split, after the fit (and after
// quantising). open loads a data spec at
// the pipeline's input size (the caller decides how its errors read); mon
// gets the progress bars and the lines a person reads.
func Train(cfg TrainConfig, open func(spec string, h, w int) (*datasets.Set, error), mon JobMonitor) (*TrainResult, error) {
	var pc pipeline.Config
	if cfg.Config != nil {
		pc = *cfg.Config
	} else {
		var err error
		if pc, err = pipeline.Preset(cfg.Preset); err != nil {
			return nil, err
		}
		mon.Logf("preset %s: %s", cfg.Preset, pipeline.PresetAbout(cfg.Preset))
	}
	pc.Seed = cfg.Seed
	pc.Mirror = pc.Mirror || cfg.Mirror
	trainSpec, testSpec := datasets.SpecSplits(cfg.Data)
	in := pc.Input
	if in.Height == 0 || in.Width == 0 {
		in = pipeline.DefaultConfig().Input
	}
	if err := safefile.CheckDir(cfg.Out); err != nil {
		return nil, err
	}
	nAuto, auto, err := autoScenes(cfg.Scenes)
	if err != nil {
		return nil, err
	}
	if cfg.Scenes != "" && !auto && !IsSceneFolder(cfg.Scenes) {
		return nil, fmt.Errorf("eval: --scenes %s: not a scene folder (no %s in it); give a folder built from the training split, or %s", cfg.Scenes, datasets.SceneIndex, SceneAuto)
	}
	r := &TrainResult{}
	train, err := open(trainSpec, in.Height, in.Width)
	if err != nil {
		return nil, err
	}
	if testSpec != "" {
		if r.Test, err = open(testSpec, in.Height, in.Width); err != nil {
			return nil, err
		}
	}
	var val []datasets.Scene
	var source, index string
	switch {
	case cfg.Scenes == "":
	case auto:
		var held *datasets.Set
		train, held = HoldOut(train, cfg.Seed)
		if val, err = AutoValidationScenes(held, nAuto, cfg.Seed); err != nil {
			return nil, err
		}
		source = fmt.Sprintf("auto: %d scenes of %d training images held out of the fit, seed %d", len(val), held.N, cfg.Seed)
		mon.Logf("%d training images held out of the fit for %d validation scenes", held.N, len(val))
	default:
		vf, err := ReadValidationFolder(cfg.Scenes, train.Classes)
		if err != nil {
			return nil, err
		}
		val, source, index = vf.Scenes, "scene folder "+cfg.Scenes, vf.Index
	}
	start := time.Now()
	if r.Model, r.Report, r.Train, err = FitLabelled(pc, train, cfg.PerClass, cfg.Seed, cfg.Workers, mon); err != nil {
		return nil, err
	}
	if cfg.Int8 {
		if r.Model, err = r.Model.Quantize(r.Train, pipeline.QuantizeOptions{Workers: cfg.Workers}); err != nil {
			return nil, err
		}
	}
	if val != nil {
		ms, st, err := ChooseScan(r.Model, val, cfg.Scan, source, index, cfg.Workers, mon)
		if err != nil {
			// Keep the fit: write the model without a threshold, then fail.
			if werr := safefile.Write(cfg.Out, r.Model.Save); werr != nil {
				return nil, werr
			}
			return nil, fmt.Errorf("%w; the model was written to %s without a stored threshold (scan then uses %v unless given --threshold)", err, cfg.Out, pipeline.DefaultThreshold)
		}
		r.Model, r.Scan = ms, &st
	}
	if err := safefile.Write(cfg.Out, r.Model.Save); err != nil {
		return nil, err
	}
	r.Elapsed = time.Since(start)
	var sum strings.Builder
	WriteFitSummary(&sum, r.Train, r.Report, r.Elapsed)
	mon.Logf("%smodel written to %s", sum.String(), cfg.Out)
	if r.Test == nil {
		mon.Logf("no test split in %s to score on (score with: striate evaluate --model %s --data FOLDER)", cfg.Data, cfg.Out)
		return r, nil
	}
	bar := mon.Start(r.Test.N, "test")
	r.Accuracy, err = pipeline.Accuracy(r.Model, r.Test, nil, cfg.Workers, bar)
	bar.Done()
	if err != nil {
		return nil, err
	}
	mon.Logf("test accuracy %.2f%% (%d of %d)", 100*r.Accuracy, int(r.Accuracy*float64(r.Test.N)+0.5), r.Test.N)
	return r, nil
}
