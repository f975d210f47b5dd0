package main

import (
	"flag"
	"fmt"
	"strconv"
	"strings"

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
	g       *globals
}

// benchSection is one block of the table. Packages that add timings (sparse
// coding, pipeline) append a section from an init function in their own
// cmd/striate file; sections run in order.
type benchSection struct {
	Name string
	Rows func(bc *benchContext) ([]benchRow, error)
}

var benchSections = []benchSection{{Name: "front end", Rows: benchFrontEnd}}

func init() {
	register(&command{
		name:    "bench",
		summary: "time striate on the reference work and print it beside the peers' figures",
		usage:   "",
		example: `  striate bench                       # the reference work built into the binary
  striate bench --ref /data/bench --quick
  GOEXPERIMENT=simd go run ./cmd/striate bench   # the SIMD build (Go 1.26, amd64)`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			ref := fs.String("ref", "", "reference `folder` to use instead of the built-in reference work (holding filterbank.json, filterbank_kernels.json, README.md and data/crops256_8x8.png)")
			quick := fs.Bool("quick", false, "time a subset (1,000 MNIST images, 16 crops, 2 repeats) in a few seconds")
			threads := fs.String("threads", "1,2", "comma-separated thread counts to time")
			repeats := fs.Int("repeats", 5, "timed repeats after one warm-up; the median is reported")
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
				bc := &benchContext{Dir: dir, Quick: *quick, Threads: ts, Repeats: *repeats, g: g}
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
	return frontbench.WriteTable(g.stdout, rows)
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
