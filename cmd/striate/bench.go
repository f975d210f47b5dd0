package main

import (
	"flag"
	"fmt"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/striate/striate/internal/benchwork"
	"github.com/striate/striate/v1layer"
)

// benchRow is one line of the `striate bench` table.
type benchRow struct {
	Stage    string  // what was timed
	Size     string  // input size, e.g. "28×28"
	Threads  int     // goroutines used
	Striate  float64 // striate's throughput
	Unit     string  // unit of Striate and Peer, e.g. "img/s"
	Peer     float64 // fastest general-purpose peer's figure, 0 if none
	PeerName string
	Build    string // which build produced the figure (plain or simd)
}

// benchContext is what every section gets.
type benchContext struct {
	Dir     string // reference folder (../shared/bench)
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
		example: `  striate bench                       # reference folder ../shared/bench beside the repository
  striate bench --ref /data/bench --quick
  GOEXPERIMENT=simd go run ./cmd/striate bench   # the SIMD build (Go 1.26, amd64)`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			ref := fs.String("ref", "", "reference `folder` holding filterbank.json, README.md and data/ (default: "+benchwork.DefaultRel+" beside the repository root)")
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
	tw := tabwriter.NewWriter(g.stdout, 2, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "stage\tsize\tthreads\tstriate\tpeer\tratio\tunit\tfastest peer\tbuild\t")
	for _, s := range benchSections {
		rows, err := s.Rows(bc)
		if err != nil {
			return fmt.Errorf("section %s: %w", s.Name, err)
		}
		for _, r := range rows {
			peer, ratio := "—", "—"
			if r.Peer > 0 {
				peer = fmtRate(r.Peer)
				ratio = fmt.Sprintf("%.2f×", r.Striate/r.Peer)
			}
			fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\t%s\t\n", r.Stage, r.Size, r.Threads, fmtRate(r.Striate), peer, ratio, r.Unit, r.PeerName, r.Build)
		}
	}
	return tw.Flush()
}

func fmtRate(v float64) string {
	if v >= 1000 {
		s := strconv.FormatFloat(math.Round(v), 'f', 0, 64)
		for i := len(s) - 3; i > 0; i -= 3 {
			s = s[:i] + "," + s[i:]
		}
		return s
	}
	return strconv.FormatFloat(v, 'f', 1, 64)
}

// benchFrontEnd times the default front end (the reference bank of
// filterbank.json, checked kernel by kernel first) over the MNIST test set
// and the 64 photo crops: images / median wall time of the whole set, output
// allocation included, the reference README's protocol.
func benchFrontEnd(bc *benchContext) ([]benchRow, error) {
	fe, err := v1layer.New(v1layer.Config{})
	if err != nil {
		return nil, err
	}
	ref, err := benchwork.Kernels(bc.Dir)
	if err != nil {
		return nil, err
	}
	ks := fe.Kernels()
	if len(ks) != len(ref) {
		return nil, fmt.Errorf("the default front end has %d kernels, the reference bank %d", len(ks), len(ref))
	}
	var worst float64
	for i, k := range ref {
		if ks[i].Size != k.Size {
			return nil, fmt.Errorf("kernel %s: size %d, reference %d", k.Name, ks[i].Size, k.Size)
		}
		for j, v := range k.W {
			worst = math.Max(worst, math.Abs(float64(ks[i].W[j])-v))
		}
	}
	if worst > 1e-6 {
		return nil, fmt.Errorf("the default kernels differ from filterbank_kernels.json by %.3g (want ≤ 1e-6)", worst)
	}
	fmt.Fprintf(bc.g.stdout, "front end: default config = reference bank (18 kernels, max |Δ| %.1e vs filterbank_kernels.json)\n", worst)
	peers, err := benchwork.Peers(bc.Dir)
	if err != nil {
		return nil, err
	}
	nm, nc := 0, 0
	if bc.Quick {
		nm, nc = 1000, 16
	}
	mnist := benchwork.MNIST(nm)
	crops, err := benchwork.Crops(bc.Dir, nc)
	if err != nil {
		return nil, err
	}
	var rows []benchRow
	sets := []*benchwork.Set{mnist, crops}
	total := len(sets) * len(bc.Threads)
	bar := bc.g.newProgress(total, "timing the front end")
	step := 0
	for _, s := range sets {
		fmt.Fprintf(bc.g.stdout, "  %s: %d images from %s\n", s.Name, len(s.Images), s.Source)
		for _, t := range bc.Threads {
			c, oh, ow, err := fe.OutShape(s.H, s.W)
			if err != nil {
				return nil, err
			}
			d := benchwork.Median(bc.Repeats, func() {
				// Output allocation is part of the timed work, as for the
				// peers: one N×C×OH×OW block, like one output tensor.
				n := c * oh * ow
				slab := make([]float32, len(s.Images)*n)
				dst := make([]v1layer.Maps, len(s.Images))
				for i := range dst {
					dst[i] = v1layer.Maps{C: c, H: oh, W: ow, Pix: slab[i*n : (i+1)*n : (i+1)*n]}
				}
				fe.ApplyBatch(dst, s.Images, s.H, s.W, t)
			})
			p, pv := benchwork.Fastest(peers, s.W, t)
			name := p.Name
			if i := strings.Index(name, " ("); i > 0 {
				name = name[:i]
			}
			if t > 2 {
				pv, name = 0, "(peers timed at 1 and 2 threads)"
			}
			rows = append(rows, benchRow{Stage: "front end", Size: fmt.Sprintf("%d×%d", s.H, s.W), Threads: t,
				Striate: float64(len(s.Images)) / d.Seconds(), Unit: "img/s", Peer: pv, PeerName: name,
				Build: buildTag()})
			step++
			bar.Step(step, total, fmt.Sprintf("%s, %d threads: %v", s.Name, t, d.Round(time.Millisecond)))
		}
	}
	bar.Done()
	fmt.Fprintln(bc.g.stdout)
	return rows, nil
}

func buildTag() string {
	if strings.HasPrefix(v1layer.Build(), "simd") {
		return "simd"
	}
	return "plain"
}
