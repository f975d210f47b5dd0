package pipeline_test

import (
	"os"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// BenchmarkScan scans textured-belt frames holding five items and four
// lint fragments, on one worker (the speed rows of the scene targets:
// 256×256 and 640×480 frames, one core). "shapes" uses the tiny shape
// recogniser of the tests; "model" uses a real pipeline, the committed
// small.stm (default front end, one template layer) or the model file
// named by STRIATE_SCAN_MODEL (e.g. one fitted with the "digits" preset),
// on scenes of the 32 MNIST test digits committed beside it (the
// recogniser's share grows with the model: each item costs 3-7
// PredictBatch windows).
func BenchmarkScan(b *testing.B) {
	b.Run("shapes/256x256-5items", func(b *testing.B) {
		benchScan(b, shapeModel(b), shapeScenes(b, 14, 8, beltFrames(256, 256)))
	})
	path := "../testdata/pipeline/small.stm"
	if p := os.Getenv("STRIATE_SCAN_MODEL"); p != "" {
		path = p
	}
	m, err := pipeline.LoadFile(path)
	if err != nil {
		b.Fatal(err)
	}
	digits := digitsSet(b)
	for _, sz := range [][2]int{{256, 256}, {640, 480}} {
		name := map[int]string{256: "model/256x256-5items", 640: "model/640x480-5items"}[sz[0]]
		b.Run(name, func(b *testing.B) {
			sb, err := datasets.NewSceneBuilder(digits, beltFrames(sz[0], sz[1]))
			if err != nil {
				b.Fatal(err)
			}
			benchScan(b, m, sb.Scenes(0, 8))
		})
	}
}

// beltFrames is the benchmark's scene configuration: w×h frames of five
// items on a textured belt with four lint fragments.
func beltFrames(w, h int) datasets.SceneConfig {
	return datasets.SceneConfig{W: w, H: h, MinItems: 5, MaxItems: 5, Background: datasets.Texture, Lint: 4, Seed: 1}
}

// digitsSet returns the 32 MNIST test digits of testdata/pipeline/digits32.u8
// (their labels are not stored; every digit is class 0 here, which the
// benchmark never reads).
func digitsSet(b *testing.B) *datasets.Set {
	pix, err := os.ReadFile("../testdata/pipeline/digits32.u8")
	if err != nil {
		b.Fatal(err)
	}
	n := len(pix) / (28 * 28)
	return &datasets.Set{Name: "digits32", N: n, H: 28, W: 28, Pix: pix, Labels: make([]int, n), Classes: []string{"digit", "other"}}
}

func benchScan(b *testing.B, m *pipeline.Model, scenes []datasets.Scene) {
	s, err := pipeline.NewScanner(m, pipeline.ScanConfig{})
	if err != nil {
		b.Fatal(err)
	}
	var res pipeline.ScanResult
	items := 0
	b.ReportAllocs()
	b.SetBytes(int64(scenes[0].W * scenes[0].H * 4))
	b.ResetTimer()
	for i := 0; b.Loop(); i++ {
		sc := &scenes[i%len(scenes)]
		if err := s.Scan(&res, sc.Pix, sc.H, sc.W, 1); err != nil {
			b.Fatal(err)
		}
		items += len(res.Items)
	}
	b.ReportMetric(float64(items)/float64(b.N), "items/frame")
}
