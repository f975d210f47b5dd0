package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:      "evaluate",
		flagsOnly: true,
		summary:   "score a model on a test set: accuracy, per-class scores, calibration, report",
		usage:     "",
		example: `  striate evaluate --model fashion.striate --data fashion                # print the scores
  striate evaluate --model fashion.striate --data fashion --out rep      # + rep/report.md, report.html, results.json
  striate evaluate --model fashion.striate --data fashion --out rep --robust quick --speed
  striate evaluate --model mnist.striate --data mnist --suite dev --peer lenet5.json   # MNIST-C + grid beside LeNet-5
  striate evaluate --model mnist.striate --data ./depot-photos           # a folder of class sub-folders
  striate evaluate --model fashion.striate --data belt-scenes --out rep # a scene folder (scenes.json): AP, mAP

  # split across 4 machines (job-array index 0..3), then merge:
  striate evaluate --model m.striate --data mnist --out shards --shard 2/4
  striate evaluate --model m.striate --data mnist --out shards --shard auto   # in a Slurm array task (README: job arrays)
  striate evaluate --merge --out shards`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			var o evalOptions
			fs.StringVar(&o.model, "model", "", "model `file` written by striate train")
			fs.StringVar(&o.data, "data", "", dataFlagHelp)
			fs.StringVar(&o.shard, "shard", "", "evaluate only shard `i/n` (i = 0..n-1; auto or auto/n in a Slurm array task or Kubernetes indexed Job) and write its predictions to --out")
			fs.BoolVar(&o.merge, "merge", false, "merge the shards found in --out into predictions.npy, scores and a report")
			fs.StringVar(&o.robust, "robust", "none", "robustness sweep `mode`: none, quick (3 levels per perturbation) or full (4-5 levels)")
			fs.StringVar(&o.suite, "suite", "none", "development `suite` scored and printed (and reported with --out): none; dev (15 MNIST-C corruptions at severities 1-5 and the perturbation grid, 131 conditions); mnistc (the 15 corruptions at the published severity); grid (the perturbation grid); heldout (7 held-out kinds at severities 1-5, never used to choose settings); all (dev then heldout)")
			fs.StringVar(&o.peer, "peer", "", "peer figures `files` (comma-separated JSON written by testdata/peer/lenet5.py) shown beside the --suite scores")
			fs.BoolVar(&o.targets, "targets", false, "print the robustness targets as met / missed (needs --suite all and --peer, --data mnist or fashion)")
			fs.BoolVar(&o.speed, "speed", false, "also measure throughput, latency and peak heap")
			fs.IntVar(&o.batch, "batch", 256, "images per prediction batch")
			g.addSeed(fs)
			g.addWorkers(fs)
			g.addQuiet(fs)
			g.addOut(fs, "")
			return func(args []string) error {
				return runEvaluate(g, o)
			}
		},
	})
}

type evalOptions struct {
	model, data, shard, robust string
	suite, peer                string
	merge, speed, targets      bool
	batch                      int
}

// pipeline.Model is what eval scores.
var _ eval.Predictor = (*pipeline.Model)(nil)

const dataFlagHelp = "test data `spec`: " + datasets.SpecHelp

// loadSpec loads the data named by spec at h×w (datasets.Open); the files an
// image folder leaves out and its empty class folders are listed on warn. A
// malformed spec is a usage error.
func loadSpec(spec string, h, w int, warn io.Writer) (*datasets.Set, error) {
	if spec == "" {
		return nil, usagef("--data is required: %s", datasets.SpecHelp)
	}
	s, rep, err := datasets.Open(spec, datasets.OpenConfig{H: h, W: w})
	if rep != nil && rep.HasNotes() {
		fmt.Fprintln(warn, rep.String())
	}
	var se *datasets.SpecError
	switch {
	case errors.Is(err, datasets.ErrBadSpec):
		return nil, usageError{"--data: " + err.Error()}
	case errors.As(err, &se):
		return nil, fmt.Errorf("--data: %w", err)
	}
	return s, err
}

// loadModel loads a model file, saying which flag named it.
func loadModel(path string) (*pipeline.Model, error) {
	if path == "" {
		return nil, usagef("--model is required (a file written by striate train)")
	}
	m, err := pipeline.LoadFile(path)
	if err != nil {
		return nil, fmt.Errorf("model %s: %w", path, err)
	}
	return m, nil
}

// parseShard reads --shard i/n, auto or auto/n (eval.ResolveShard) as a
// usage error.
func parseShard(s string) (i, n int, err error) {
	if i, n, err = eval.ResolveShard(s, os.LookupEnv); err != nil {
		return 0, 0, usageError{"--shard: " + err.Error()}
	}
	return i, n, nil
}

func runEvaluate(g *globals, o evalOptions) error {
	if o.merge {
		if g.out == "" {
			return usagef("--merge needs --out, the folder holding the shards")
		}
		if o.shard != "" || o.model != "" || o.data != "" {
			return usagef("--merge reads everything from the shards in --out; drop --model, --data and --shard")
		}
		me, err := eval.MergeEvaluation(g.out, "striate evaluation: ", commandLine(), modelName)
		if err != nil {
			return err
		}
		eval.WriteScores(g.stdout, me.Name, me.Data, me.Metrics)
		return writeReport(g, me.Report)
	}
	if eval.IsSceneFolder(o.data) { // frames with ground truth: the scanner's scene metrics
		if o.shard != "" || o.robust != "none" || o.suite != "none" || o.peer != "" || o.speed {
			return usagef("--data %s is a scene folder, scored by the scanner alone; drop --shard, --robust, --suite, --peer and --speed", o.data)
		}
		return runScan(g, scanOptions{model: o.model, truth: true}, []string{o.data})
	}
	levels, err := robustLevels(o.robust)
	if err != nil {
		return err
	}
	suite, err := eval.NamedSuite(o.suite)
	if err != nil {
		return usageError{"--suite: " + err.Error()}
	}
	if o.peer != "" && suite == nil {
		return usagef("--peer needs --suite (%s), the suite the peer figures were taken on", strings.Join(eval.SuiteNames[1:], ", "))
	}
	if _, ok := eval.CleanTarget(o.data); o.targets && (!ok || o.suite != "all" || o.peer == "") {
		return usagef("--targets needs --suite all, --peer and --data mnist or fashion")
	}
	m, err := loadModel(o.model)
	if err != nil {
		return err
	}
	h, w := m.InputSize()
	set, err := loadSpec(o.data, h, w, g.stderr)
	if err != nil {
		return err
	}
	run := eval.RunOptions{Workers: g.workers, Batch: o.batch}
	if o.shard != "" {
		if g.out == "" {
			return usagef("--shard needs --out, the folder the shard's predictions go to")
		}
		if levels != nil || o.speed || suite != nil {
			return usagef("--shard evaluates predictions only; run --robust, --suite and --speed unsharded")
		}
		i, n, err := parseShard(o.shard)
		if err != nil {
			return err
		}
		meta, err := eval.PredictShard(g.out, o.model, o.data, m, set, i, n, run, jobMonitor{g})
		if err != nil {
			return err
		}
		fmt.Fprintf(g.stdout, "shard %d/%d: images %d to %d of %d predicted into %s\n", i, n, meta.Lo, meta.Hi-1, meta.Total, g.out)
		return nil
	}
	cfg := eval.EvaluateConfig{Levels: levels, Suite: suite, Speed: o.speed, Seed: g.seed, Run: run}
	if o.peer != "" {
		if cfg.Peer, err = eval.ReadPeers(o.peer); err != nil {
			return fmt.Errorf("--peer: %w", err)
		}
	}
	name := modelName(o.model)
	ev, err := eval.Evaluate(name, m, set, cfg, jobMonitor{g})
	if err != nil {
		return err
	}
	eval.WriteScores(g.stdout, name, ev.Data, ev.Metrics)
	if ev.Suite != nil {
		eval.WriteSuite(g.stdout, ev.Suite)
	}
	if o.targets {
		if err := eval.WriteSuiteTargets(g.stdout, ev.Suite, o.data); err != nil {
			return err
		}
	}
	if g.out == "" {
		return nil
	}
	if err := os.MkdirAll(g.out, 0o755); err != nil {
		return err
	}
	if err := eval.WritePredictions(g.out, "", ev.Probs, ev.Data.Labels); err != nil {
		return err
	}
	rep, err := ev.Report("striate evaluation: "+name, commandLine())
	if err != nil {
		return err
	}
	return writeReport(g, rep)
}

// robustLevels reads --robust (eval.RobustLevels) as a usage error.
func robustLevels(s string) (map[datasets.PerturbKind][]float64, error) {
	levels, err := eval.RobustLevels(s)
	if err != nil {
		return nil, usageError{"--robust: " + err.Error()}
	}
	return levels, nil
}

func modelName(path string) string {
	return strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
}

// commandLine is the command line recorded in reports.
func commandLine() string { return "striate " + strings.Join(os.Args[1:], " ") }

func writeReport(g *globals, rep *eval.Report) error {
	files, err := eval.WriteReport(g.out, rep)
	if err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "report: %s (%d files; open %s)\n", g.out, len(files), filepath.Join(g.out, eval.ReportHTML))
	return nil
}
