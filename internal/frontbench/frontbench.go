// Package frontbench times striate's front end on the reference work of
// internal/benchwork, for `striate bench`. It is apart from benchwork
// because v1layer's own benchmarks read benchwork's images, so benchwork
// cannot import v1layer.
package frontbench

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"

	"github.com/striate/striate/internal/benchwork"
	"github.com/striate/striate/v1layer"
)

// Row is one line of the benchmark table: striate's throughput on one
// stage, size and thread count beside the fastest general-purpose peer's.
type Row struct {
	Stage    string  // what was timed
	Size     string  // input size, e.g. "28×28"
	Threads  int     // goroutines used
	Striate  float64 // striate's throughput
	Unit     string  // unit of Striate and Peer, e.g. "img/s"
	Peer     float64 // fastest general-purpose peer's figure, 0 if none
	PeerName string
	Build    string // which build produced the figure (plain or simd)
	// PeerHigh > Peer makes the peer's figure the range Peer..PeerHigh;
	// the ratio is then taken against the end nearer striate's figure.
	PeerHigh float64
	// Lower marks a figure where lower is better (seconds, milliseconds,
	// bytes): its ratio is the peer's over striate's, so that above 1×
	// always means striate does better.
	Lower bool
}

// Ratio returns how many times better striate's figure is than the peer's
// (striate/peer, or peer/striate for a Lower figure; against the nearer end
// of a range), and false when there is no peer figure.
func (r Row) Ratio() (float64, bool) {
	if r.Peer <= 0 || r.Striate <= 0 {
		return 0, false
	}
	p := r.Peer
	if r.PeerHigh > r.Peer && r.Striate > r.Peer {
		p = min(r.PeerHigh, r.Striate)
	}
	if r.Lower {
		return p / r.Striate, true
	}
	return r.Striate / p, true
}

// FrontEndConfig says how FrontEnd times.
type FrontEndConfig struct {
	Quick   bool  // 1,000 MNIST images and 16 crops instead of all
	Threads []int // thread counts to time
	Repeats int   // timed repeats after one warm-up; the median is reported
}

// FrontEndReport is what FrontEnd measured, with the facts a reader of the
// table needs: how far the default kernels are from the reference bank, and
// which image sets were timed.
type FrontEndReport struct {
	Rows      []Row
	KernelMax float64  // max |Δ| between the default kernels and filterbank_kernels.json
	Kernels   int      // kernels compared
	Sets      []string // "name: N images from source" per set timed
}

// Progress is the step report long work gives (the same method as
// learn.Progress).
type Progress interface {
	Step(done, total int, msg string)
}

// MaxKernelDiff is the largest difference allowed between the default front
// end's kernels and the reference bank (both float32 renderings of the same
// formulas; 1e-6 is a few float32 ulps at the kernels' scale).
const MaxKernelDiff = 1e-6

// FrontEnd times the default front end (the reference bank of
// filterbank_kernels.json in dir, checked kernel by kernel first) over the
// MNIST test set and the photo crops: images / median wall time of the whole
// set, output allocation included, the reference README's protocol. p (may
// be nil) sees each timing done.
func FrontEnd(dir string, cfg FrontEndConfig, p Progress) (*FrontEndReport, error) {
	fe, err := v1layer.New(v1layer.Config{})
	if err != nil {
		return nil, err
	}
	ref, err := benchwork.Kernels(dir)
	if err != nil {
		return nil, err
	}
	ks := fe.Kernels()
	if len(ks) != len(ref) {
		return nil, fmt.Errorf("frontbench: the default front end has %d kernels, the reference bank %d", len(ks), len(ref))
	}
	rep := &FrontEndReport{Kernels: len(ks)}
	for i, k := range ref {
		if ks[i].Size != k.Size {
			return nil, fmt.Errorf("frontbench: kernel %s: size %d, reference %d", k.Name, ks[i].Size, k.Size)
		}
		for j, v := range k.W {
			rep.KernelMax = math.Max(rep.KernelMax, math.Abs(float64(ks[i].W[j])-v))
		}
	}
	if rep.KernelMax > MaxKernelDiff {
		return nil, fmt.Errorf("frontbench: the default kernels differ from filterbank_kernels.json by %.3g (want ≤ %g)", rep.KernelMax, MaxKernelDiff)
	}
	peers, err := benchwork.Peers(dir)
	if err != nil {
		return nil, err
	}
	nm, nc := 0, 0
	if cfg.Quick {
		nm, nc = 1000, 16
	}
	mnist := benchwork.MNIST(nm)
	crops, err := benchwork.Crops(dir, nc)
	if err != nil {
		return nil, err
	}
	build := "plain"
	if strings.HasPrefix(v1layer.Build(), "simd") {
		build = "simd"
	}
	sets := []*benchwork.Set{mnist, crops}
	total := len(sets) * len(cfg.Threads)
	step := 0
	for _, s := range sets {
		rep.Sets = append(rep.Sets, fmt.Sprintf("%s: %d images from %s", s.Name, len(s.Images), s.Source))
		for _, t := range cfg.Threads {
			c, oh, ow, err := fe.OutShape(s.H, s.W)
			if err != nil {
				return nil, err
			}
			d := benchwork.Median(cfg.Repeats, func() {
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
			pr, pv := benchwork.Fastest(peers, s.W, t)
			name := pr.Name
			if i := strings.Index(name, " ("); i > 0 {
				name = name[:i]
			}
			if t > 2 {
				pv, name = 0, "(peers timed at 1 and 2 threads)"
			}
			rep.Rows = append(rep.Rows, Row{Stage: "front end", Size: fmt.Sprintf("%d×%d", s.H, s.W), Threads: t,
				Striate: float64(len(s.Images)) / d.Seconds(), Unit: "img/s", Peer: pv, PeerName: name, Build: build})
			step++
			if p != nil {
				p.Step(step, total, fmt.Sprintf("%s, %d threads: %v", s.Name, t, d.Round(time.Millisecond)))
			}
		}
	}
	return rep, nil
}

// WriteTable writes rows as the bench table: each figure beside its peer's
// and their ratio (Row.Ratio: above 1× striate does better; a dash where no
// peer figure is known). Figures of 1,000 and more are rounded to whole
// units with thousands separators, those below 1 keep three significant
// digits.
func WriteTable(w io.Writer, rows []Row) error {
	tw := tabwriter.NewWriter(w, 2, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "stage\tsize\tthreads\tstriate\tpeer\tratio\tunit\tfastest peer\tbuild\t")
	for _, r := range rows {
		peer, ratio := "—", "—"
		if r.Peer > 0 {
			peer = fmtRate(r.Peer)
			if r.PeerHigh > r.Peer {
				peer += "–" + fmtRate(r.PeerHigh)
			}
		}
		if x, ok := r.Ratio(); ok {
			ratio = fmt.Sprintf("%.2f×", x)
		}
		fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\t%s\t\n", r.Stage, r.Size, r.Threads, fmtRate(r.Striate), peer, ratio, r.Unit, r.PeerName, r.Build)
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
	if v != 0 && math.Abs(v) < 1 {
		return strconv.FormatFloat(v, 'g', 3, 64)
	}
	return strconv.FormatFloat(v, 'f', 1, 64)
}
