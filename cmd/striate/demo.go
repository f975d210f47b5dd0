package main

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"runtime/debug"
	"strings"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/internal/safefile"
	"github.com/striate/striate/pipeline"
	"github.com/striate/striate/v1layer"
)

func init() {
	register(&command{
		name:    "demo",
		summary: "run the main job on embedded defaults (garment-sorting example)",
		example: `  striate demo                         # full job, report in striate-report/ (12 min on 2 cores, SIMD build)
  striate demo --quick --out /tmp/r    # small subsets (about 1 min, SIMD build)
  GOEXPERIMENT=simd go run ./cmd/striate demo   # the SIMD build (Go 1.26, amd64): about twice as fast
  striate demo --data-only             # just load and summarise the data
  striate demo --config mine.json      # train your own pipeline configuration instead
  striate demo --mnist DIR             # MNIST from a folder instead of the Go module cache`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			var o demoOptions
			fs.StringVar(&o.mnistDir, "mnist", "", "MNIST `folder` (default: $STRIATE_MNIST_DIR, else the GoMNIST Go module)")
			fs.StringVar(&o.fashionDir, "fashion", "", "Fashion-MNIST `folder` (default: $STRIATE_FASHION_DIR, else "+datasets.FashionDefaultDir+")")
			fs.BoolVar(&o.quick, "quick", false, "small subsets so the whole job takes about a minute (SIMD build)")
			fs.BoolVar(&o.dataOnly, "data-only", false, "only load the data and print its summary")
			g.addSeed(fs)
			g.addWorkers(fs)
			g.addConfig(fs)
			g.addOut(fs, "striate-report")
			g.addQuiet(fs)
			return func(args []string) error {
				if len(args) > 0 {
					return usagef("demo takes no arguments, got %q", args)
				}
				return runDemo(g, o)
			}
		},
	})
}

// demoMemoryLimit is the demo's soft memory limit unless GOMEMLIMIT is set:
// 1.4 GB, above the full job's largest live heap (about 1.1 GB: a learned
// garments fit's training features and the four datasets) so that the
// collector does not run back to back, and under its 1.5 GB target.
const demoMemoryLimit = 1_400_000_000

type demoOptions struct {
	mnistDir, fashionDir string
	quick, dataOnly      bool
}

func runDemo(g *globals, o demoOptions) error {
	w := g.stdout
	fmt.Fprintln(w, "striate demo: a garment-sorting station at a second-hand clothing depot")
	fmt.Fprintf(w, "build: %s\n", v1layer.Build())
	if runtime.GOARCH == "amd64" && !strings.HasPrefix(v1layer.Build(), "simd") {
		fmt.Fprintln(w, "  (the SIMD build runs this job about twice as fast: GOEXPERIMENT=simd go run ./cmd/striate demo)")
	}
	fmt.Fprintln(w)
	sets, err := eval.LoadMainJobData(o.fashionDir, o.mnistDir)
	if err != nil {
		return err
	}
	if err := sets.WriteSummary(w); err != nil {
		return err
	}
	photos, err := datasets.Photos()
	if err != nil {
		return err
	}
	eval.WritePhotoSummary(w, photos)
	if o.dataOnly {
		return nil
	}
	var cfg *pipeline.Config
	if g.config != "" {
		c, err := pipeline.LoadConfig(g.config)
		if err != nil {
			return err
		}
		cfg = &c
	}
	if err := os.MkdirAll(g.out, 0o755); err != nil {
		return err
	}
	if err := safefile.CheckDir(filepath.Join(g.out, eval.ReportMarkdown)); err != nil {
		return err
	}
	if os.Getenv("GOMEMLIMIT") == "" {
		// A soft limit on the Go heap (runtime/debug.SetMemoryLimit): the
		// garbage collector then runs before garbage from one step (the
		// last fit's training features) piles on the next step's, instead
		// of letting the heap grow to twice its live size.
		defer debug.SetMemoryLimit(debug.SetMemoryLimit(demoMemoryLimit))
	}
	start := time.Now()
	rep, err := eval.MainJob(sets, eval.MainJobConfig{Quick: o.quick, Config: cfg, Seed: g.seed, Workers: g.workers,
		Command: commandLine()}, jobMonitor{g})
	if err != nil {
		return err
	}
	files, err := eval.WriteReport(g.out, rep)
	if err != nil {
		return err
	}
	fmt.Fprintf(w, "report written to %s (%d files) in %s\n", g.out, len(files), time.Since(start).Round(time.Second))
	return nil
}
