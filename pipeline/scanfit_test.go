package pipeline_test

import (
	"bytes"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
)

// shapeConfig is the tiny pipeline of shapeModel.
func shapeConfig() pipeline.Config {
	return pipeline.Config{
		Templates:    []learn.TemplateConfig{},
		Pool:         pipeline.PoolConfig{Size: 4},
		Head:         learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 30, ValFrac: -1},
		HeadMinSteps: -1,
		Seed:         3,
	}
}

// FitScanner on shapes: windows are added (at most MaxWindows), the model
// keeps the training set's classes (no "no item" class reaches Predict),
// its clean accuracy on held-out shapes is not lower than the clean-only
// model's by more than 1 point (the windows add data; they must not cost
// clean accuracy), its scene AP (eval.ScoreScenes, PASCAL VOC AP checked
// there against scikit-learn) is no lower, and the model file is the same
// for 1 and 2 workers.
func TestFitScannerShapes(t *testing.T) {
	train := shapeSet(600, 1)
	scenes := shapeScenes(t, 21, 40, datasets.SceneConfig{W: 96, H: 96, MaxItems: 3, Background: datasets.Texture, Lint: 3, Seed: 5})
	sc := pipeline.ScanFitConfig{MaxWindows: 400}
	m, rep, err := pipeline.FitScanner(shapeConfig(), train, scenes, sc, pipeline.FitOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	if rep.Added == 0 || rep.Added > 400 || rep.Matched < rep.Added || rep.Windows < rep.Matched || rep.Second.NTrain != 600+rep.Added {
		t.Errorf("report %+v: want 0 < Added ≤ 400 ≤ … Matched ≤ Windows and 600+Added training rows", rep)
	}
	if got := m.Classes(); strings.Join(got, ",") != "ring,plus,cross" {
		t.Errorf("classes %v; want the training set's", got)
	}
	held := shapeSet(300, 7)
	accPlain, err := pipeline.Accuracy(shapeModel(t), held, nil, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	accScan, err := pipeline.Accuracy(m, held, nil, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if accScan < accPlain-0.01 {
		t.Errorf("clean accuracy %.4f after FitScanner, %.4f before; want no loss above 1 point", accScan, accPlain)
	}
	test := shapeScenes(t, 22, 30, datasets.SceneConfig{W: 96, H: 96, MaxItems: 3, Background: datasets.Texture, Lint: 3, Seed: 6})
	ap := func(m *pipeline.Model) *eval.SceneScores {
		s, err := pipeline.NewScanner(m, pipeline.ScanConfig{})
		if err != nil {
			t.Fatal(err)
		}
		scores, _ := scoreScan(t, s, test, 3, 2)
		return scores
	}
	before, after := ap(shapeModel(t)), ap(m)
	t.Logf("clean accuracy %.4f → %.4f; scene mAP %.4f → %.4f", accPlain, accScan, before.MAP, after.MAP)
	if after.MAP < before.MAP-0.02 {
		t.Errorf("scene mAP %.4f after FitScanner, %.4f before", after.MAP, before.MAP)
	}
	m1, _, err := pipeline.FitScanner(shapeConfig(), train, scenes, sc, pipeline.FitOptions{Workers: 1})
	if err != nil {
		t.Fatal(err)
	}
	var b1, b2 bytes.Buffer
	if err := m.Save(&b2); err != nil {
		t.Fatal(err)
	}
	if err := m1.Save(&b1); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(b1.Bytes(), b2.Bytes()) {
		t.Error("FitScanner gives different model files for 1 and 2 workers")
	}
}

func TestFitScannerBadInput(t *testing.T) {
	train := shapeSet(60, 1)
	scenes := shapeScenes(t, 21, 2, datasets.SceneConfig{W: 96, H: 96, Seed: 5})
	bad := []datasets.Scene{{W: 96, H: 96, Pix: make([]float32, 96*96), Items: []datasets.SceneItem{{Box: [4]int{1, 1, 9, 9}, Class: 7}}}}
	for _, c := range []struct {
		scenes []datasets.Scene
		cfg    pipeline.ScanFitConfig
		want   string
	}{
		{nil, pipeline.ScanFitConfig{}, "training split"},
		{scenes, pipeline.ScanFitConfig{MatchIoU: 1.5}, "MatchIoU"},
		{scenes, pipeline.ScanFitConfig{MaxWindows: -1}, "MaxWindows"},
		{bad, pipeline.ScanFitConfig{}, "class 7"},
	} {
		_, _, err := pipeline.FitScanner(shapeConfig(), train, c.scenes, c.cfg, pipeline.FitOptions{})
		if err == nil || !strings.HasPrefix(err.Error(), "pipeline: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v; want a pipeline error naming %q", c.cfg, err, c.want)
		}
	}
}
