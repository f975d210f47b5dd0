package main

import (
	"flag"
	"fmt"
	"strconv"
	"strings"

	"github.com/striate/striate/eval"
	"github.com/striate/striate/internal/benchwork"
	"github.com/striate/striate/internal/frontbench"
	"github.com/striate/striate/v1layer"
)

// benchRow is one line of the `striate bench` table.
type benchRow = frontbench.Row

// benchContext is what every section gets.
type benchContext struct {
	Dir     string // reference folder; "" = the built-in reference work
	Quick   bool
	Threads []int
	Repeats int
	Full    bool
	g       *globals
	stages  *eval.BenchReport
}

// benchSection is one block of the table. Packages that add timings (sparse
// coding, pipeline) append a section from an init function in their own
// cmd/striate file; sections run in order.
type benchSection struct {
	Name string
	Rows func(bc *benchContext) ([]benchRow, error)
}

var benchSections = []benchSection{{Name: "front end", Rows: benchFrontEnd}, {Name: "stages", Rows: benchStages}}

func init() {
	register(&command{
		name:    "bench",
		summary: "time striate on the reference work and print it beside the peers' figures",
		usage:   "",
		example: `  striate bench                       # the reference work built into the binary
  striate bench --ref /data/bench --quick
  striate bench --full                # plus the 60,000-image fits the targets need
  GOEXPERIMENT=simd go run ./cmd/striate bench   # the SIMD build (Go 1.26, amd64)`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			ref := fs.String("ref", "", "reference `folder` to use instead of the built-in reference work (holding filterbank.json, filterbank_kernels.json, README.md and data/crops256_8x8.png)")
			quick := fs.Bool("quick", false, "time a subset (1,000 MNIST images, 16 crops, 2 repeats) in a few seconds")
			threads := fs.String("threads", "1,2", "comma-separated thread counts to time")
			repeats := fs.Int("repeats", 5, "timed repeats after one warm-up; the median is reported")
			full := fs.Bool("full", false, "also fit the presets on all 60,000 MNIST and Fashion-MNIST training images and score them (minutes)")
			g.addQuiet(fs)
			return func(args []string) error {
				if len(args) != 0 {
					return usagef("bench takes no arguments, got %q", args)
				}
				var ts []int
				for _, f := range strings.Split(*threads, ",") {
					n, err := strconv.Atoi(strings.TrimSpace(f))
					if err != nil || n < 1 || n > 256 {
						return usagef("--threads %q: want comma-separated counts in [1,256], e.g. 1,2", *threads)
					}
					ts = append(ts, n)
				}
				if *repeats < 1 || *repeats > 100 {
					return usagef("--repeats %d out of range [1,100]", *repeats)
				}
				dir, err := benchwork.FindDir(*ref)
				if err != nil {
					return err
				}
				bc := &benchContext{Dir: dir, Quick: *quick, Threads: ts, Repeats: *repeats, Full: *full, g: g}
				if *quick && *repeats == 5 {
					bc.Repeats = 2
				}
				return runBench(bc)
			}
		},
	})
}

func runBench(bc *benchContext) error {
	g := bc.g
	fmt.Fprintf(g.stdout, "reference work: %s\nbuild: %s\n\n", bc.Dir, v1layer.Build())
	var rows []benchRow
	for _, s := range benchSections {
		r, err := s.Rows(bc)
		if err != nil {
			return fmt.Errorf("section %s: %w", s.Name, err)
		}
		rows = append(rows, r...)
	}
	if err := frontbench.WriteTable(g.stdout, rows); err != nil || bc.stages == nil {
		return err
	}
	fmt.Fprintln(g.stdout)
	for _, n := range bc.stages.Notes {
		fmt.Fprintf(g.stdout, "  %s\n", n)
	}
	fmt.Fprintln(g.stdout, "\ntargets:")
	return eval.WriteTargets(g.stdout, eval.BenchTargets(rows, bc.stages.Facts))
}

// benchStages times the stages past the front end (eval.Bench).
func benchStages(bc *benchContext) ([]benchRow, error) {
	bar := bc.g.newProgress(3, "timing sparse coding, templates, fits and latency")
	r, err := eval.Bench(eval.BenchConfig{Quick: bc.Quick, Full: bc.Full}, bar)
	bar.Done()
	if err != nil {
		return nil, err
	}
	bc.stages = r
	return r.Rows, nil
}

// benchFrontEnd times the default front end on the reference work
// (frontbench.FrontEnd).
func benchFrontEnd(bc *benchContext) ([]benchRow, error) {
	bar := bc.g.newProgress(2*len(bc.Threads), "timing the front end")
	rep, err := frontbench.FrontEnd(bc.Dir, frontbench.FrontEndConfig{Quick: bc.Quick, Threads: bc.Threads, Repeats: bc.Repeats}, bar)
	bar.Done()
	if err != nil {
		return nil, err
	}
	fmt.Fprintf(bc.g.stdout, "front end: default config = reference bank (%d kernels, max |Δ| %.1e vs filterbank_kernels.json)\n", rep.Kernels, rep.KernelMax)
	for _, s := range rep.Sets {
		fmt.Fprintf(bc.g.stdout, "  %s\n", s)
	}
	fmt.Fprintln(bc.g.stdout)
	return rep.Rows, nil
}
