package eval

import (
	"fmt"
	"image"
	"runtime"
	"slices"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/internal/benchwork"
	"github.com/striate/striate/internal/frontbench"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
	"github.com/striate/striate/v1layer"
)

// BenchConfig says what Bench times. The zero value is the default run
// (about two minutes on 2 cores).
type BenchConfig struct {
	// Quick times small sets (2,000 patches, 500 images, a 1,000-image fit
	// with a one-pass head) in a few seconds, and skips the 150-image fit.
	Quick bool
	// Full also fits the presets on the full MNIST and Fashion-MNIST training
	// sets (60,000 images each; minutes) and scores them and their int8 forms
	// on the test sets: the accuracy, fit-time and CPU-use targets.
	Full bool
	// Workers for the fits and the 2-thread rows; 0 means GOMAXPROCS.
	Workers int
	// LatencySamples is the number of single-image predictions timed for
	// each latency quantile; 0 means 1,000 (200 with Quick).
	LatencySamples int
}

// BenchFacts are the figures of a Bench run that the targets of
// BenchTargets need; a zero figure was not measured.
type BenchFacts struct {
	Build                    string  // "plain" or "simd"
	FloatP50, FloatP99       float64 // single-image latency, one core, ms
	Int8P50, Int8P99         float64
	FloatBytes, Int8Bytes    int64         // model file sizes
	Folder150                time.Duration // fit of 150 images (0: not run)
	PeakRSS                  uint64        // the bench process's peak resident set, bytes (0: unknown)
	MNIST, Fashion           *FullFit      // nil unless BenchConfig.Full
	SmallFitImages           int           // images of the small end-to-end fit
	SmallFitWall, SmallFitCP time.Duration // its wall time and process CPU time
	SmallFitAcc              float64       // its test accuracy (fraction)
	LeNetCPU                 float64       // the LeNet-5 peer's CPU seconds to 99.0% on MNIST (low end)
}

// FullFit is one full-size preset fit of a Full bench run.
type FullFit struct {
	Preset        string
	Images        int
	Wall, CPU     time.Duration // wall time and process CPU time of the fit
	Accuracy      float64       // float model, test set, fraction
	Int8Accuracy  float64       // its int8 form (calibrated on 1,000 training images)
	PeakHeapBytes uint64
}

// BenchReport is what Bench measured: table rows (each beside its peer
// figure where the reference work has one), the sources the rows came
// from, and the facts the targets need.
type BenchReport struct {
	Rows  []frontbench.Row
	Notes []string
	Facts BenchFacts
}

// Peer figures of the reference work that Bench puts beside its rows,
// from benchwork.Figures (shared reference work §2-3).
type benchPeers struct {
	fitLo, fitHi float64 // MiniBatchDictionaryLearning fit, s
	objective    float64 // held-out mean objective
	zeroCode     float64 // its zero-code baseline (README §2: 78.84, not in peers.json)
	encode       float64 // lasso_cd patches/s
	lenetLo      float64 // LeNet-5 CPU s to 99.0% on MNIST
	lenetHi      float64
}

// sparseZeroCode is the shared protocol's zero-code objective on its
// held-out patches (reference work README §2: "zero code 78.84"); it turns
// the peer's objective into a fraction comparable across patch sets.
const sparseZeroCode = 78.84

func loadBenchPeers() (benchPeers, string, error) {
	figs, src, err := benchwork.Figures()
	if err != nil {
		return benchPeers{}, "", err
	}
	p := benchPeers{zeroCode: sparseZeroCode}
	for _, f := range figs {
		switch {
		case f.Section == "sparse" && f.Unit == "s" && f.High > 0:
			p.fitLo, p.fitHi = f.Value, f.High
		case f.Section == "sparse" && f.Unit == "objective":
			p.objective = f.Value
		case f.Section == "sparse" && f.Unit == "patches/s":
			p.encode = f.Value
		case f.Section == "classifier" && f.Unit == "CPU s":
			p.lenetLo, p.lenetHi = f.Value, f.High
		}
	}
	if p.fitLo == 0 || p.objective == 0 || p.encode == 0 || p.lenetLo == 0 {
		return p, "", fmt.Errorf("eval: the embedded peer figures lack the sparse-coding or classifier figures Bench needs")
	}
	return p, src, nil
}

// Bench times striate's stages past the front end on data that ships with
// the repository: sparse coding (fit and encode) on the regenerated
// protocol of benchwork.Sparse; template encoding on MNIST front-end maps;
// an end-to-end digits fit (its head's training images/s, wall and CPU
// time, test accuracy); single-image latency p50/p99 of that model and of
// its int8 form on one core, and their file sizes; the fit of 150 images;
// the process's peak memory; and, with cfg.Full, the full-size preset fits.
// p (may be nil) sees each step. MNIST comes from datasets.LoadMNIST; the
// rows that need it are skipped, with a note, when it cannot be loaded.
func Bench(cfg BenchConfig, p frontbench.Progress) (*BenchReport, error) {
	if cfg.Workers <= 0 {
		cfg.Workers = runtime.GOMAXPROCS(0)
	}
	if cfg.LatencySamples <= 0 {
		cfg.LatencySamples = 1000
		if cfg.Quick {
			cfg.LatencySamples = 200
		}
	}
	peers, src, err := loadBenchPeers()
	if err != nil {
		return nil, err
	}
	r := &BenchReport{}
	r.Facts.LeNetCPU = peers.lenetLo
	r.Facts.Build = "plain"
	if len(v1layer.Build()) >= 4 && v1layer.Build()[:4] == "simd" {
		r.Facts.Build = "simd"
	}
	r.Notes = append(r.Notes, "peer figures: "+src+" (internal/benchwork/data/peers.json)")
	steps := []struct {
		name string
		fn   func(*BenchReport, BenchConfig, benchPeers) error
	}{{"sparse coding", benchSparse}, {"template encoding", benchTemplates}, {"fits and latency", benchFits}}
	for i, s := range steps {
		if err := s.fn(r, cfg, peers); err != nil {
			return nil, fmt.Errorf("eval: bench %s: %w", s.name, err)
		}
		if p != nil {
			p.Step(i+1, len(steps), s.name)
		}
	}
	r.Facts.PeakRSS = peakRSS()
	if r.Facts.PeakRSS > 0 {
		r.add(frontbench.Row{Stage: "peak memory (RSS) of this bench run", Size: "—", Threads: cfg.Workers, Striate: float64(r.Facts.PeakRSS) / (1 << 20), Unit: "MiB", Lower: true})
	}
	return r, nil
}

func (r *BenchReport) add(row frontbench.Row) {
	row.Build = r.Facts.Build
	r.Rows = append(r.Rows, row)
}

// benchSparse fits a dictionary on the protocol's training patches (256
// atoms, λ = 1, batch 256, one pass, Forget 10: the README's learner
// setting) on one thread and codes the held-out patches with CD at Tol
// 1e-4, the figures scikit-learn's are set beside.
func benchSparse(r *BenchReport, cfg BenchConfig, pr benchPeers) error {
	n := 0
	if cfg.Quick {
		n = 2000
	}
	ss, err := benchwork.Sparse(n)
	if err != nil {
		return err
	}
	r.Notes = append(r.Notes, "sparse coding: "+ss.Source+"; the shared work's 100,000 positions include two photos without a stated licence, so the positions differ from the peer's and its objective is compared as a fraction of the zero-code objective")
	ntr := len(ss.Train) / ss.Dim
	t0 := time.Now()
	d, err := learn.DictConfig{Atoms: 256, Lambda: 1, BatchSize: 256, Epochs: 1, Forget: 10, Seed: 1}.Fit(ss.Train, ss.Dim, nil)
	if err != nil {
		return err
	}
	fit := time.Since(t0)
	// The peer's rate: 10 passes over 90,000 patches in 66-69 s.
	peerLo, peerHi := 10*float64(benchwork.SparseTrain)/pr.fitHi, 10*float64(benchwork.SparseTrain)/pr.fitLo
	r.add(frontbench.Row{Stage: "sparse coding fit (256 atoms, 1 pass)", Size: "16×16", Threads: 1, Striate: float64(ntr) / fit.Seconds(), Unit: "patches/s",
		Peer: peerLo, PeerHigh: peerHi, PeerName: "scikit-learn 1.2.1 MiniBatchDictionaryLearning, 10 passes / 66-69 s"})
	c, err := learn.NewCoder(d, learn.CoderConfig{Lambda: 1, Solver: learn.CD, Tol: 1e-4})
	if err != nil {
		return err
	}
	codes, st, err := c.Encode(nil, ss.Held, false)
	if err != nil {
		return err
	}
	enc := benchwork.Median(1, func() { codes, st, err = c.Encode(codes, ss.Held, false) })
	if err != nil {
		return err
	}
	r.add(frontbench.Row{Stage: "sparse coding encode (CD, Tol 1e-4)", Size: "16×16", Threads: 1, Striate: float64(st.Signals) / enc.Seconds(), Unit: "patches/s",
		Peer: pr.encode, PeerName: "scikit-learn 1.2.1 SparseCoder lasso_cd"})
	var zero float64
	for _, v := range ss.Held {
		zero += float64(v) * float64(v)
	}
	zero = 0.5 * zero / float64(st.Signals)
	r.add(frontbench.Row{Stage: "held-out objective / zero-code objective", Size: "16×16", Threads: 1, Striate: st.MeanObjective() / zero, Unit: "fraction",
		Peer: pr.objective / pr.zeroCode, PeerName: "scikit-learn 1.2.1 after 10 passes: 51.03 / 78.84", Lower: true})
	return nil
}

// benchMNIST loads MNIST, or returns nil sets and the reason.
func benchMNIST() (train, test *datasets.Set, err error) {
	if train, err = datasets.LoadMNIST(datasets.Train, ""); err != nil {
		return nil, nil, err
	}
	if test, err = datasets.LoadMNIST(datasets.Test, ""); err != nil {
		return nil, nil, err
	}
	return train, test, nil
}

// benchTemplates fits the default template layer on the default front
// end's maps of MNIST training images and times Encode over test images,
// one thread and cfg.Workers.
func benchTemplates(r *BenchReport, cfg BenchConfig, _ benchPeers) error {
	nfit, nenc := 2000, 2000
	if cfg.Quick {
		nfit, nenc = 500, 500
	}
	set := benchwork.MNIST(nfit + nenc)
	dc := pipeline.DefaultConfig()
	fe, err := v1layer.New(dc.Front)
	if err != nil {
		return err
	}
	maps := make([]v1layer.Maps, len(set.Images))
	for i, im := range set.Images {
		fe.Apply(&maps[i], im, set.H, set.W)
	}
	tc := dc.Templates[0]
	tm, _, err := tc.Fit(maps[:nfit], nil)
	if err != nil {
		return err
	}
	enc := maps[nfit:]
	for _, t := range []int{1, cfg.Workers} {
		dst := make([][]float32, len(enc))
		d := benchwork.Median(3, func() {
			parallelFor(len(enc), t, func(i int) { dst[i] = tm.Encode(dst[i], &enc[i]) })
		})
		r.add(frontbench.Row{Stage: fmt.Sprintf("template encoding (%d templates)", tm.K()), Size: fmt.Sprintf("%d×%d maps", enc[0].H, enc[0].W), Threads: t,
			Striate: float64(len(enc)) / d.Seconds(), Unit: "img/s", PeerName: "(no general-purpose peer in the reference work)"})
		if cfg.Workers == 1 {
			break
		}
	}
	r.Notes = append(r.Notes, "template encoding: "+set.Source)
	return nil
}

// parallelFor runs fn(0..n-1) over workers goroutines in contiguous blocks.
func parallelFor(n, workers int, fn func(i int)) {
	if workers <= 1 {
		for i := 0; i < n; i++ {
			fn(i)
		}
		return
	}
	done := make(chan struct{}, workers)
	for w := 0; w < workers; w++ {
		go func(lo, hi int) {
			for i := lo; i < hi; i++ {
				fn(i)
			}
			done <- struct{}{}
		}(n*w/workers, n*(w+1)/workers)
	}
	for w := 0; w < workers; w++ {
		<-done
	}
}

// benchFits runs the end-to-end digits fit, its latency and size figures,
// the 150-image fit and, with cfg.Full, the full-size fits.
func benchFits(r *BenchReport, cfg BenchConfig, pr benchPeers) error {
	train, test, err := benchMNIST()
	if err != nil {
		r.Notes = append(r.Notes, fmt.Sprintf("fits and latency: skipped, MNIST unavailable (%v)", err))
		return nil
	}
	n, ntest := 5000, test.N
	dcfg, err := pipeline.Preset("digits")
	if err != nil {
		return err
	}
	if cfg.Quick {
		n, ntest = 1000, 1000
		dcfg.Head.Epochs = 1
		dcfg.HeadMinSteps = -1
		dcfg.Unlabeled = 1000
	}
	cpu0 := cpuTime()
	t0 := time.Now()
	m, rep, err := pipeline.FitReported(dcfg, train.First(n), pipeline.FitOptions{Workers: cfg.Workers})
	if err != nil {
		return err
	}
	wall, cpu := time.Since(t0), cpuTime()-cpu0
	acc, err := pipeline.Accuracy(m, test.First(ntest), nil, cfg.Workers, nil)
	if err != nil {
		return err
	}
	f := &r.Facts
	f.SmallFitImages, f.SmallFitWall, f.SmallFitCP, f.SmallFitAcc = n, wall, cpu, acc
	hr := rep.Head
	if rep.HeadTime > 0 {
		seen := float64(hr.Batch) * float64(hr.StepsPerEpoch) * float64(hr.Epochs)
		r.add(frontbench.Row{Stage: fmt.Sprintf("head training (%s, %d hidden)", hr.Config.Kind, hr.Config.Hidden), Size: fmt.Sprintf("%d features", rep.FeatureLen), Threads: cfg.Workers,
			Striate: seen / rep.HeadTime.Seconds(), Unit: "rows/s", PeerName: "(no head-only peer; see the end-to-end rows)"})
	}
	r.add(frontbench.Row{Stage: fmt.Sprintf("end-to-end fit, digits, %d images (%.2f%% on %d test)", n, 100*acc, ntest), Size: "28×28", Threads: cfg.Workers,
		Striate: wall.Seconds(), Unit: "s", Lower: true, PeerName: fmt.Sprintf("(CPU %.1f s; the LeNet-5 peer's figure is for 60,000 images: --full)", cpu.Seconds())})
	q, err := m.Quantize(train, pipeline.QuantizeOptions{Workers: cfg.Workers})
	if err != nil {
		return err
	}
	if f.FloatBytes, err = ModelSize(m.Save); err != nil {
		return err
	}
	if f.Int8Bytes, err = ModelSize(q.Save); err != nil {
		return err
	}
	img := image.NewGray(image.Rect(0, 0, test.W, test.H))
	f.FloatP50, f.FloatP99 = latency(m, test, img, cfg.LatencySamples)
	f.Int8P50, f.Int8P99 = latency(q, test, img, cfg.LatencySamples)
	for _, c := range []struct {
		name     string
		p50, p99 float64
		bytes    int64
	}{{"float", f.FloatP50, f.FloatP99, f.FloatBytes}, {"int8", f.Int8P50, f.Int8P99, f.Int8Bytes}} {
		r.add(frontbench.Row{Stage: "single-image latency p50, " + c.name, Size: "28×28", Threads: 1, Striate: c.p50, Unit: "ms", Lower: true, PeerName: "(no peer latency in the reference work)"})
		r.add(frontbench.Row{Stage: "single-image latency p99, " + c.name, Size: "28×28", Threads: 1, Striate: c.p99, Unit: "ms", Lower: true})
		r.add(frontbench.Row{Stage: "model file, " + c.name, Size: "—", Threads: 1, Striate: float64(c.bytes) / 1e6, Unit: "MB", Lower: true})
	}
	r.Notes = append(r.Notes, fmt.Sprintf("latency: Model.Predict of one MNIST test image on one core (GOMAXPROCS 1), %d calls each after a warm-up, the model of the end-to-end row and its int8 form (Model.Quantize, 1,000 calibration images)", cfg.LatencySamples))
	if !cfg.Quick {
		t0 := time.Now()
		if _, err := pipeline.Fit(dcfg, train.First(150), pipeline.FitOptions{Workers: cfg.Workers}); err != nil {
			return err
		}
		f.Folder150 = time.Since(t0)
		r.add(frontbench.Row{Stage: "fit of 150 images (digits; the first 150 MNIST training images)", Size: "28×28", Threads: cfg.Workers, Striate: f.Folder150.Seconds(), Unit: "s", Lower: true})
	}
	if !cfg.Full {
		return nil
	}
	for _, job := range []struct {
		preset string
		load   func() (*datasets.Set, *datasets.Set, error)
		dst    **FullFit
	}{
		{"digits", func() (*datasets.Set, *datasets.Set, error) { return train, test, nil }, &f.MNIST},
		{"garments", loadFashion, &f.Fashion},
	} {
		tr, te, err := job.load()
		if err != nil {
			r.Notes = append(r.Notes, fmt.Sprintf("full %s fit: skipped (%v)", job.preset, err))
			continue
		}
		ff, err := fullFit(job.preset, tr, te, cfg.Workers)
		if err != nil {
			return err
		}
		*job.dst = ff
		row := frontbench.Row{Stage: fmt.Sprintf("full fit, %s, %d images (%.2f%%, int8 %.2f%%)", ff.Preset, ff.Images, 100*ff.Accuracy, 100*ff.Int8Accuracy), Size: "28×28", Threads: cfg.Workers,
			Striate: ff.CPU.Seconds(), Unit: "CPU s", Lower: true, PeerName: fmt.Sprintf("(wall %.1f s)", ff.Wall.Seconds())}
		if job.preset == "digits" {
			row.Peer, row.PeerHigh = pr.lenetLo, pr.lenetHi
			row.PeerName = fmt.Sprintf("PyTorch 1.13 LeNet-5, CPU s to 99.0%% (wall %.1f s)", ff.Wall.Seconds())
		}
		r.add(row)
	}
	return nil
}

func loadFashion() (*datasets.Set, *datasets.Set, error) {
	tr, err := datasets.LoadFashionMNIST(datasets.Train, "")
	if err != nil {
		return nil, nil, err
	}
	te, err := datasets.LoadFashionMNIST(datasets.Test, "")
	return tr, te, err
}

// fullFit fits a preset on every training image and scores the float model
// and its int8 form on the test set.
func fullFit(preset string, train, test *datasets.Set, workers int) (*FullFit, error) {
	cfg, err := pipeline.Preset(preset)
	if err != nil {
		return nil, err
	}
	ff := &FullFit{Preset: preset, Images: train.N}
	runtime.GC()
	stop := startHeapSampler(&ff.PeakHeapBytes)
	cpu0 := cpuTime()
	t0 := time.Now()
	m, err := pipeline.Fit(cfg, train, pipeline.FitOptions{Workers: workers})
	ff.Wall, ff.CPU = time.Since(t0), cpuTime()-cpu0
	stop()
	if err != nil {
		return nil, err
	}
	if ff.Accuracy, err = pipeline.Accuracy(m, test, nil, workers, nil); err != nil {
		return nil, err
	}
	q, err := m.Quantize(train, pipeline.QuantizeOptions{Workers: workers})
	if err != nil {
		return nil, err
	}
	if ff.Int8Accuracy, err = pipeline.Accuracy(q, test, nil, workers, nil); err != nil {
		return nil, err
	}
	return ff, nil
}

// latency times m.Predict on single test images with GOMAXPROCS 1 (one
// core, garbage collection included) and returns p50 and p99 in ms.
func latency(m *pipeline.Model, test *datasets.Set, img *image.Gray, samples int) (p50, p99 float64) {
	prev := runtime.GOMAXPROCS(1)
	defer runtime.GOMAXPROCS(prev)
	lat := make([]float64, samples)
	for i := -50; i < samples; i++ { // 50 warm-up calls
		copy(img.Pix, test.Image((i+50)%test.N))
		t0 := time.Now()
		m.Predict(img)
		if i >= 0 {
			lat[i] = float64(time.Since(t0)) / 1e6
		}
	}
	slices.Sort(lat)
	return quantileSorted(lat, 0.5), quantileSorted(lat, 0.99)
}
