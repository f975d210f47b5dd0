package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:    "evaluate",
		summary: "score a model on a test set: accuracy, per-class scores, calibration, report",
		usage:   "",
		example: `  striate evaluate --model fashion.stm --data fashion                # print the scores
  striate evaluate --model fashion.stm --data fashion --out rep      # + rep/report.md, report.html, results.json
  striate evaluate --model fashion.stm --data fashion --out rep --robust quick --speed
  striate evaluate --model mnist.stm --data ./depot-photos           # a folder of class sub-folders

  # split across 4 machines (job-array index 0..3), then merge:
  striate evaluate --model m.stm --data mnist --out shards --shard 2/4
  striate evaluate --merge --out shards`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			var o evalOptions
			fs.StringVar(&o.model, "model", "", "model `file` written by striate train")
			fs.StringVar(&o.data, "data", "", dataFlagHelp)
			fs.StringVar(&o.shard, "shard", "", "evaluate only shard `i/n` (i = 0..n-1) and write its predictions to --out")
			fs.BoolVar(&o.merge, "merge", false, "merge the shards found in --out into predictions.npy, scores and a report")
			fs.StringVar(&o.robust, "robust", "none", "robustness sweep `mode`: none, quick (3 levels per perturbation) or full (4-5 levels)")
			fs.BoolVar(&o.speed, "speed", false, "also measure throughput, latency and peak heap")
			fs.IntVar(&o.batch, "batch", 256, "images per prediction batch")
			g.addSeed(fs)
			g.addWorkers(fs)
			g.addQuiet(fs)
			g.addOut(fs, "")
			return func(args []string) error {
				if len(args) > 0 {
					return usagef("unexpected argument %q (evaluate takes flags only)", args[0])
				}
				return runEvaluate(g, o)
			}
		},
	})
}

type evalOptions struct {
	model, data, shard, robust string
	merge, speed               bool
	batch                      int
}

// pipeline.Model is what eval scores.
var _ eval.Predictor = (*pipeline.Model)(nil)

const dataFlagHelp = "test data `spec`: " + datasets.SpecHelp

// loadSpec loads the data named by spec at h×w (datasets.Open); the files an
// image folder leaves out are listed on warn. A malformed spec is a usage
// error.
func loadSpec(spec string, h, w int, warn io.Writer) (*datasets.Set, error) {
	if spec == "" {
		return nil, usagef("--data is required: %s", datasets.SpecHelp)
	}
	s, rep, err := datasets.Open(spec, datasets.OpenConfig{H: h, W: w})
	if rep != nil && len(rep.Skipped) > 0 {
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

// checkClasses requires the data's classes to be the model's, in order.
func checkClasses(m *pipeline.Model, s *datasets.Set) error {
	if mc := m.Classes(); !slices.Equal(mc, s.Classes) {
		return fmt.Errorf("data %s has classes %v but the model was trained on %v; evaluate on data with the same classes", s.Name, s.Classes, mc)
	}
	return nil
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

// parseShard reads --shard i/n (eval.ParseShard) as a usage error.
func parseShard(s string) (i, n int, err error) {
	if i, n, err = eval.ParseShard(s); err != nil {
		return 0, 0, usageError{"--shard: " + err.Error()}
	}
	return i, n, nil
}

// progressFor returns the command's progress bar as an eval.Progress.
func progressFor(g *globals, total int, what string) *progress { return g.newProgress(total, what) }

func runEvaluate(g *globals, o evalOptions) error {
	if o.merge {
		if g.out == "" {
			return usagef("--merge needs --out, the folder holding the shards")
		}
		if o.shard != "" || o.model != "" || o.data != "" {
			return usagef("--merge reads everything from the shards in --out; drop --model, --data and --shard")
		}
		return mergeEvaluate(g)
	}
	levels, err := robustLevels(o.robust)
	if err != nil {
		return err
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
	if err := checkClasses(m, set); err != nil {
		return err
	}
	data := eval.FromSet(set)
	if o.shard != "" {
		if g.out == "" {
			return usagef("--shard needs --out, the folder the shard's predictions go to")
		}
		if levels != nil || o.speed {
			return usagef("--shard evaluates predictions only; run --robust and --speed unsharded")
		}
		return evaluateShard(g, o, m, data)
	}
	bar := progressFor(g, len(data.Images), "predict")
	probs, met, err := eval.PredictScore(m, data, eval.RunOptions{Workers: g.workers, Batch: o.batch, Progress: bar})
	bar.Done()
	if err != nil {
		return err
	}
	name := modelName(o.model)
	printScores(g.stdout, name, data, met)
	if g.out == "" {
		return nil
	}
	if err := os.MkdirAll(g.out, 0o755); err != nil {
		return err
	}
	if err := eval.WritePredictions(g.out, "", probs, data.Labels); err != nil {
		return err
	}
	rep := newReport(g, "striate evaluation: "+name)
	rep.Data = []eval.Provenance{provenance(set, 0)}
	mr := eval.ModelResult{Name: name, Data: data.Name, Metrics: met}
	if o.speed {
		if mr.Speed, err = eval.ModelSpeed(m, data.Images[:min(len(data.Images), 2000)], h, w, g.workers); err != nil {
			return err
		}
	}
	rep.Models = []eval.ModelResult{mr}
	rep.Config = map[string]pipeline.Config{name: m.Config()}
	if levels != nil {
		rb, err := robustness(g, name, m, data, levels, o.batch)
		if err != nil {
			return err
		}
		rep.Robustness = []*eval.Robustness{rb}
	}
	if iv, bank, err := eval.FrontInvariance(name, m); err == nil {
		rep.Invariance = []eval.InvarianceResult{iv}
		rep.Banks = []eval.BankPanel{{Name: name, Bank: bank}}
	} else {
		rep.Notes = append(rep.Notes, "invariance probe skipped: "+err.Error())
	}
	return writeReport(g, rep)
}

func robustLevels(s string) (map[datasets.PerturbKind][]float64, error) {
	switch s {
	case "", "none":
		return nil, nil
	case "quick":
		return eval.QuickLevels, nil
	case "full":
		return eval.StandardLevels, nil
	}
	return nil, usagef("--robust %q; want none, quick or full", s)
}

func modelName(path string) string {
	return strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
}

func newReport(g *globals, title string) *eval.Report {
	return &eval.Report{
		Title:   title,
		Created: time.Now().UTC(),
		Command: "striate " + strings.Join(os.Args[1:], " "),
		Summary: "Garment-sorting station at a second-hand clothing depot: how well striate's recognizers tell item types apart, how sure they are, and how they hold up.",
	}
}

func provenance(s *datasets.Set, train int) eval.Provenance {
	return eval.Provenance{Name: s.Name, Source: s.Source, Train: train, Test: s.N, H: s.H, W: s.W, Classes: s.Classes}
}

func writeReport(g *globals, rep *eval.Report) error {
	files, err := eval.WriteReport(g.out, rep)
	if err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "report: %s (%d files; open %s)\n", g.out, len(files), filepath.Join(g.out, eval.ReportHTML))
	return nil
}

func printScores(w io.Writer, name string, d *eval.Data, m *eval.Metrics) {
	fmt.Fprintf(w, "%s on %s (%d images): accuracy %.2f%% (95%% CI %.2f-%.2f%%), macro F1 %.4f, log-loss %.4f nats, ECE %.4f\n",
		name, d.Name, m.N, 100*m.Accuracy, 100*m.CI.Lo, 100*m.CI.Hi, m.Macro.F1, m.LogLoss, m.ECE)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "class\tprecision\trecall\tF1\tsupport\t")
	for _, c := range m.PerClass {
		fmt.Fprintf(tw, "%s\t%.4f\t%.4f\t%.4f\t%d\t\n", c.Class, c.Precision, c.Recall, c.F1, c.Support)
	}
	tw.Flush()
}

func robustness(g *globals, name string, m eval.Predictor, d *eval.Data, levels map[datasets.PerturbKind][]float64, batch int) (*eval.Robustness, error) {
	conds, err := eval.StandardConditions(levels)
	if err != nil {
		return nil, err
	}
	bar := progressFor(g, len(conds), "robustness "+name)
	defer bar.Done()
	return eval.RobustnessSweep(name, m, d, conds, eval.RobustnessConfig{Seed: g.seed, Run: eval.RunOptions{Workers: g.workers, Batch: batch, Progress: bar}})
}

func evaluateShard(g *globals, o evalOptions, m *pipeline.Model, d *eval.Data) error {
	i, n, err := parseShard(o.shard)
	if err != nil {
		return err
	}
	lo, hi := eval.ShardRange(i, n, len(d.Images))
	h, w := m.InputSize()
	bar := progressFor(g, hi-lo, fmt.Sprintf("predict shard %d/%d", i, n))
	probs, err := eval.Predict(m, d.Images[lo:hi], h, w, eval.RunOptions{Workers: g.workers, Batch: o.batch, Progress: bar})
	bar.Done()
	if err != nil {
		return err
	}
	sum, err := eval.FileSHA256(o.model)
	if err != nil {
		return err
	}
	meta := eval.ShardMeta{Kind: "predictions", Model: o.model, ModelSHA256: sum, Data: d.Name, DataSpec: o.data,
		Total: len(d.Images), Shard: i, Shards: n, Lo: lo, Hi: hi, Cols: m.NumClasses(), Classes: d.Classes}
	if err := os.MkdirAll(g.out, 0o755); err != nil {
		return err
	}
	if err := eval.WriteShard(g.out, meta, eval.Flatten(probs), d.Labels[lo:hi]); err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "shard %d/%d: images %d to %d of %d predicted into %s\n", i, n, lo, hi-1, len(d.Images), g.out)
	return nil
}

func mergeEvaluate(g *globals) error {
	mg, err := eval.MergeShards(g.out, "predictions")
	if err != nil {
		return err
	}
	meta, rows, labels := mg.Meta, mg.Rows(), mg.Labels
	met, err := eval.Score(labels, rows, meta.Classes, eval.MetricsConfig{})
	if err != nil {
		return err
	}
	name := modelName(meta.Model)
	d := &eval.Data{Name: meta.Data, Classes: meta.Classes}
	printScores(g.stdout, name, d, met)
	if err := eval.WritePredictions(g.out, "", rows, labels); err != nil {
		return err
	}
	rep := newReport(g, "striate evaluation: "+name)
	rep.Data = []eval.Provenance{{Name: d.Name, Source: meta.DataSpec, Test: len(labels), Classes: d.Classes,
		Note: fmt.Sprintf("merged from %d shards", mg.Shards)}}
	rep.Models = []eval.ModelResult{{Name: name, Data: d.Name, Metrics: met}}
	return writeReport(g, rep)
}
