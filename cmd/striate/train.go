package main

import (
	"flag"
	"strings"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
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
  striate train --data /srv/depot/photos --out garments.striate        # one subfolder of images per class
  striate train --data fashion --scenes auto --out fashion.striate    # + the scanner's "no item" threshold`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			data := fs.String("data", "mnist", "training data: `mnist`, fashion, a folder of IDX files named like MNIST's, or a folder with one subfolder of images per class")
			labels := fs.Int("labels", 0, "use only this many labelled images per class (seeded; 0 = all); the unsupervised stages still see every training image without its label")
			preset := fs.String("preset", "auto", "pipeline preset: default, digits, garments, or auto (digits for --data mnist, garments for fashion, default otherwise); ignored with --config")
			int8 := fs.Bool("int8", false, "save the template layer and head quantised to int8, calibrated on 1000 training images (a smaller model, integer arithmetic after the front end)")
			scenes := fs.String("scenes", "", "also choose the scanner's \"no item\" threshold and store it in the model: `auto` (200 scenes built from 2000 training images held out of the fit, seeded; auto:N for N scenes) or a scene folder built from the TRAINING split only (striate cannot tell where its items came from; the model records its scenes.json checksum and scan/evaluate refuse to score that folder)")
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
					p = eval.AutoPreset(*data)
				}
				if _, err := pipeline.Preset(p); err != nil {
					return usagef("--preset %q; want auto, %s", *preset, strings.Join(pipeline.PresetNames(), ", "))
				}
				return runTrain(g, *data, *labels, p, *mirror, *int8, *scenes)
			}
		},
	})
}

func runTrain(g *globals, data string, perClass int, preset string, mirror, int8 bool, scenes string) error {
	tc := eval.TrainConfig{Preset: preset, Data: data, PerClass: perClass, Mirror: mirror, Int8: int8,
		Seed: g.seed, Workers: g.workers, Out: g.out, Scenes: scenes}
	if g.config != "" {
		c, err := pipeline.LoadConfig(g.config)
		if err != nil {
			return err
		}
		tc.Config = &c
	}
	open := func(spec string, h, w int) (*datasets.Set, error) { return loadSpec(spec, h, w, g.stderr) }
	_, err := eval.Train(tc, open, jobMonitor{g})
	return err
}
