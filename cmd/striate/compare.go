package main

import (
	"flag"
	"fmt"
	"os"
	"slices"

	"github.com/striate/striate/eval"
	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:    "compare",
		summary: "compare two models on the same test images: McNemar test and bootstrap interval",
		usage:   "A.stm B.stm",
		example: `  striate compare --data fashion hand.stm learned.stm
  striate compare --data fashion --out cmp --robust quick hand.stm learned.stm
  striate compare --data mnist --resamples 10000 --seed 3 a.stm b.stm`,
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
	h, w := ma.InputSize()
	if hb, wb := mb.InputSize(); hb != h || wb != w {
		return fmt.Errorf("models take different input sizes (%d×%d and %d×%d); compare models built for the same images", h, w, hb, wb)
	}
	if !slices.Equal(ma.Classes(), mb.Classes()) {
		return fmt.Errorf("models have different classes (%v and %v)", ma.Classes(), mb.Classes())
	}
	set, err := loadSpec(spec, h, w, g.stderr)
	if err != nil {
		return err
	}
	if err := checkClasses(ma, set); err != nil {
		return err
	}
	data := eval.FromSet(set)
	nameA, nameB := modelName(pathA), modelName(pathB)
	if nameA == nameB {
		nameA, nameB = pathA, pathB
	}
	names, models := []string{nameA, nameB}, []*pipeline.Model{ma, mb}
	var results []eval.ModelResult
	var preds [][]int
	for k, m := range models {
		bar := progressFor(g, len(data.Images), "predict "+names[k])
		probs, met, err := eval.PredictScore(m, data, eval.RunOptions{Workers: g.workers, Batch: batch, Progress: bar})
		bar.Done()
		if err != nil {
			return err
		}
		printScores(g.stdout, names[k], data, met)
		results = append(results, eval.ModelResult{Name: names[k], Data: data.Name, Metrics: met})
		preds = append(preds, eval.Classify(probs))
	}
	cmp, err := eval.Compare(nameA, nameB, data.Labels, preds[0], preds[1], eval.CompareConfig{Resamples: resamples, Seed: g.seed})
	if err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "\n%s − %s: accuracy difference %+.2f points (95%% paired bootstrap %+.2f to %+.2f, %d resamples, seed %d)\n",
		nameA, nameB, 100*cmp.Diff, 100*cmp.DiffCI.Lo, 100*cmp.DiffCI.Hi, cmp.Resamples, cmp.Seed)
	fmt.Fprintf(g.stdout, "discordant images: %d only %s right, %d only %s right; exact McNemar p = %.4g\n",
		cmp.OnlyA, nameA, cmp.OnlyB, nameB, cmp.PValue)
	if g.out == "" {
		return nil
	}
	if err := os.MkdirAll(g.out, 0o755); err != nil {
		return err
	}
	rep := newReport(g, fmt.Sprintf("striate comparison: %s vs %s", nameA, nameB))
	rep.Data = []eval.Provenance{provenance(set, 0)}
	rep.Models = results
	rep.Comparisons = []*eval.Comparison{cmp}
	rep.Config = map[string]pipeline.Config{nameA: ma.Config(), nameB: mb.Config()}
	if levels != nil {
		for k, m := range models {
			rb, err := robustness(g, names[k], m, data, levels, batch)
			if err != nil {
				return err
			}
			rep.Robustness = append(rep.Robustness, rb)
		}
		under, err := eval.CompareRobustness(rep.Robustness[0], rep.Robustness[1], data.Labels, eval.CompareConfig{Resamples: resamples, Seed: g.seed})
		if err != nil {
			return err
		}
		fmt.Fprintln(g.stdout, "\nunder perturbation (same perturbed images for both):")
		for _, c := range under {
			fmt.Fprintf(g.stdout, "  %-14s %s %.2f%%  %s %.2f%%  diff %+.2f (%+.2f to %+.2f)  McNemar p = %.3g\n",
				c.Condition, nameA, 100*c.AccuracyA, nameB, 100*c.AccuracyB, 100*c.Diff, 100*c.DiffCI.Lo, 100*c.DiffCI.Hi, c.PValue)
		}
		rep.Comparisons = append(rep.Comparisons, under...)
	}
	for k, m := range models {
		if iv, bank, err := eval.FrontInvariance(names[k], m); err == nil {
			rep.Invariance = append(rep.Invariance, iv)
			rep.Banks = append(rep.Banks, eval.BankPanel{Name: names[k], Bank: bank})
		}
	}
	return writeReport(g, rep)
}
