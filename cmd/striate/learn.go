package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"github.com/striate/striate/eval"
	"github.com/striate/striate/learn"
)

func init() {
	register(&command{
		name:      "learn",
		flagsOnly: true,
		summary:   "learn a simple-cell bank by sparse coding of whitened patches from the shipped photos",
		usage:     "",
		example: `  striate learn --out bank/                       # 256 atoms of 16×16: bank.json, config.json, atoms.png, bank_hist.png
  striate train --data fashion --config bank/config.json --out learned.striate   # a pipeline on that bank
  striate learn --quick --out /tmp/bank           # a small, fast run (for tests and a first look)
  striate learn --atoms 192 --epochs 8 --out bank192/
  striate learn --forget 10 --epochs 1 --out bank-fast/    # one pass with a fast-forgetting past (Mairal et al.'s ρ)
  striate learn --whiten zca --eps 0.01 --lambda 1 --out bank-zca/   # ZCA-whitened patches instead`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			quick := fs.Bool("quick", false, "small fast run: 64 atoms of 8×8 from 5,000 patches, 2 passes")
			atoms := fs.Int("atoms", 256, "dictionary atoms K")
			size := fs.Int("size", 16, "patch side in pixels (atoms are size×size)")
			patches := fs.Int("patches", 50000, "training patches sampled from the photos")
			lambda := fs.Float64("lambda", 2, "sparsity weight λ in ½‖x − Dᵀa‖² + λ‖a‖₁ (patches have unit pixel variance after Olshausen & Field's whitening, --whiten of)")
			whiten := fs.String("whiten", "of", "whitening `kind`: of (Olshausen & Field's f·exp(−(f/f0)⁴) filter on the photos) or zca (on the patches)")
			f0 := fs.Float64("f0", 0.25, "cut-off of the of filter, cycles/pixel")
			eps := fs.Float64("eps", 0.01, "ZCA regulariser ε (squared [0,1] pixel units), with --whiten zca")
			epochs := fs.Int("epochs", 6, "passes over the training patches")
			batch := fs.Int("batch", 256, "minibatch size")
			forget := fs.Float64("forget", 0, "ρ of the past scaling (1 − n/N)^ρ of the dictionary update (Mairal et al. 2010 §3.4.2); 0 keeps the default, which averages the first minibatch-size steps evenly and then remembers about that many steps")
			g.addSeed(fs)
			g.addWorkers(fs)
			g.addQuiet(fs)
			g.addOut(fs, "bank")
			return func(args []string) error {
				if *whiten != "of" && *whiten != "zca" {
					return usagef("--whiten %q; want of or zca", *whiten)
				}
				if *quick {
					*atoms, *size, *patches, *epochs = 64, 8, 5000, 2
				}
				if *forget < 0 {
					return usagef("--forget %g; want 0 (the default schedule, see -h) or ρ > 0", *forget)
				}
				if *atoms < 1 || *size < 3 || *patches < *atoms || *epochs < 1 || *batch < 1 {
					return usagef("--atoms %d, --size %d, --patches %d, --epochs %d, --batch %d: want atoms ≥ 1, size ≥ 3, patches ≥ atoms, epochs ≥ 1, batch ≥ 1",
						*atoms, *size, *patches, *epochs, *batch)
				}
				return runLearn(g, learnArgs{atoms: *atoms, size: *size, patches: *patches, lambda: *lambda,
					whiten: *whiten, f0: *f0, eps: *eps, epochs: *epochs, batch: *batch, forget: *forget})
			}
		},
	})
}

type learnArgs struct {
	atoms, size, patches, epochs, batch int
	lambda, f0, eps, forget             float64
	whiten                              string
}

func runLearn(g *globals, a learnArgs) error {
	cfg := learn.PhotoBankConfig{PatchSize: a.size, Patches: a.patches, Whiten: a.whiten, ZCAEps: a.eps, F0: a.f0,
		Dict: learn.DictConfig{Atoms: a.atoms, Lambda: a.lambda, BatchSize: a.batch, Epochs: a.epochs, Forget: a.forget}}
	if err := os.MkdirAll(g.out, 0o755); err != nil { // before the long work
		return err
	}
	start := time.Now()
	pb, err := eval.LearnPhotoBank(cfg, g.seed, g.workers, jobMonitor{g})
	if err != nil {
		return err
	}
	fitTime := time.Since(start)
	histErr, err := eval.WriteBankFiles(g.out, pb, g.seed)
	if histErr != nil {
		fmt.Fprintf(g.stderr, "striate learn: no histograms: %v\n", histErr)
	}
	if err != nil {
		return err
	}
	w := g.stdout
	if err := eval.WriteBankSummary(w, cfg, pb.Report, fitTime); err != nil {
		return err
	}
	fmt.Fprintf(w, "wrote %s/{bank.json,config.json,atoms.png,bank_hist.png}\n", g.out)
	fmt.Fprintf(w, "train a pipeline on this bank: striate train --data fashion --config %s\n", filepath.Join(g.out, "config.json"))
	return nil
}
