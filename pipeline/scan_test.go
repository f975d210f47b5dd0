package pipeline_test

import (
	"math"
	"math/rand/v2"
	"strings"
	"sync"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
)

// shapeSet returns n synthetic 28×28 items of three classes drawn with soft
// (anti-aliased) edges, bright on black like MNIST: a ring, an upright
// cross and a diagonal cross, with random size, stroke and position.
func shapeSet(n int, seed uint64) *datasets.Set {
	r := rand.New(rand.NewPCG(seed, 0x5ca9))
	s := &datasets.Set{Name: "shapes", H: 28, W: 28, Classes: []string{"ring", "plus", "cross"}}
	for i := range n {
		c := i % 3
		size := 7 + 3*r.Float64()
		t := 1.2 + r.Float64()
		ox, oy := 13.5+3*(r.Float64()-0.5), 13.5+3*(r.Float64()-0.5)
		for y := range 28 {
			for x := range 28 {
				dx, dy := float64(x)-ox, float64(y)-oy
				var d float64
				switch c {
				case 0:
					d = math.Abs(math.Hypot(dx, dy) - size)
				case 1:
					d = math.Min(math.Max(math.Abs(dx), math.Abs(dy)-size), math.Max(math.Abs(dy), math.Abs(dx)-size))
				case 2:
					u, v := (dx+dy)/math.Sqrt2, (dx-dy)/math.Sqrt2
					d = math.Min(math.Max(math.Abs(u), math.Abs(v)-size), math.Max(math.Abs(v), math.Abs(u)-size))
				}
				s.Pix = append(s.Pix, uint8(255*math.Min(1, math.Max(0, t+0.5-d))))
			}
		}
		s.Labels = append(s.Labels, c)
		s.N++
	}
	return s
}

// shapeModel is a tiny pipeline fitted once on 600 shapes.
var shapeOnce struct {
	sync.Once
	m   *pipeline.Model
	err error
}

func shapeModel(t testing.TB) *pipeline.Model {
	t.Helper()
	shapeOnce.Do(func() {
		cfg := pipeline.Config{
			Templates:    []learn.TemplateConfig{},
			Pool:         pipeline.PoolConfig{Size: 4},
			Head:         learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 30, ValFrac: -1},
			HeadMinSteps: -1,
			Seed:         3,
		}
		shapeOnce.m, shapeOnce.err = pipeline.Fit(cfg, shapeSet(600, 1), pipeline.FitOptions{Workers: 2})
	})
	if shapeOnce.err != nil {
		t.Fatal(shapeOnce.err)
	}
	return shapeOnce.m
}

func shapeScenes(t testing.TB, seed uint64, n int, cfg datasets.SceneConfig) []datasets.Scene {
	t.Helper()
	b, err := datasets.NewSceneBuilder(shapeSet(300, seed), cfg)
	if err != nil {
		t.Fatal(err)
	}
	return b.Scenes(0, n)
}

// scoreScan scans frames and scores them with eval.ScoreScenes.
func scoreScan(t testing.TB, s *pipeline.Scanner, scenes []datasets.Scene, classes, workers int) (*eval.SceneScores, []pipeline.ScanResult) {
	t.Helper()
	frames := make([]eval.FrameResult, len(scenes))
	res := make([]pipeline.ScanResult, len(scenes))
	for i := range scenes {
		sc := &scenes[i]
		if err := s.Scan(&res[i], sc.Pix, sc.H, sc.W, workers); err != nil {
			t.Fatal(err)
		}
		frames[i].Truth = sc.Items
		for _, it := range res[i].Items {
			b := it.Box
			frames[i].Found = append(frames[i].Found, eval.Detection{
				Box: [4]float64{float64(b[0]), float64(b[1]), float64(b[2]), float64(b[3])}, Class: it.Class, Score: float64(it.Score)})
		}
	}
	sc, err := eval.ScoreScenes(frames, classes)
	if err != nil {
		t.Fatal(err)
	}
	return sc, res
}

func TestScanShapesEndToEnd(t *testing.T) {
	m := shapeModel(t)
	s, err := pipeline.NewScanner(m, pipeline.ScanConfig{})
	if err != nil {
		t.Fatal(err)
	}
	// Validation scenes from other shapes than the test scenes (the
	// "training split" of this synthetic set).
	cfg := datasets.SceneConfig{W: 96, H: 96, MaxItems: 3, EmptyFrac: 0.2, Lint: 2, Seed: 5}
	ch, err := s.ChooseThreshold(shapeScenes(t, 11, 30, cfg), 2)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("threshold %.3f: F1 %.3f (%d matched of %d found, %d truth)", ch.Threshold, ch.F1, ch.Matched, ch.Found, ch.Truth)
	sc := s.Config()
	sc.Threshold = ch.Threshold
	s, err = pipeline.NewScanner(m, sc)
	if err != nil {
		t.Fatal(err)
	}
	cfg.Seed = 6
	scores, _ := scoreScan(t, s, shapeScenes(t, 12, 40, cfg), m.NumClasses(), 2)
	t.Logf("mAP %.3f, recognition %.3f, count %.3f, false per empty %.3f (%d/%d frames empty), recall %.3f, precision %.3f",
		scores.MAP, scores.RecognitionAccuracy, scores.CountAccuracy, scores.FalsePerEmpty, scores.EmptyFrames, scores.Frames, scores.Recall, scores.Precision)
}

func TestIoUNMSExploratory(t *testing.T) {
	_ = strings.TrimSpace
}
