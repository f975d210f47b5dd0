package main

import (
	"flag"
	"fmt"
	"path/filepath"

	"github.com/striate/striate/eval"
	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:    "scan",
		summary: "find, box and name every item in camera frames (files, folders, scene folders)",
		usage:   "IMAGE|FOLDER|SCENE-FOLDER...",
		example: `  striate scan --model fashion.striate belt-0001.png
  striate scan --model fashion.striate --json belt/ > items.jsonl   # one JSON object per frame
  striate scan --model fashion.striate --out rep belt-scenes/      # + annotated frames; a scene folder
                                                                   #   (scenes.json) also gets AP and a report
JSON lines: {"file", "width", "height", "items": [{"class", "score", "box": [x0, y0, x1, y1]}]}.`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			var o scanOptions
			fs.StringVar(&o.model, "model", "", "model `file` written by striate train")
			fs.BoolVar(&o.json, "json", false, "write JSON lines on stdout (the text and scores go to stderr)")
			fs.BoolVar(&o.truth, "truth", false, "every argument must be a scene folder with ground truth (scenes.json)")
			fs.Float64Var(&o.cfg.Threshold, "threshold", 0, "the \"no item\" `probability` below which a window is not an item (0: the one striate train --scenes stored in the model, else 0.5)")
			fs.IntVar(&o.cfg.MaxItems, "max-items", 0, "stop after `n` items per frame (0: 10)")
			fs.IntVar(&o.cfg.ItemSize, "item-size", 0, "typical item side in frame `px` (0: the model's input side)")
			g.addWorkers(fs)
			g.addQuiet(fs)
			g.addOut(fs, "")
			return func(args []string) error {
				if len(args) == 0 {
					return usagef("scan needs at least one image file or folder")
				}
				return runScan(g, o, args)
			}
		},
	})
}

type scanOptions struct {
	model       string
	json, truth bool
	cfg         pipeline.ScanConfig
}

func runScan(g *globals, o scanOptions, args []string) error {
	m, err := loadModel(o.model)
	if err != nil {
		return err
	}
	if _, err := pipeline.NewScanner(m, o.cfg); err != nil {
		return usageError{"--threshold, --max-items or --item-size: " + err.Error()}
	}
	src, skipped, err := eval.ScanSources(m.Classes(), o.truth, args...)
	if err != nil {
		return err
	}
	for _, s := range skipped {
		fmt.Fprintf(g.stderr, "striate scan: skipped: %s: %s\n", s.Path, s.Reason)
	}
	text := g.stdout
	if o.json {
		text = g.stderr
	}
	skip := func(err error) { fmt.Fprintf(g.stderr, "striate scan: skipped: %v\n", err) }
	job, err := eval.RunScan(m, src, eval.ScanJobConfig{Scan: o.cfg, Workers: g.workers, Out: g.out}, jobMonitor{g}, skip, eval.FrameWriter(g.stdout, m.Classes(), o.json))
	if err != nil {
		return err
	}
	for _, n := range job.Notes {
		fmt.Fprintf(g.stderr, "striate scan: note: %s\n", n)
	}
	if g.out != "" {
		fmt.Fprintf(text, "annotated frames: %s, items: %s\n", filepath.Join(g.out, eval.ScanFrames), filepath.Join(g.out, eval.ScanItemsFile))
	}
	if job.Scores != nil {
		fmt.Fprint(text, eval.SceneSummary(job.Scores, job.Classes))
	}
	if g.out != "" && job.Scores != nil {
		if _, err := job.WriteReport(g.out, "striate scan: "+modelName(o.model), commandLine(), modelName(o.model)); err != nil {
			return err
		}
		fmt.Fprintf(text, "report: %s (open %s)\n", g.out, filepath.Join(g.out, eval.ReportHTML))
	}
	if job.Skipped > 0 {
		return fmt.Errorf("%d of %d files could not be scanned", job.Skipped, len(src))
	}
	return nil
}
