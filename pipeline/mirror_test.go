package pipeline

import (
	"bytes"
	"math"
	"slices"
	"testing"
)

// TestMirrorPrediction fits a small mirror-trained model and checks the two
// properties Config.Mirror promises: the prediction of an image and of its
// mirror image are the same distribution (the average over the mirror group
// is invariant under it; common practice for test-time averaging over a
// symmetry), and that distribution is the mean of the head's two
// predictions. The mirrored training rows double the set the head sees.
func TestMirrorPrediction(t *testing.T) {
	train, test := mnist(t)
	cfg := quickConfig()
	cfg.Mirror = true
	m, rep, err := FitReported(cfg, train.First(600), FitOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if n := rep.Head.NTrain + rep.Head.NVal; n != 1200 {
		t.Errorf("head trained on %d rows; want 1200 (600 images and their mirror images)", n)
	}
	w := m.scratch.Get().(*work)
	defer m.scratch.Put(w)
	for i := 0; i < 20; i++ {
		img := test.Float(nil, i)
		mir := mirrorRows(nil, img, test.H, test.W)
		if !slices.Equal(mirrorRows(nil, mir, test.H, test.W), img) {
			t.Fatalf("image %d: mirroring twice does not give the image back", i)
		}
		p := m.classify(make([]float32, 10), img, w)
		q := m.classify(make([]float32, 10), mir, w)
		fa := m.head.Predict(nil, m.extract(nil, img, w), m.headScratch(w))
		fb := m.head.Predict(nil, m.extract(nil, mir, w), m.headScratch(w))
		for k := range p {
			// mirrorTol: the two means add the same two float32 numbers in
			// the other order, which can differ in the last bit.
			const mirrorTol = 1e-6
			if math.Abs(float64(p[k]-q[k])) > mirrorTol {
				t.Fatalf("image %d class %d: p(x) %v, p(mirror x) %v; want equal", i, k, p[k], q[k])
			}
			if want := (fa[k] + fb[k]) / 2; math.Abs(float64(p[k]-want)) > mirrorTol {
				t.Fatalf("image %d class %d: %v; want the mean of %v and %v", i, k, p[k], fa[k], fb[k])
			}
		}
	}
	// The switch is stored in the model file.
	var buf bytes.Buffer
	if err := m.Save(&buf); err != nil {
		t.Fatal(err)
	}
	back, err := Load(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if !back.Config().Mirror {
		t.Error("Mirror is lost in the model file")
	}
}
