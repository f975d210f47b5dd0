package main

import (
	"flag"
	"fmt"
	"os"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

func init() {
	register(&command{
		name:    "train",
		summary: "fit a pipeline on MNIST, Fashion-MNIST or an IDX folder and save the model",
		usage:   "",
		example: `  striate train --data mnist --out mnist.stm
  striate train --data fashion --config fashion.json --seed 7 --out fashion.stm
  striate train --data mnist --labels 100 --out mnist-100.stm      # 100 labels per class
  striate train --data /srv/depot/idx --out garments.stm           # train-/t10k-*-idx?-ubyte[.gz] files`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			data := fs.String("data", "mnist", "training data: `mnist`, fashion, or a folder of IDX files named like MNIST's")
			labels := fs.Int("labels", 0, "use only this many labelled images per class (seeded; 0 = all); the unsupervised stages still see every training image without its label")
			g.addSeed(fs)
			g.addWorkers(fs)
			g.addConfig(fs)
			g.addQuiet(fs)
			fs.StringVar(&g.out, "out", "model.stm", "model `file` to write")
			return func(args []string) error {
				if len(args) > 0 {
					return usagef("unexpected argument %q (train takes flags only)", args[0])
				}
				if *labels < 0 {
					return usagef("--labels %d; want 0 (all) or a positive count per class", *labels)
				}
				return runTrain(g, *data, *labels)
			}
		},
	})
}

// loadData returns the training split and, when there is one, the test split.
func loadData(data string, split datasets.Split) (*datasets.Set, error) {
	switch data {
	case "mnist":
		return datasets.LoadMNIST(split, "")
	case "fashion":
		return datasets.LoadFashionMNIST(split, "")
	}
	if st, err := os.Stat(data); err != nil || !st.IsDir() {
		return nil, usagef("--data %q is neither mnist, fashion nor a folder", data)
	}
	return datasets.LoadMNIST(split, data)
}

func runTrain(g *globals, data string, perClass int) error {
	cfg := pipeline.Config{}
	if g.config != "" {
		var err error
		if cfg, err = pipeline.LoadConfig(g.config); err != nil {
			return err
		}
	} else {
		cfg = pipeline.DefaultConfig()
	}
	cfg.Seed = g.seed
	train, err := loadData(data, datasets.Train)
	if err != nil {
		return err
	}
	opts := pipeline.FitOptions{Workers: g.workers}
	if perClass > 0 {
		opts.Unlabeled = train
		train = train.Subset(datasets.PerClass(train.Labels, perClass, g.seed))
	}
	bar := g.newProgress(train.N, "train")
	opts.Progress = bar
	start := time.Now()
	m, rep, err := pipeline.FitReported(cfg, train, opts)
	bar.Done()
	if err != nil {
		return err
	}
	if err := m.SaveFile(g.out); err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "trained on %d images of %s (%d features) in %v: unsupervised %v, features %v, head %v (%d epochs)\n",
		train.N, train.Name, rep.FeatureLen, time.Since(start).Round(time.Second), rep.Unsupervised.Round(time.Second),
		rep.Features.Round(time.Second), rep.HeadTime.Round(time.Second), rep.Head.Epochs)
	if rep.Bank != nil {
		fmt.Fprintf(g.stdout, "learned bank in %v: %d atoms, %d quadrature pairs, %.0f%% Gabor-like (R² ≥ 0.8)\n",
			rep.BankTime.Round(time.Second), len(rep.Bank.Fits), rep.Bank.Pairs, 100*rep.Bank.FracGaborLike)
	}
	fmt.Fprintf(g.stdout, "model written to %s\n", g.out)

	test, err := loadData(data, datasets.Test)
	if err != nil {
		fmt.Fprintf(g.stdout, "no test split to score on: %v\n", err)
		return nil
	}
	bar = g.newProgress(test.N, "test")
	acc, err := pipeline.Accuracy(m, test, nil, g.workers, bar)
	bar.Done()
	if err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "test accuracy %.2f%% (%d of %d)\n", 100*acc, int(acc*float64(test.N)+0.5), test.N)
	return nil
}
