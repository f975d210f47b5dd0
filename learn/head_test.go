package learn

import (
	"bytes"
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"
	"testing"
)

// blobs returns n rows of d features in k Gaussian classes whose centres lie
// sep apart (unit noise), with an offset and per-feature scale so that
// standardisation matters.
func blobs(n, d, k int, sep float64, seed uint64) ([]float32, []int) {
	rng := rand.New(rand.NewPCG(seed, 99))
	centres := make([]float64, k*d)
	for i := range centres {
		centres[i] = sep * rng.NormFloat64()
	}
	X := make([]float32, n*d)
	y := make([]int, n)
	for i := 0; i < n; i++ {
		c := i % k
		y[i] = c
		for j := 0; j < d; j++ {
			X[i*d+j] = float32((centres[c*d+j]+rng.NormFloat64())*float64(1+j%3) + 5)
		}
	}
	return X, y
}

func accuracy(hd *Head, X []float32, y []int) float64 {
	p := hd.PredictBatch(nil, X, nil)
	_, acc := headCrossEntropy(p, y, hd.NumClasses())
	return acc
}

func TestHeadLearnsSeparableClasses(t *testing.T) {
	all, ally := blobs(1000, 8, 4, 3, 1)
	X, y := all[:600*8], ally[:600]
	Xt, yt := all[600*8:], ally[600:] // same centres, other noise draws
	for _, cfg := range []HeadConfig{
		{Kind: KindSoftmax, Epochs: 40, LR: 0.01, Seed: 1},
		{Kind: KindMLP, Hidden: 16, Epochs: 40, LR: 0.01, Seed: 1},
		{Kind: KindSoftmax, Optimizer: OptSGD, Epochs: 40, Seed: 1, Schedule: ScheduleCosine},
	} {
		hd, rep, err := cfg.Fit(X, y, 4, nil)
		if err != nil {
			t.Fatal(err)
		}
		// Classes 3σ apart in 8 dimensions are separable to ≳97% by the Bayes
		// rule (pairwise distance ≈ 3·√(2·8) = 12σ); 0.9 is a loose floor that a
		// broken optimiser or label mix-up cannot reach (chance is 0.25).
		if acc := accuracy(hd, Xt, yt); acc < 0.9 {
			t.Errorf("%+v: accuracy %.3f < 0.9 (report %+v)", cfg, acc, rep)
		}
		if rep.TrainLoss[len(rep.TrainLoss)-1] >= rep.TrainLoss[0] {
			t.Errorf("%+v: training loss did not fall: %v", cfg, rep.TrainLoss)
		}
	}
}

func TestHeadSameSeedBitIdentical(t *testing.T) {
	X, y := blobs(300, 6, 3, 1, 2)
	for _, cfg := range []HeadConfig{
		{Kind: KindMLP, Hidden: 8, Epochs: 5, Batch: 32, Seed: 7},
		{Kind: KindSoftmax, Optimizer: OptSGD, Epochs: 5, Batch: 32, Seed: 7},
	} {
		a, _, err := cfg.Fit(X, y, 3, nil)
		if err != nil {
			t.Fatal(err)
		}
		b, _, err := cfg.Fit(X, y, 3, nil)
		if err != nil {
			t.Fatal(err)
		}
		if !sameTensors(a.Tensors(), b.Tensors()) {
			t.Errorf("%+v: two fits with the same seed differ", cfg)
		}
		cfg.Seed++
		c, _, err := cfg.Fit(X, y, 3, nil)
		if err != nil {
			t.Fatal(err)
		}
		if sameTensors(a.Tensors(), c.Tensors()) {
			t.Errorf("%+v: a different seed gave the same weights", cfg)
		}
	}
}

func sameTensors(a, b []NamedTensor) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i].Name != b[i].Name || len(a[i].Data) != len(b[i].Data) {
			return false
		}
		for j := range a[i].Data {
			if math.Float32bits(a[i].Data[j]) != math.Float32bits(b[i].Data[j]) {
				return false
			}
		}
	}
	return true
}

var errInterrupt = errors.New("interrupted on purpose")

func TestHeadResumeBitIdentical(t *testing.T) {
	X, y := blobs(400, 6, 3, 1, 3)
	for _, cfg := range []HeadConfig{
		{Kind: KindMLP, Hidden: 8, Epochs: 9, Batch: 32, Seed: 5, Patience: -1},
		{Kind: KindSoftmax, Optimizer: OptSGD, Epochs: 9, Batch: 32, Seed: 5, Schedule: ScheduleCosine},
		{Kind: KindMLP, Hidden: 5, Epochs: 9, Batch: 64, Seed: 5, Engine: EngineGorgonia},
	} {
		want, wantRep, err := cfg.Fit(X, y, 3, nil)
		if err != nil {
			t.Fatal(err)
		}
		var saved []byte
		_, _, err = cfg.FitWith(X, y, 3, HeadFitOptions{CheckpointEvery: 4, Checkpoint: func(c *HeadCheckpoint) error {
			var err error
			saved, err = c.MarshalBinary()
			if err != nil {
				return err
			}
			return errInterrupt
		}})
		if !errors.Is(err, errInterrupt) {
			t.Fatalf("interrupted fit returned %v", err)
		}
		var ck HeadCheckpoint
		if err := ck.UnmarshalBinary(saved); err != nil {
			t.Fatal(err)
		}
		if ck.Epoch() != 4 {
			t.Fatalf("checkpoint after epoch %d, want 4", ck.Epoch())
		}
		got, gotRep, err := cfg.FitWith(X, y, 3, HeadFitOptions{Resume: &ck})
		if err != nil {
			t.Fatal(err)
		}
		if !sameTensors(want.Tensors(), got.Tensors()) {
			t.Errorf("%+v: resumed head differs from the uninterrupted one", cfg)
		}
		if gotRep.Epochs != wantRep.Epochs || gotRep.BestEpoch != wantRep.BestEpoch || len(gotRep.TrainLoss) != len(wantRep.TrainLoss) {
			t.Errorf("reports differ: %+v vs %+v", gotRep, wantRep)
		}
		// Resuming on other data is refused.
		X2 := append([]float32(nil), X...)
		X2[0]++
		if _, _, err := cfg.FitWith(X2, y, 3, HeadFitOptions{Resume: &ck}); !errors.Is(err, ErrHeadCheckpointMismatch) {
			t.Errorf("resume on changed data: %v, want ErrHeadCheckpointMismatch", err)
		}
		// A damaged checkpoint is refused with a typed error.
		for _, bad := range [][]byte{saved[:len(saved)-1], saved[:10], append(append([]byte(nil), saved[:40]...), saved[41:]...)} {
			var c HeadCheckpoint
			var ce *HeadCheckpointError
			if err := c.UnmarshalBinary(bad); !errors.As(err, &ce) {
				t.Errorf("damaged checkpoint (%d bytes): %v", len(bad), err)
			}
		}
	}
}

func TestHeadEarlyStoppingStops(t *testing.T) {
	// Pure-noise labels: validation loss cannot improve for long, so with
	// patience 3 the run must stop well before 200 epochs, and the head must
	// hold the best epoch's weights.
	rng := rand.New(rand.NewPCG(4, 4))
	n, d := 300, 20
	X := make([]float32, n*d)
	for i := range X {
		X[i] = float32(rng.NormFloat64())
	}
	y := make([]int, n)
	for i := range y {
		y[i] = rng.IntN(2)
	}
	cfg := HeadConfig{Kind: KindMLP, Hidden: 64, Epochs: 200, Batch: 16, LR: 0.01, Patience: 3, ValFrac: 0.3, Seed: 1}
	hd, rep, err := cfg.Fit(X, y, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !rep.Stopped || rep.Epochs >= 200 {
		t.Fatalf("did not stop early: %d epochs, stopped=%v", rep.Epochs, rep.Stopped)
	}
	if rep.Epochs != rep.BestEpoch+3 {
		t.Errorf("stopped at epoch %d, best %d: want best+patience", rep.Epochs, rep.BestEpoch)
	}
	for i, v := range rep.ValLoss {
		if v < rep.ValLoss[rep.BestEpoch-1] {
			t.Errorf("epoch %d val loss %g below the 'best' %g", i+1, v, rep.ValLoss[rep.BestEpoch-1])
		}
	}
	// The returned head reproduces the best epoch's validation loss.
	_, val := splitForTest(n, cfg)
	vx := headGatherRows(nil, X, d, val)
	vy := make([]int, len(val))
	for i, r := range val {
		vy[i] = y[r]
	}
	vl, _ := headCrossEntropy(hd.PredictBatch(nil, vx, nil), vy, 2)
	if vl != rep.ValLoss[rep.BestEpoch-1] {
		t.Errorf("head's validation loss %g, best epoch's %g", vl, rep.ValLoss[rep.BestEpoch-1])
	}
}

// splitForTest repeats FitWith's validation split.
func splitForTest(n int, c HeadConfig) (train, val []int) {
	cfg, _ := c.resolved()
	perm := rand.New(rand.NewPCG(cfg.Seed, 0x7661_6c69_6461_7465)).Perm(n)
	nVal := max(1, min(int(math.Round(cfg.ValFrac*float64(n))), n-1))
	return perm[nVal:], perm[:nVal]
}

func TestHeadTensorsRoundTrip(t *testing.T) {
	X, y := blobs(200, 5, 3, 2, 5)
	for _, cfg := range []HeadConfig{{Kind: KindSoftmax, Epochs: 3}, {Kind: KindMLP, Hidden: 7, Epochs: 3}} {
		hd, _, err := cfg.Fit(X, y, 3, nil)
		if err != nil {
			t.Fatal(err)
		}
		ts := hd.Tensors()
		back, err := NewHeadFromTensors(ts)
		if err != nil {
			t.Fatal(err)
		}
		if !sameTensors(ts, back.Tensors()) {
			t.Error("tensors changed in the round trip")
		}
		p1 := hd.PredictBatch(nil, X, nil)
		p2 := back.PredictBatch(nil, X, nil)
		for i := range p1 {
			if p1[i] != p2[i] {
				t.Fatalf("prediction %d differs after round trip", i)
			}
		}
		// Single-row Predict (Gemv) agrees with the batch path (Gemm) to float32
		// rounding of a d-term sum: predTol = 1e-5 absolute on probabilities.
		const predTol = 1e-5
		for i := 0; i < 20; i++ {
			p := hd.Predict(nil, X[i*5:(i+1)*5], nil)
			for c := range p {
				if math.Abs(float64(p[c]-p1[i*3+c])) > predTol {
					t.Fatalf("row %d class %d: Predict %g, PredictBatch %g", i, c, p[c], p1[i*3+c])
				}
			}
		}
		// Broken tensor sets are refused.
		bad := hd.Tensors()
		bad[1].Data[0] = 0
		if _, err := NewHeadFromTensors(bad); err == nil {
			t.Error("std 0 accepted")
		}
		bad = hd.Tensors()
		bad[2].Shape = []int{bad[2].Shape[0], bad[2].Shape[1] + 1}
		if _, err := NewHeadFromTensors(bad); err == nil {
			t.Error("wrong shape accepted")
		}
		if _, err := NewHeadFromTensors(hd.Tensors()[:3]); err == nil {
			t.Error("missing tensor accepted")
		}
	}
}

func TestHeadPredictNoAllocsAndConcurrent(t *testing.T) {
	X, y := blobs(200, 10, 3, 2, 6)
	hd, _, err := HeadConfig{Kind: KindMLP, Hidden: 12, Epochs: 2}.Fit(X, y, 3, nil)
	if err != nil {
		t.Fatal(err)
	}
	dst := make([]float32, 3)
	scratch := make([]float32, hd.ScratchLen(1))
	if a := testing.AllocsPerRun(100, func() { hd.Predict(dst, X[:10], scratch) }); a != 0 {
		t.Errorf("Predict allocates %.1f times per call", a)
	}
	want := hd.PredictBatch(nil, X, nil)
	var wg sync.WaitGroup
	for g := 0; g < 8; g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			got := hd.PredictBatch(nil, X, nil)
			if !bytes.Equal(f32bytes(got), f32bytes(want)) {
				t.Error("concurrent PredictBatch differs")
			}
		}()
	}
	wg.Wait()
}

func f32bytes(s []float32) []byte {
	b := make([]byte, 0, 4*len(s))
	for _, v := range s {
		u := math.Float32bits(v)
		b = append(b, byte(u), byte(u>>8), byte(u>>16), byte(u>>24))
	}
	return b
}

func TestHeadConfigErrors(t *testing.T) {
	X, y := blobs(50, 3, 2, 1, 7)
	for _, c := range []HeadConfig{{Kind: "svm"}, {Optimizer: "lbfgs"}, {Epochs: -1}, {LR: -1}, {ValFrac: 0.95}, {Schedule: "step"}, {Kind: KindMLP, Hidden: -3}, {ConvergeTol: -1e-3}, {ConvergeTol: 1}, {ConvergeTol: math.NaN()}, {ConvergeTol: 1e-3, ConvergeWindow: -2}} {
		if _, _, err := c.Fit(X, y, 2, nil); err == nil {
			t.Errorf("%+v accepted", c)
		}
	}
	var de *HeadDataError
	yb := append([]int(nil), y...)
	yb[3] = 2
	if _, _, err := (HeadConfig{}).Fit(X, yb, 2, nil); !errors.As(err, &de) || de.Index != 3 {
		t.Errorf("label out of range: %v", err)
	}
	Xb := append([]float32(nil), X...)
	Xb[5] = float32(math.NaN())
	if _, _, err := (HeadConfig{}).Fit(Xb, y, 2, nil); !errors.As(err, &de) || de.Index != 5 {
		t.Errorf("NaN feature: %v", err)
	}
	if _, _, err := (HeadConfig{}).Fit(X[:len(X)-1], y, 2, nil); err == nil {
		t.Error("ragged X accepted")
	}
}

func TestHeadEnginesAgree(t *testing.T) {
	// The plain-Go and gorgonia engines compute the same loss, so the same
	// config and seed must give nearly the same head. engineTol: per-step
	// gradients differ by float32 rounding (~1e-6 relative); over 3 epochs of
	// 12 steps with Adam, the probabilities drift apart
	// by ~2e-7 here (measured); 1e-5 absolute on probabilities leaves margin while a
	// wrong formula in either engine moves them by ≫ 1e-2.
	const engineTol = 1e-5
	X, y := blobs(400, 12, 3, 1, 11)
	for _, kind := range []string{KindSoftmax, KindMLP} {
		cfg := HeadConfig{Kind: kind, Hidden: 10, Epochs: 3, Batch: 32, Seed: 3, ValFrac: -1, LR: 0.01}
		a, _, err := cfg.Fit(X, y, 3, nil)
		if err != nil {
			t.Fatal(err)
		}
		cfg.Engine = EngineGorgonia
		b, _, err := cfg.Fit(X, y, 3, nil)
		if err != nil {
			t.Fatal(err)
		}
		pa, pb := a.PredictBatch(nil, X, nil), b.PredictBatch(nil, X, nil)
		worst := 0.0
		for i := range pa {
			worst = math.Max(worst, math.Abs(float64(pa[i]-pb[i])))
		}
		if worst > engineTol {
			t.Errorf("%s: engines' probabilities differ by up to %.2g > %g", kind, worst, engineTol)
		}
		t.Logf("%s: engines differ by %.2g in probability", kind, worst)
	}
}

// TestHeadIndependentOfThreads: the head's products run on its own workers
// (gonum's Sgemm, which would split large products over GOMAXPROCS
// goroutines, is called in tiles it keeps on one), so the trained weights
// must not depend on the thread count (a model file is the same on a 2-core
// and a 1-core machine).
func TestHeadIndependentOfThreads(t *testing.T) {
	X, y := blobs(640, 300, 4, 0.3, 12)
	cfg := HeadConfig{Kind: KindMLP, Hidden: 130, Epochs: 2, Batch: 128, Seed: 2}
	a, _, err := cfg.Fit(X, y, 4, nil)
	if err != nil {
		t.Fatal(err)
	}
	old := runtime.GOMAXPROCS(1)
	b, _, err := cfg.Fit(X, y, 4, nil)
	runtime.GOMAXPROCS(old)
	if err != nil {
		t.Fatal(err)
	}
	if !sameTensors(a.Tensors(), b.Tensors()) {
		t.Errorf("weights differ between GOMAXPROCS=%d and 1", old)
	}
}
