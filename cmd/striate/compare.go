package main

import (
	"flag"
	"fmt"
	"os"

	"github.com/striate/striate/eval"
	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:    "compare",
		summary: "compare two models on the same test images: McNemar test and bootstrap interval",
		usage:   "A.striate B.striate",
		example: `  striate compare --data fashion hand.striate learned.striate
  striate compare --data fashion --out cmp --robust quick hand.striate learned.striate
  striate compare --data mnist --resamples 10000 --seed 3 a.striate b.striate`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			data := fs.String("data", "", dataFlagHelp)
			resamples := fs.Int("resamples", 2000, "paired bootstrap resamples")
			robust := fs.String("robust", "none", "robustness sweep `mode` for both models: none, quick or full")
			batch := fs.Int("batch", 256, "images per prediction batch")
			g.addSeed(fs)
			g.addWorkers(fs)
			g.addQuiet(fs)
			g.addOut(fs, "")
			return func(args []string) error {
				if len(args) != 2 {
					return usagef("compare takes two model files, got %d arguments", len(args))
				}
				return runCompare(g, *data, args[0], args[1], *resamples, *robust, *batch)
			}
		},
	})
}

func runCompare(g *globals, spec, pathA, pathB string, resamples int, robust string, batch int) error {
	if resamples < 100 {
		return usagef("--resamples %d; want at least 100", resamples)
	}
	levels, err := robustLevels(robust)
	if err != nil {
		return err
	}
	ma, err := loadModel(pathA)
	if err != nil {
		return err
	}
	mb, err := loadModel(pathB)
	if err != nil {
		return err
	}
	if err := eval.Comparable(ma, mb); err != nil {
		return err
	}
	h, w := ma.InputSize()
	set, err := loadSpec(spec, h, w, g.stderr)
	if err != nil {
		return err
	}
	nameA, nameB := modelName(pathA), modelName(pathB)
	if nameA == nameB {
		nameA, nameB = pathA, pathB
	}
	cfg := eval.CompareConfig{Resamples: resamples, Seed: g.seed}
	mc, err := eval.CompareModels([2]string{nameA, nameB}, [2]*pipeline.Model{ma, mb}, set, cfg,
		eval.RunOptions{Workers: g.workers, Batch: batch}, jobMonitor{g})
	if err != nil {
		return err
	}
	if g.out == "" {
		return mc.WriteText(g.stdout, nil)
	}
	if err := os.MkdirAll(g.out, 0o755); err != nil {
		return err
	}
	rep, under, err := mc.Report(fmt.Sprintf("striate comparison: %s vs %s", nameA, nameB), commandLine(), levels)
	if err != nil {
		return err
	}
	if err := mc.WriteText(g.stdout, under); err != nil {
		return err
	}
	return writeReport(g, rep)
}
