package pipeline

import (
	"bytes"
	"encoding/json"
	"errors"
	"image"
	"io"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/internal/hostiletest"
	"github.com/striate/striate/learn"
)

// rejectAllocBound is the reliability target for rejecting any hostile
// input (see hostiletest.AllocBound).
const rejectAllocBound = hostiletest.AllocBound

// allocated returns the bytes f allocates (TotalAlloc grows only; other
// goroutines of the test binary are idle while it runs).
func allocated(f func()) uint64 {
	var a, b runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&a)
	f()
	runtime.ReadMemStats(&b)
	return b.TotalAlloc - a.TotalAlloc
}

// hostileConfig stays inside every documented range (input 1024×1024, two
// template layers, 1,024 templates in the first), yet one prediction needs
// tens of GiB: the first layer's 2,048 response maps at about 1000×1000
// positions.
func hostileConfig() Config { return stackedConfig(1024) }

// stackedConfig is hostileConfig at input side×side.
func stackedConfig(side int) Config {
	return Config{
		Input: InputConfig{Height: side, Width: side},
		Templates: []learn.TemplateConfig{
			{K: 1024, PatchSize: 1, Patches: 2048},
			{K: 8, PatchSize: 1, Patches: 2048},
		},
		Pool: PoolConfig{Keep: new(false)},
		Head: learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 1, Schedule: learn.ScheduleConstant, ValFrac: 0.1},
	}
}

// writeHostileModel writes a model file of hostileConfig with a correct
// checksum and tensors of the shapes the configuration implies (values
// arbitrary but finite): about 17 MB, most of it the second layer's
// 2048×2048 whitening matrix.
func writeHostileModel(t *testing.T) string { return writeStackedModel(t, 1024) }

// writeStackedModel writes the model of stackedConfig(side).
func writeStackedModel(t *testing.T, side int) string {
	t.Helper()
	cfg := stackedConfig(side)
	p, err := newPlan(cfg)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 2))
	vals := func(n int) []float32 {
		v := make([]float32, n)
		for i := range v {
			v[i] = rng.Float32()
		}
		return v
	}
	var ts []tensor
	c := p.c
	for i, tc := range cfg.Templates {
		dim := c
		pre := tmplTensorPrefix + string(rune('0'+i)) + ".templates."
		ts = append(ts,
			tensor{Name: pre + "mean", DType: Float32, Shape: []int{dim}, F: vals(dim)},
			tensor{Name: pre + "whiten", DType: Float32, Shape: []int{dim, dim}, F: vals(dim * dim)},
			tensor{Name: pre + "centroids", DType: Float32, Shape: []int{tc.K, c, 1, 1}, F: vals(tc.K * dim)},
			tensor{Name: pre + "scalars", DType: Float32, Shape: []int{2}, F: []float32{0.5, 0.1}})
		c = 2 * tc.K // soft encoder: 2K response maps
	}
	feat := 4 * c // one 2×2 grid of the last layer's 2K features
	keep := make([]int32, feat)
	for i := range keep {
		keep[i] = int32(i)
	}
	lo, hi := make([]float32, feat), make([]float32, feat)
	for i := range hi {
		hi[i] = 1
	}
	ts = append(ts, tensor{Name: "guard.keep", DType: Int32, Shape: []int{feat}, I: keep},
		tensor{Name: "guard.lo", DType: Float32, Shape: []int{feat}, F: lo},
		tensor{Name: "guard.hi", DType: Float32, Shape: []int{feat}, F: hi})
	X, y := vals(20*feat), make([]int, 20)
	for i := range y {
		y[i] = i % 2
	}
	head, _, err := cfg.Head.Fit(X, y, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, nt := range head.Tensors() {
		ts = append(ts, tensor{Name: nt.Name, DType: Float32, Shape: nt.Shape, F: nt.Data})
	}
	cj, err := json.Marshal(cfg)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := encodeFile(&buf, &fileContents{Config: cj, Classes: []string{"shirt", "sock"}, Tensors: ts}); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "hostile.striate")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestHostileModelRejectedAtLoad: the 17 MB model whose configuration needs
// tens of GiB per prediction is refused by LoadFile from its header, with an
// error naming the fields and the limit, allocating at most
// rejectAllocBound and reading only the header (before, Load ran a probe
// pass whose buffers grew with positions × K: 5.4 GB).
func TestHostileModelRejectedAtLoad(t *testing.T) {
	path := writeHostileModel(t)
	st, _ := os.Stat(path)
	if st.Size() < 16<<20 {
		t.Fatalf("hostile model has %d bytes; want about 17 MB", st.Size())
	}
	var err error
	got := allocated(func() { _, err = LoadFile(path) })
	if !errors.Is(err, ErrLimit) {
		t.Fatalf("LoadFile: %v; want ErrLimit", err)
	}
	for _, want := range []string{"input 1024×1024", "templates[0].k 1024", "4.0 GiB limit", "Limits.MaxWorkBytes", path} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error does not name %q:\n%v", want, err)
		}
	}
	if got > rejectAllocBound {
		t.Errorf("rejecting the model allocated %d bytes; want ≤ %d", got, rejectAllocBound)
	}
	t.Logf("refused a %d-byte model after allocating %d bytes: %v", st.Size(), got, err)
	f, _ := os.Open(path)
	defer f.Close()
	cr := &countReader{r: f}
	if _, err := Load(cr); !errors.Is(err, ErrLimit) {
		t.Fatalf("Load: %v", err)
	}
	t.Logf("Load read %d of %d bytes", cr.n, st.Size())
	if cr.n > 1<<20 {
		t.Errorf("Load read %d of %d bytes before refusing; want only the header", cr.n, st.Size())
	}
}

type countReader struct {
	r io.Reader
	n int64
}

func (c *countReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n += int64(n)
	return n, err
}

// TestLimitRaisedOnPurpose: with the limit lifted the same model loads, and
// loading itself stays small (no probe pass); its PredictWork is what the
// refusal reported.
func TestLimitRaisedOnPurpose(t *testing.T) {
	path := writeHostileModel(t)
	var m *Model
	var err error
	got := allocated(func() { m, err = LoadFileLimits(path, Limits{MaxWorkBytes: -1}) })
	if err != nil {
		t.Fatal(err)
	}
	if got > rejectAllocBound {
		t.Errorf("loading allocated %d bytes; want ≤ %d (the tensors are 17 MB)", got, rejectAllocBound)
	}
	w, err := m.Plan().PredictWork()
	if err != nil || w.Bytes <= DefaultMaxWorkBytes || w.Parts[0].What != "templates[0] encoding" {
		t.Errorf("PredictWork %+v, %v; want above the default limit, led by templates[0]", w.Bytes, err)
	}
}

// TestConfigWorkSizeAtParse: a configuration over the limit is refused by
// ParseConfig, naming the fields that drive it: the hostile model's
// configuration, and the largest allowed templates.patches (whose fit once
// ran out of memory after 61 s). NewPlanLimits accepts them with a raised
// limit.
func TestConfigWorkSizeAtParse(t *testing.T) {
	big, _ := json.Marshal(hostileConfig())
	for _, tc := range []struct {
		name, json string
		want       []string
	}{
		{"hostile model", string(big), []string{"to predict", "templates[0] encoding", "templates[0].k 1024"}},
		{"max patches", `{"templates":[{"patches":4194304,"patch_size":9}]}`, []string{"to fit", "templates[0] fit", "templates[0].patches"}},
		{"max unlabeled", `{"input":{"height":512,"width":512},"unlabeled":100000}`, []string{"to fit", "maps of 100000 unlabeled images", "unlabeled 100000"}},
	} {
		_, err := ParseConfig(strings.NewReader(tc.json))
		var we *WorkSizeError
		if !errors.As(err, &we) || !errors.Is(err, ErrWorkSize) {
			t.Errorf("%s: %v; want a *WorkSizeError", tc.name, err)
			continue
		}
		for _, w := range tc.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: error does not name %q:\n%v", tc.name, w, err)
			}
		}
		var c Config
		json.Unmarshal([]byte(tc.json), &c)
		if _, err := NewPlanLimits(c, Limits{MaxWorkBytes: 1 << 50}); err != nil {
			t.Errorf("%s with the limit raised: %v", tc.name, err)
		}
	}
	for _, name := range []string{"default", "digits", "garments"} {
		c, _ := Preset(name)
		if _, err := NewPlan(c); err != nil {
			t.Errorf("preset %s: %v", name, err)
		}
	}
}

// TestFitWorkCheckedFirst: Fit checks its work size with the data's sizes
// known before it starts any phase: no progress step is reported.
func TestFitWorkCheckedFirst(t *testing.T) {
	s := &datasets.Set{Name: "stripes", N: 4, H: 28, W: 28, Pix: make([]uint8, 4*28*28), Labels: []int{0, 1, 0, 1}, Classes: []string{"a", "b"}}
	steps := 0
	_, err := Fit(Config{}, s, FitOptions{Limits: Limits{MaxWorkBytes: 1 << 20}, Progress: progressFunc(func(int, int, string) { steps++ })})
	if !errors.Is(err, ErrWorkSize) || steps != 0 {
		t.Errorf("Fit over a 1 MiB limit: %v after %d progress steps; want ErrWorkSize before any", err, steps)
	}
}

type progressFunc func(done, total int, msg string)

func (f progressFunc) Step(done, total int, msg string) { f(done, total, msg) }

// TestPredictWorkBounds: the bound covers what a first prediction on a
// fresh model (empty scratch pools) really allocates, and is within a
// small factor of it (a bound of everything would also "cover" it): on the
// small committed model (front end, one template layer) and on the stacked
// model at 40×40 (two layers, 1,024 templates: the template buffers
// dominate).
func TestPredictWorkBounds(t *testing.T) {
	for _, path := range []string{smallModel, writeStackedModel(t, 40)} {
		m, err := LoadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		h, wd := m.InputSize()
		img := image.NewGray(image.Rect(0, 0, wd, h))
		for i := range img.Pix {
			img.Pix[i] = uint8(i * 7)
		}
		got := allocated(func() { m.Predict(img) })
		w, err := m.Plan().PredictWork()
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("%s: first Predict allocated %d bytes; PredictWork %d", filepath.Base(path), got, w.Bytes)
		if uint64(w.Bytes) < got || uint64(w.Bytes) > 4*got {
			t.Errorf("%s: PredictWork %d bytes; a first Predict allocated %d (want within [1×, 4×])", path, w.Bytes, got)
		}
	}
}
