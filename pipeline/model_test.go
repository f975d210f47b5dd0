package pipeline

import (
	"bytes"
	"errors"
	"image"
	"image/color"
	"math"
	"sync"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// smallSets returns the first n training and m test images of MNIST, loaded
// once per test binary.
var mnistOnce struct {
	sync.Once
	train, test *datasets.Set
	err         error
}

func mnist(t testing.TB) (train, test *datasets.Set) {
	t.Helper()
	mnistOnce.Do(func() {
		mnistOnce.train, mnistOnce.err = datasets.LoadMNIST(datasets.Train, "")
		if mnistOnce.err == nil {
			mnistOnce.test, mnistOnce.err = datasets.LoadMNIST(datasets.Test, "")
		}
	})
	if mnistOnce.err != nil {
		t.Skipf("MNIST not available: %v", mnistOnce.err)
	}
	return mnistOnce.train, mnistOnce.test
}

// quickConfig is a small, fast pipeline for unit tests: the default front
// end, 2×2 average pooling, a softmax head for a few epochs.
func quickConfig() Config {
	return Config{
		Templates:    []learn.TemplateConfig{},
		Pool:         PoolConfig{Size: 2},
		Head:         learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 4, Schedule: learn.ScheduleConstant, ValFrac: 0.1},
		HeadMinSteps: -1,
		Seed:         7,
	}
}

var quickOnce struct {
	sync.Once
	m   *Model
	err error
}

// quickModel is fitted once on 2000 MNIST training images.
func quickModel(t testing.TB) *Model {
	t.Helper()
	train, _ := mnist(t)
	quickOnce.Do(func() {
		quickOnce.m, quickOnce.err = Fit(quickConfig(), train.First(2000), FitOptions{Workers: 2})
	})
	if quickOnce.err != nil {
		t.Fatal(quickOnce.err)
	}
	return quickOnce.m
}

func accuracy(t testing.TB, m *Model, s *datasets.Set, workers int) float64 {
	t.Helper()
	imgs := make([][]float32, s.N)
	for i := range imgs {
		imgs[i] = s.Float(nil, i)
	}
	probs, err := m.PredictBatch(imgs, s.H, s.W, workers)
	if err != nil {
		t.Fatal(err)
	}
	ok := 0
	for i, p := range probs {
		if argmax(p) == s.Labels[i] {
			ok++
		}
	}
	return float64(ok) / float64(s.N)
}

func TestFitSmallMNIST(t *testing.T) {
	m := quickModel(t)
	_, test := mnist(t)
	acc := accuracy(t, m, test.First(1000), 2)
	// Floor: a linear classifier on raw MNIST pixels trained on 2000 images
	// reaches about 88% (from memory, LeCun et al. 1998 list 88% for a
	// linear classifier on all 60000); pooled Gabor-energy features should do
	// clearly better even on 2000 images, so 90% is a floor that catches a
	// broken stage without being fragile.
	const floor = 0.90
	if acc < floor {
		t.Errorf("accuracy on 1000 test images %.3f; want ≥ %.2f", acc, floor)
	}
	if m.NumClasses() != 10 || m.Classes()[3] != "3" {
		t.Errorf("classes %v", m.Classes())
	}
	// 12 channels on a 7×7 grid, less the few near-constant corner cells the
	// guard drops.
	if got, full := m.FeatureLen(), 12*7*7; got > full || got < full*9/10 {
		t.Errorf("feature length %d; want at most %d and at least 90%% of it", got, full)
	}
}

func TestSaveLoadRoundTrip(t *testing.T) {
	m := quickModel(t)
	var buf bytes.Buffer
	if err := m.Save(&buf); err != nil {
		t.Fatal(err)
	}
	m2, err := Load(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	var buf2 bytes.Buffer
	if err := m2.Save(&buf2); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(buf.Bytes(), buf2.Bytes()) {
		t.Fatal("save → load → save changed the file")
	}
	_, test := mnist(t)
	for i := 0; i < 50; i++ {
		img := setImage(test, i)
		c1, p1 := m.Predict(img)
		c2, p2 := m2.Predict(img)
		if c1 != c2 {
			t.Fatalf("image %d: class %d before save, %d after", i, c1, c2)
		}
		for j := range p1 {
			if p1[j] != p2[j] {
				t.Fatalf("image %d: probabilities differ after load: %v vs %v", i, p1, p2)
			}
		}
	}
}

// TestFitDeterministic: the same seed and data give a bit-identical model
// file, whatever the number of workers.
func TestFitDeterministic(t *testing.T) {
	train, _ := mnist(t)
	small := train.First(600)
	cfg := quickConfig()
	cfg.Head.Epochs = 2
	var files [2][]byte
	for i, workers := range []int{1, 3} {
		m, err := Fit(cfg, small, FitOptions{Workers: workers})
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := m.Save(&buf); err != nil {
			t.Fatal(err)
		}
		files[i] = buf.Bytes()
	}
	if !bytes.Equal(files[0], files[1]) {
		t.Fatal("two fits with the same seed gave different model files")
	}
	cfg.Seed++
	m, err := Fit(cfg, small, FitOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	_ = m.Save(&buf)
	if bytes.Equal(buf.Bytes(), files[0]) {
		t.Fatal("a different seed gave the same model file; the seed is not used")
	}
}

// TestConcurrentUse calls every method of one model (the committed small
// model: front end, templates, guard, head) from many goroutines (run with
// -race) and checks that each result equals the sequential one.
func TestConcurrentUse(t *testing.T) {
	m, err := LoadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	floats := digits32(t)
	const n = 16
	imgs := make([]image.Image, n)
	want := make([]int, n)
	wantF := make([][]float32, n)
	for i := range imgs {
		g := image.NewGray(image.Rect(0, 0, 28, 28))
		for j, v := range floats[i] {
			g.Pix[j] = uint8(v*255 + 0.5)
		}
		imgs[i] = g
		want[i], _ = m.Predict(imgs[i])
		wantF[i] = m.Extract(imgs[i])
	}
	wantB, err := m.PredictBatch(floats[:n], 28, 28, 1)
	if err != nil {
		t.Fatal(err)
	}
	var wg sync.WaitGroup
	errs := make(chan error, 64)
	for g := 0; g < 12; g++ {
		wg.Add(1)
		go func(g int) {
			defer wg.Done()
			for r := 0; r < 3; r++ {
				i := (g + r) % n
				if c, _ := m.Predict(imgs[i]); c != want[i] {
					errs <- errors.New("Predict differs under concurrency")
				}
				f := m.Extract(imgs[i])
				for j := range f {
					if f[j] != wantF[i][j] {
						errs <- errors.New("Extract differs under concurrency")
						break
					}
				}
				probs, err := m.PredictBatch(floats[:n], 28, 28, 3)
				if err != nil {
					errs <- err
					continue
				}
				for k, p := range probs {
					for c := range p {
						if p[c] != wantB[k][c] {
							errs <- errors.New("PredictBatch differs under concurrency")
							break
						}
					}
				}
				_ = m.ExtractImages(imgs[:4], 2)
				_ = m.PredictImages(imgs[:4], 2)
				_, _ = m.ExtractBatch(floats[:4], 28, 28, 2)
			}
		}(g)
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Error(err)
	}
}

// setImage returns image i of s as an *image.Gray.
func setImage(s *datasets.Set, i int) *image.Gray {
	g := image.NewGray(image.Rect(0, 0, s.W, s.H))
	copy(g.Pix, s.Image(i))
	return g
}

// TestAnySize: an image of another size and colour model is converted and
// resized; a 2× nearest-neighbour upscaled RGBA digit is classified like the
// original.
func TestAnySize(t *testing.T) {
	m := quickModel(t)
	_, test := mnist(t)
	agree := 0
	const n = 40
	for i := 0; i < n; i++ {
		src := setImage(test, i)
		big := image.NewRGBA(image.Rect(0, 0, 56, 56))
		for y := 0; y < 56; y++ {
			for x := 0; x < 56; x++ {
				v := src.GrayAt(x/2, y/2).Y
				big.Set(x, y, color.RGBA{v, v, v, 255})
			}
		}
		c1, _ := m.Predict(src)
		c2, p := m.Predict(big)
		if len(p) != 10 || math.Abs(float64(sum(p))-1) > 1e-5 {
			t.Fatalf("probabilities %v do not sum to 1", p)
		}
		if c1 == c2 {
			agree++
		}
	}
	// Resizing a 2× upscale back with a bilinear filter is close to the
	// original but not identical; 90% agreement allows a few borderline digits.
	if agree < n*9/10 {
		t.Errorf("%d of %d resized images keep their class; want ≥ 90%%", agree, n)
	}
	probs, err := m.PredictBatch([][]float32{make([]float32, 20*30)}, 20, 30, 1)
	if err != nil || len(probs) != 1 {
		t.Errorf("PredictBatch of a 20×30 image: %v", err)
	}
	if _, err := m.PredictBatch([][]float32{make([]float32, 10)}, 28, 28, 1); err == nil {
		t.Error("PredictBatch accepted an image of the wrong length")
	}
}

func sum(p []float32) float32 {
	var s float32
	for _, v := range p {
		s += v
	}
	return s
}

// TestTemplateLayerRoundTrip fits a small two-layer template stack without
// labels, then checks that the model file round-trips to identical
// predictions and bytes.
func TestTemplateLayerRoundTrip(t *testing.T) {
	train, test := mnist(t)
	cfg := quickConfig()
	cfg.Templates = []learn.TemplateConfig{
		{K: 8, PatchSize: 3, Patches: 2000, Iters: 5, MapPool: 2},
		{K: 8, PatchSize: 3, Patches: 2000, Iters: 5, Grids: []int{1, 2}},
	}
	cfg.Pool.Keep = new(true)
	cfg.Unlabeled = 300
	m, err := Fit(cfg, train.First(500), FitOptions{Workers: 2, Unlabeled: test.First(400)})
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := m.Save(&buf); err != nil {
		t.Fatal(err)
	}
	m2, err := Load(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	var buf2 bytes.Buffer
	if err := m2.Save(&buf2); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(buf.Bytes(), buf2.Bytes()) {
		t.Fatal("save → load → save changed a model with templates")
	}
	if m.FeatureLen() != m2.FeatureLen() || m.FeatureLen() <= 12*7*7 {
		t.Fatalf("feature length %d / %d; want equal and above the %d kept front-end features", m.FeatureLen(), m2.FeatureLen(), 12*7*7)
	}
	for i := 0; i < 20; i++ {
		f1, f2 := m.Extract(setImage(test, i)), m2.Extract(setImage(test, i))
		for j := range f1 {
			if f1[j] != f2[j] {
				t.Fatalf("image %d feature %d: %v before save, %v after", i, j, f1[j], f2[j])
			}
		}
	}
}

// TestLearnedBankRoundTrip learns a small bank from the shipped photos, fits
// on a few digits and checks that the bank is in the model (learned kernels,
// saved as tensors) and survives a save/load round trip.
func TestLearnedBankRoundTrip(t *testing.T) {
	train, test := mnist(t)
	cfg := quickConfig()
	cfg.LearnBank = &LearnBankConfig{Patches: 3000, Dict: learn.DictConfig{Atoms: 8, Epochs: 1}}
	m, err := Fit(cfg, train.First(400), FitOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	b := m.Config().Front.Bank
	if b == nil || len(b.Kernels) != 8 || !m.Config().Front.Gabor.Disable {
		t.Fatalf("model config holds bank %v; want 8 learned kernels with the Gabor stage off", b)
	}
	for i, k := range b.Kernels {
		if k.Meta.Kind != v1layer.KindLearned {
			t.Fatalf("bank kernel %d has kind %v; want learned", i, k.Meta.Kind)
		}
	}
	// Each atom gives one energy channel per pair or two rectified ones.
	fromBank := 0
	for _, ch := range m.Channels() {
		if ch.Kind != v1layer.KindDoG && ch.FitR2 > 0 {
			fromBank++
		}
	}
	if fromBank < 4 || fromBank > 16 {
		t.Fatalf("%d front-end channels carry a Gabor fit; want between 4 and 16 from 8 atoms", fromBank)
	}
	// Before the bank is learned the plan sizes the fit with a stand-in of
	// 8 unpaired kernels: its channel count and feature length bound the
	// learned bank's, so the work-size check before the fit is not an
	// underestimate.
	pending, err := NewPlan(cfg)
	if err != nil {
		t.Fatal(err)
	}
	if pending.c < len(m.Channels()) || pending.featureLen(nil) < m.Plan().featureLen(nil) {
		t.Errorf("plan before the bank: %d channels, %d features; the fitted model has %d channels, %d features (want the plan's ≥)",
			pending.c, pending.featureLen(nil), len(m.Channels()), m.Plan().featureLen(nil))
	}
	var buf bytes.Buffer
	if err := m.Save(&buf); err != nil {
		t.Fatal(err)
	}
	m2, err := Load(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 10; i++ {
		f1, f2 := m.Extract(setImage(test, i)), m2.Extract(setImage(test, i))
		for j := range f1 {
			if f1[j] != f2[j] {
				t.Fatalf("image %d feature %d differs after load", i, j)
			}
		}
	}
}
