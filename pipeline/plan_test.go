package pipeline

import (
	"bytes"
	"encoding/binary"
	"image"
	"os"
	"slices"
	"testing"

	"github.com/striate/striate/datasets"
)

// TestSingleAndBatchPathsAgree: one image gives bit-identical features and
// probabilities whichever entry point it comes through (Extract/Predict,
// ExtractImages/PredictImages, ExtractBatch/PredictBatch, Accuracy), at the
// input size and resized, since they all run the plan's one stage path.
// The committed small model has a template layer, kept pooled maps and a
// guard, so every stage is exercised.
func TestSingleAndBatchPathsAgree(t *testing.T) {
	m, err := LoadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	floats := digits32(t)[:12]
	raw, err := os.ReadFile(smallDigits)
	if err != nil {
		t.Fatal(err)
	}
	// The same digits as 8-bit grey images (ToGray gives v/255, as the
	// floats hold) and, resized to 36×40 as floats, as 16-bit grey images.
	var grays, big16 []image.Image
	var big [][]float32
	for i := range floats {
		g := image.NewGray(image.Rect(0, 0, 28, 28))
		copy(g.Pix, raw[i*28*28:(i+1)*28*28])
		grays = append(grays, g)
		b := datasets.ToGray(nil, g, 36, 40)
		big = append(big, b)
		big16 = append(big16, grayImage16(b, 36, 40))
	}
	for _, c := range []struct {
		name   string
		imgs   []image.Image
		floats [][]float32
		h, w   int
	}{{"28×28", grays, floats, 28, 28}, {"36×40", big16, big, 36, 40}} {
		fb, err := m.ExtractBatch(c.floats, c.h, c.w, 3)
		if err != nil {
			t.Fatal(err)
		}
		pb, err := m.PredictBatch(c.floats, c.h, c.w, 3)
		if err != nil {
			t.Fatal(err)
		}
		fi, pi := m.ExtractImages(c.imgs, 2), m.PredictImages(c.imgs, 2)
		for i, img := range c.imgs {
			f := m.Extract(img)
			_, p := m.Predict(img)
			if !slices.Equal(f, fb[i]) || !slices.Equal(f, fi[i]) {
				t.Fatalf("%s image %d: Extract, ExtractBatch and ExtractImages differ", c.name, i)
			}
			if !slices.Equal(p, pb[i]) || !slices.Equal(p, pi[i]) {
				t.Fatalf("%s image %d: Predict, PredictBatch and PredictImages differ", c.name, i)
			}
		}
	}

	// Accuracy scores the same probabilities, perturbed or not.
	set := &datasets.Set{Name: "digits", N: len(floats), H: 28, W: 28, Pix: raw[:len(floats)*28*28],
		Labels: make([]int, len(floats)), Classes: m.Classes()}
	for _, perturb := range []Perturb{nil, func(i int) (datasets.Perturbation, uint64) {
		return datasets.Perturbation{Kind: datasets.Noise, Level: 0.3}, uint64(i)
	}} {
		imgs := floats
		if perturb != nil {
			imgs = make([][]float32, len(floats))
			for i := range imgs {
				p, seed := perturb(i)
				imgs[i] = make([]float32, 28*28)
				p.Apply(imgs[i], floats[i], 28, 28, seed)
			}
		}
		pb, err := m.PredictBatch(imgs, 28, 28, 1)
		if err != nil {
			t.Fatal(err)
		}
		for i := range pb {
			set.Labels[i] = argmax(pb[i])
		}
		set.Labels[0] = (set.Labels[0] + 1) % 10 // one wrong label: accuracy (n−1)/n
		acc, err := Accuracy(m, set, perturb, 2, nil)
		if err != nil {
			t.Fatal(err)
		}
		if want := float64(len(floats)-1) / float64(len(floats)); acc != want {
			t.Errorf("perturbed %v: Accuracy %v; want %v from PredictBatch's classes", perturb != nil, acc, want)
		}
	}
}

// TestPlanFitMatchesFit: a plan built once fits the same model as Fit, as
// often as it is used, and is left unchanged by fitting.
func TestPlanFitMatchesFit(t *testing.T) {
	train, _ := mnist(t)
	small := train.First(300)
	cfg := quickConfig()
	cfg.Head.Epochs = 2
	save := func(m *Model) []byte {
		t.Helper()
		var b bytes.Buffer
		if err := m.Save(&b); err != nil {
			t.Fatal(err)
		}
		return b.Bytes()
	}
	m, err := Fit(cfg, small, FitOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	want := save(m)
	p, err := NewPlan(cfg)
	if err != nil {
		t.Fatal(err)
	}
	before, _ := p.Config().MarshalIndent()
	for range 2 {
		m, _, err := p.Fit(small, FitOptions{Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(save(m), want) {
			t.Fatal("Plan.Fit gave another model file than Fit")
		}
	}
	if after, _ := p.Config().MarshalIndent(); !bytes.Equal(before, after) {
		t.Errorf("fitting changed the plan's config:\n%s\nwas\n%s", after, before)
	}
}

// TestVersion1ModelLoads: the committed small model is a format-version-1
// file; it loads with its configuration spelled out under version 2's
// rules, saves as version 2, and the saved file predicts bit-identically.
func TestVersion1ModelLoads(t *testing.T) {
	b, err := os.ReadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	if v := binary.LittleEndian.Uint32(b[8:]); v != 1 {
		t.Skipf("%s is format version %d; this test needs a version-1 file", smallModel, v)
	}
	m, err := Load(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	// The file's head was {"kind":"softmax","epochs":5}: learn's defaults
	// for the rest under version 1's rule.
	if h := m.Config().Head; h.Schedule != "constant" || h.ValFrac != 0.1 || h.Epochs != 5 {
		t.Errorf("head read as %+v; want schedule constant, val_frac 0.1, 5 epochs", h)
	}
	if !m.Config().Pool.keep() {
		t.Error("pool.keep read as false; the file says true")
	}
	var buf bytes.Buffer
	if err := m.Save(&buf); err != nil {
		t.Fatal(err)
	}
	if v := binary.LittleEndian.Uint32(buf.Bytes()[8:]); v != FormatVersion {
		t.Errorf("saved as version %d; want %d", v, FormatVersion)
	}
	m2, err := Load(&buf)
	if err != nil {
		t.Fatal(err)
	}
	imgs := digits32(t)
	p1, _ := m.PredictBatch(imgs, 28, 28, 2)
	p2, _ := m2.PredictBatch(imgs, 28, 28, 2)
	for i := range p1 {
		if !slices.Equal(p1[i], p2[i]) {
			t.Fatalf("image %d: %v before re-saving, %v after", i, p1[i], p2[i])
		}
	}
}
