package main

import (
	"flag"
	"fmt"
	"path/filepath"

	"github.com/striate/striate/eval"
)

func init() {
	register(&command{
		name:      "extract",
		flagsOnly: true,
		summary:   "write a model's feature vectors for a data set to NPY files",
		usage:     "",
		example: `  striate extract --model fashion.striate --data fashion --out feats
      # feats/features.npy  float32 N×D   (np.load("feats/features.npy"))
      # feats/labels.npy    int32   N
      # feats/extract.json  what was extracted, from which model and data

  # split across 8 machines (job-array index 0..7), then merge:
  striate extract --model m.striate --data mnist:train --out feats --shard 5/8
  striate extract --merge --out feats       # byte-identical to the unsharded files`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			var o extractOptions
			fs.StringVar(&o.model, "model", "", "model `file` written by striate train")
			fs.StringVar(&o.data, "data", "", dataFlagHelp)
			fs.StringVar(&o.shard, "shard", "", "extract only shard `i/n` (i = 0..n-1; auto or auto/n in a Slurm array task or Kubernetes indexed Job)")
			fs.BoolVar(&o.merge, "merge", false, "merge the shards found in --out into features.npy and labels.npy")
			fs.IntVar(&o.batch, "batch", 512, "images per extraction batch")
			g.addWorkers(fs)
			g.addQuiet(fs)
			g.addOut(fs, "features")
			return func(args []string) error {
				return runExtract(g, o)
			}
		},
	})
}

type extractOptions struct {
	model, data, shard string
	merge              bool
	batch              int
}

func runExtract(g *globals, o extractOptions) error {
	if o.merge {
		if o.model != "" || o.data != "" || o.shard != "" {
			return usagef("--merge reads everything from the shards in --out; drop --model, --data and --shard")
		}
		m, err := eval.MergeFeatures(g.out)
		if err != nil {
			return err
		}
		fmt.Fprintf(g.stdout, "merged %d shards: %d×%d features into %s\n", m.Shards, len(m.Labels), m.Meta.Cols, filepath.Join(g.out, "features.npy"))
		return nil
	}
	if o.batch < 1 {
		return usagef("--batch %d; want at least 1", o.batch)
	}
	i, n := 0, 1
	if o.shard != "" {
		var err error
		if i, n, err = parseShard(o.shard); err != nil {
			return err
		}
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
	meta, err := eval.ExtractShard(g.out, o.model, o.data, m, set, i, n, o.shard != "", o.batch, g.workers, jobMonitor{g})
	if err != nil {
		return err
	}
	fmt.Fprintf(g.stdout, "%d×%d features of %s (images %d to %d) written to %s\n", meta.Hi-meta.Lo, meta.Cols, set.Name, meta.Lo, meta.Hi-1, g.out)
	return nil
}
