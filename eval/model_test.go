package eval

import (
	"encoding/json"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// smallModel loads testdata/pipeline/small.stm and the 32 MNIST test digits
// it was checked on (testdata/pipeline/README.md).
func smallModel(t *testing.T) (*pipeline.Model, *datasets.Set) {
	t.Helper()
	dir := filepath.Join("..", "testdata", "pipeline")
	m, err := pipeline.LoadFile(filepath.Join(dir, "small.stm"))
	if err != nil {
		t.Fatal(err)
	}
	pix, err := os.ReadFile(filepath.Join(dir, "digits32.u8"))
	if err != nil {
		t.Fatal(err)
	}
	var exp struct {
		Classes []int `json:"classes"`
	}
	b, err := os.ReadFile(filepath.Join(dir, "small_expected.json"))
	if err != nil || json.Unmarshal(b, &exp) != nil || len(exp.Classes) != 32 {
		t.Fatalf("small_expected.json: %v", err)
	}
	return m, &datasets.Set{Name: "digits32", N: 32, H: 28, W: 28, Pix: pix, Labels: exp.Classes, Classes: m.Classes()}
}

// TestExtractRange: the rows ExtractRange gives for images 3-28 in batches
// of 5 (so the last batch is short) are the model's ExtractFloats of each
// image alone.
func TestExtractRange(t *testing.T) {
	m, s := smallModel(t)
	feats, err := ExtractRange(m, s, 3, 29, 5, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	d := m.FeatureLen()
	if len(feats) != 26*d {
		t.Fatalf("%d values; want 26×%d", len(feats), d)
	}
	for _, i := range []int{3, 7, 8, 28} {
		want, err := m.ExtractFloats([][]float32{s.Float(nil, i)}, 28, 28, 1)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(feats[(i-3)*d:(i-2)*d], want[0]) {
			t.Errorf("row of image %d differs from ExtractFloats", i)
		}
	}
	if _, err := ExtractRange(m, s, 10, 40, 5, 1, nil); err == nil {
		t.Error("range past the set accepted")
	}
}

// TestPredictScoreSmallModel: with the labels set to the classes the model
// was recorded to give (small_expected.json, TestCrossArchModel's
// reference), PredictScore reports accuracy 1.
func TestPredictScoreSmallModel(t *testing.T) {
	m, s := smallModel(t)
	probs, met, err := PredictScore(m, FromSet(s), RunOptions{Workers: 2, Batch: 7})
	if err != nil {
		t.Fatal(err)
	}
	if len(probs) != 32 || met.Accuracy != 1 || met.N != 32 {
		t.Errorf("accuracy %g on %d images; want 1 on 32", met.Accuracy, met.N)
	}
}
