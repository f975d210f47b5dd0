package main

import (
	"flag"
	"fmt"
	"strings"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/internal/safefile"
	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:      "train",
		flagsOnly: true,
		summary:   "fit a pipeline on MNIST, Fashion-MNIST, an IDX folder or a folder of class subfolders and save the model",
		usage:     "",
		example: `  striate train --data mnist --out mnist.striate
  striate train --data fashion --out fashion.striate                 # preset "garments" (auto for fashion)
  striate train --data /srv/depot/photos --preset garments --out garments.striate
  striate train --data fashion --config fashion.json --seed 7 --out fashion.striate
  striate train --data mnist --labels 100 --out mnist-100.striate      # 100 labels per class
  striate train --data /srv/depot/idx --out garments.striate           # train-/t10k-*-idx?-ubyte[.gz] files
  striate train --data /srv/depot/photos --out garments.striate        # one subfolder of images per class`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			data := fs.String("data", "mnist", "training data: `mnist`, fashion, a folder of IDX files named like MNIST's, or a folder with one subfolder of images per class")
			labels := fs.Int("labels", 0, "use only this many labelled images per class (seeded; 0 = all); the unsupervised stages still see every training image without its label")
			preset := fs.String("preset", "auto", "pipeline preset: default, digits, garments, or auto (digits for --data mnist, garments for fashion, default otherwise); ignored with --config")
			int8 := fs.Bool("int8", false, "save the template layer and head quantised to int8, calibrated on 1000 training images (a smaller model, integer arithmetic after the front end)")
			mirror := fs.Bool("mirror", false, "also train on mirror images and average each prediction over the image and its mirror image (sets the config's mirror; for classes that look the same mirrored, such as garments, not digits)")
			g.addSeed(fs)
			g.addWorkers(fs)
			g.addConfig(fs)
			g.addQuiet(fs)
			fs.StringVar(&g.out, "out", "model.striate", "model `file` to write")
			return func(args []string) error {
				if *labels < 0 {
					return usagef("--labels %d; want 0 (all) or a positive count per class", *labels)
				}
				p := *preset
				if p == "auto" {
					p = autoPreset(*data)
				}
				if _, err := pipeline.Preset(p); err != nil {
					return usagef("--preset %q; want auto, %s", *preset, strings.Join(pipeline.PresetNames(), ", "))
				}
				return runTrain(g, *data, *labels, p, *mirror, *int8)
			}
		},
	})
}

// autoPreset is the preset --preset auto picks for --data.
func autoPreset(data string) string {
	switch data {
	case "mnist":
		return "digits"
	case "fashion":
		return "garments"
	}
	return "default"
}

func runTrain(g *globals, data string, perClass int, preset string, mirror, int8 bool) error {
	var cfg pipeline.Config
	var err error
	if g.config != "" {
		if cfg, err = pipeline.LoadConfig(g.config); err != nil {
			return err
		}
	} else {
		if cfg, err = pipeline.Preset(preset); err != nil {
			return err
		}
		fmt.Fprintf(g.stdout, "preset %s: %s\n", preset, pipeline.PresetAbout(preset))
	}
	cfg.Seed = g.seed
	cfg.Mirror = cfg.Mirror || mirror
	trainSpec, testSpec := datasets.SpecSplits(data)
	in := cfg.Input
	if in.Height == 0 || in.Width == 0 {
		in = pipeline.DefaultConfig().Input
	}
	// Check the output and both splits before the long work starts.
	if err := safefile.CheckDir(g.out); err != nil {
		return err
	}
	train, err := loadSpec(trainSpec, in.Height, in.Width, g.stderr)
	if err != nil {
		return err
	}
	var test *datasets.Set
	if testSpec != "" {
		if test, err = loadSpec(testSpec, in.Height, in.Width, g.stderr); err != nil {
			return err
		}
	}
	start := time.Now()
	m, rep, train, err := eval.FitLabelled(cfg, train, perClass, g.seed, g.workers, jobMonitor{g})
	if err != nil {
		return err
	}
	if int8 {
		if m, err = m.Quantize(train, pipeline.QuantizeOptions{Workers: g.workers}); err != nil {
			return err
		}
	}
	if err := safefile.Write(g.out, m.Save); err != nil {
		return err
	}
	if err := eval.WriteFitSummary(g.stdout, train, rep, time.Since(start)); err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "model written to %s\n", g.out)

	if testSpec == "" {
		fmt.Fprintf(g.stdout, "no test split in %s to score on (score with: striate evaluate --model %s --data FOLDER)\n", data, g.out)
		return nil
	}
	bar := g.newProgress(test.N, "test")
	acc, err := pipeline.Accuracy(m, test, nil, g.workers, bar)
	bar.Done()
	if err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "test accuracy %.2f%% (%d of %d)\n", 100*acc, int(acc*float64(test.N)+0.5), test.N)
	return nil
}
