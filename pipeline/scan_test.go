package pipeline_test

import (
	"math"
	"math/rand/v2"
	"reflect"
	"strings"
	"sync"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/pipeline"
	"github.com/striate/striate/v1layer"
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
		shapeOnce.m, shapeOnce.err = pipeline.Fit(shapeConfig(), shapeSet(600, 1), pipeline.FitOptions{Workers: 2})
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

// End-to-end: a tiny recogniser trained on single centred shapes finds,
// boxes and names the shapes of small scenes with lint (ground truth from
// datasets.SceneBuilder), scored with eval.ScoreScenes (PASCAL VOC AP at
// IoU ≥ 0.5).
func TestScanShapesEndToEnd(t *testing.T) {
	m := shapeModel(t)
	s, err := pipeline.NewScanner(m, pipeline.ScanConfig{})
	if err != nil {
		t.Fatal(err)
	}
	// Validation scenes from other shapes than the test scenes (this
	// synthetic set's "training split").
	cfg := datasets.SceneConfig{W: 96, H: 96, MaxItems: 3, EmptyFrac: 0.2, Lint: 2, Seed: 5}
	ch, err := s.ChooseThreshold(shapeScenes(t, 11, 30, cfg), 2)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("threshold %.3f: F1 %.3f (%d matched of %d found, %d truth)", ch.Threshold, ch.F1, ch.Matched, ch.Found, ch.Truth)
	if !(ch.Threshold > 0 && ch.Threshold <= 1) || ch.Truth == 0 || ch.F1 < 0.8 {
		t.Errorf("threshold choice %+v: want a threshold in (0,1] with F1 ≥ 0.8 on the validation scenes", ch)
	}
	sc := s.Config()
	sc.Threshold = ch.Threshold
	if s, err = pipeline.NewScanner(m, sc); err != nil {
		t.Fatal(err)
	}
	cfg.Seed = 6
	scores, res := scoreScan(t, s, shapeScenes(t, 12, 40, cfg), m.NumClasses(), 2)
	t.Logf("mAP %.3f, recognition %.3f, count %.3f, false per empty %.3f (%d/%d frames empty), recall %.3f, precision %.3f",
		scores.MAP, scores.RecognitionAccuracy, scores.CountAccuracy, scores.FalsePerEmpty, scores.EmptyFrames, scores.Frames, scores.Recall, scores.Precision)
	// Floors below the measured 0.95 / 1.00 / 0.93 / 0 (the scenes are
	// seeded, so the figures are fixed for one build; the margin is for the
	// SIMD build's rounding).
	const minMAP, minRecognition, minCount, maxFalse = 0.85, 0.95, 0.8, 0.25
	if scores.MAP < minMAP || scores.RecognitionAccuracy < minRecognition || scores.CountAccuracy < minCount || scores.FalsePerEmpty > maxFalse {
		t.Errorf("mAP %.3f (want ≥ %v), recognition %.3f (≥ %v), count %.3f (≥ %v), false per empty %.3f (≤ %v)",
			scores.MAP, minMAP, scores.RecognitionAccuracy, minRecognition, scores.CountAccuracy, minCount, scores.FalsePerEmpty, maxFalse)
	}
	// Every item names a fixation that found ink, and fixations are visited
	// in decreasing salience (winner-take-all with inhibition of return
	// never raises the map).
	for i, r := range res {
		for _, it := range r.Items {
			if it.Fixation < 0 || it.Fixation >= len(r.Fixations) || !r.Fixations[it.Fixation].Item {
				t.Errorf("frame %d: item %+v names fixation %d of %d that found no ink", i, it, it.Fixation, len(r.Fixations))
			}
		}
		for j := 1; j < len(r.Fixations); j++ {
			if r.Fixations[j].Salience > r.Fixations[j-1].Salience {
				t.Errorf("frame %d: fixation %d has salience %v above fixation %d's %v", i, j, r.Fixations[j].Salience, j-1, r.Fixations[j-1].Salience)
			}
		}
	}
}

// Each window is normalised on its own: a scene whose items are dim grey on
// a mid-grey belt, with a bright white block elsewhere in the frame (which
// would squash the items' range under a whole-frame stretch), gives the
// same items, boxes and classes as the same scene in full contrast.
func TestScanNormalisesEachWindow(t *testing.T) {
	m := shapeModel(t)
	s, err := pipeline.NewScanner(m, pipeline.ScanConfig{})
	if err != nil {
		t.Fatal(err)
	}
	scenes := shapeScenes(t, 12, 6, datasets.SceneConfig{W: 96, H: 96, MinItems: 2, MaxItems: 2, Seed: 9})
	same := 0
	for i := range scenes {
		sc := &scenes[i]
		var bright, dim pipeline.ScanResult
		if err := s.Scan(&bright, sc.Pix, sc.H, sc.W, 1); err != nil {
			t.Fatal(err)
		}
		pix := make([]float32, len(sc.Pix))
		for k, v := range sc.Pix {
			pix[k] = 0.4 + 0.25*v
		}
		if err := s.Scan(&dim, pix, sc.H, sc.W, 1); err != nil {
			t.Fatal(err)
		}
		if len(bright.Items) == 0 {
			t.Fatalf("scene %d: nothing found in full contrast", i)
		}
		if itemsAgree(bright.Items, dim.Items) {
			same++
		} else {
			t.Logf("scene %d: full contrast %+v, dim %+v", i, bright.Items, dim.Items)
		}
	}
	// Quantisation of the dim frame's grey levels may move a box by a pixel
	// in a scene or two; most must agree in class and box (IoU ≥ 0.8).
	if same < len(scenes)-1 {
		t.Errorf("%d of %d dim scenes agree with their full-contrast versions; want ≥ %d", same, len(scenes), len(scenes)-1)
	}
}

func itemsAgree(a, b []pipeline.ScanItem) bool {
	if len(a) != len(b) {
		return false
	}
	for _, x := range a {
		ok := false
		for _, y := range b {
			ok = ok || (x.Class == y.Class && pipeline.IoU(x.Box, y.Box) >= 0.8)
		}
		if !ok {
			return false
		}
	}
	return true
}

// Blank, all-black and nearly flat frames hold no items and no fixations.
func TestScanBlankFrames(t *testing.T) {
	s, err := pipeline.NewScanner(shapeModel(t), pipeline.ScanConfig{})
	if err != nil {
		t.Fatal(err)
	}
	h, w := 80, 96
	ripple := make([]float32, h*w)
	for i := range ripple {
		ripple[i] = 0.5 + float32(i%3)/255 // under 4/255 of range
	}
	grey := make([]float32, h*w)
	for i := range grey {
		grey[i] = 0.7
	}
	for name, img := range map[string][]float32{"black": make([]float32, h*w), "grey": grey, "ripple": ripple} {
		res := pipeline.ScanResult{Items: []pipeline.ScanItem{{Class: 1}}, Fixations: []pipeline.Fixation{{X: 3}}}
		if err := s.Scan(&res, img, h, w, 2); err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if len(res.Items) != 0 || len(res.Fixations) != 0 {
			t.Errorf("%s frame: %d items, %d fixations; want none", name, len(res.Items), len(res.Fixations))
		}
	}
}

func TestScanBadFrames(t *testing.T) {
	s, err := pipeline.NewScanner(shapeModel(t), pipeline.ScanConfig{})
	if err != nil {
		t.Fatal(err)
	}
	if got := s.MinSide(); got != 57 {
		t.Errorf("MinSide %d; want 57 (the default saliency map's minimum, above the 28-px input)", got)
	}
	nan := make([]float32, 64*64)
	nan[64*3+5] = float32(math.NaN())
	for _, c := range []struct {
		name string
		img  []float32
		h, w int
		want string
	}{
		{"small", make([]float32, 56*100), 56, 100, "smaller than 57×57"},
		{"short", make([]float32, 10), 64, 64, "want 64×64 = 4096"},
		{"nan", nan, 64, 64, "row 3, column 5"},
		{"huge", nil, 1<<13 + 1, 64, "limit"},
	} {
		var res pipeline.ScanResult
		err := s.Scan(&res, c.img, c.h, c.w, 1)
		if err == nil || !strings.HasPrefix(err.Error(), "pipeline: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v; want a pipeline error mentioning %q", c.name, err, c.want)
		}
	}
	if _, err := s.ChooseThreshold(nil, 1); err == nil || !strings.Contains(err.Error(), "training split") {
		t.Errorf("ChooseThreshold without scenes: %v; want an error pointing at the training split", err)
	}
}

func TestScanConfigValidation(t *testing.T) {
	m := shapeModel(t)
	if _, err := pipeline.NewScanner(nil, pipeline.ScanConfig{}); err == nil {
		t.Error("NewScanner(nil): no error")
	}
	for _, c := range []struct {
		cfg  pipeline.ScanConfig
		want string
	}{
		{pipeline.ScanConfig{ItemSize: 2}, "ItemSize"},
		{pipeline.ScanConfig{MinItemSide: 40}, "MinItemSide"},
		{pipeline.ScanConfig{InkFraction: 1}, "InkFraction"},
		{pipeline.ScanConfig{Gap: 17}, "Gap"},
		{pipeline.ScanConfig{FrameContrast: 1}, "FrameContrast"},
		{pipeline.ScanConfig{SplitSide: 0.5}, "SplitSide"},
		{pipeline.ScanConfig{Frames: []float64{0.5}}, "Frames"},
		{pipeline.ScanConfig{Sizes: []float64{4}}, "Sizes"},
		{pipeline.ScanConfig{Threshold: 1.5}, "Threshold"},
		{pipeline.ScanConfig{NMSIoU: -0.1}, "NMSIoU"},
		{pipeline.ScanConfig{MaxItems: -1}, "MaxItems"},
		{pipeline.ScanConfig{MaxFixations: 5000}, "MaxFixations"},
		{pipeline.ScanConfig{StopFraction: 1}, "StopFraction"},
		{pipeline.ScanConfig{Border: 100}, "Border"},
		{pipeline.ScanConfig{Saliency: v1layer.SaliencyConfig{Orientations: 99}}, "Saliency"},
	} {
		_, err := pipeline.NewScanner(m, c.cfg)
		if err == nil || !strings.HasPrefix(err.Error(), "pipeline: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v; want one naming %s", c.cfg, err, c.want)
		}
	}
}

// Each zero field means its documented default, whatever the others hold.
func TestScanConfigDefaults(t *testing.T) {
	m := shapeModel(t)
	want := pipeline.ScanConfig{
		ItemSize: 28, MinItemSide: 14, InkFraction: pipeline.DefaultInkFraction, Gap: pipeline.DefaultGap,
		FrameContrast: pipeline.DefaultFrameContrast, SplitSide: pipeline.DefaultSplitSide,
		Frames: pipeline.DefaultFrames, Sizes: pipeline.DefaultSizes, Threshold: pipeline.DefaultThreshold,
		NMSIoU: pipeline.DefaultNMSIoU, MaxItems: pipeline.DefaultMaxItems, MaxFixations: 3 * pipeline.DefaultMaxItems,
		StopFraction: pipeline.DefaultStopFraction, Border: 7,
	}
	s, err := pipeline.NewScanner(m, pipeline.ScanConfig{})
	if err != nil {
		t.Fatal(err)
	}
	got := s.Config()
	want.Saliency = got.Saliency
	if !reflect.DeepEqual(got, want) {
		t.Errorf("defaults %+v; want %+v", got, want)
	}
	// One field set: the others keep their defaults, derived ones follow it.
	s, err = pipeline.NewScanner(m, pipeline.ScanConfig{ItemSize: 40, MaxItems: 3})
	if err != nil {
		t.Fatal(err)
	}
	got = s.Config()
	if got.MinItemSide != 20 || got.Border != 10 || got.MaxFixations != 9 || got.Gap != pipeline.DefaultGap {
		t.Errorf("with ItemSize 40, MaxItems 3: %+v; want MinItemSide 20, Border 10, MaxFixations 9, Gap %d", got, pipeline.DefaultGap)
	}
}

// The same frames give the same fixations and items on any number of
// workers.
func TestScanWorkersIdentical(t *testing.T) {
	s, err := pipeline.NewScanner(shapeModel(t), pipeline.ScanConfig{Threshold: 0.3})
	if err != nil {
		t.Fatal(err)
	}
	scenes := shapeScenes(t, 13, 4, datasets.SceneConfig{W: 112, H: 96, Lint: 3, Background: datasets.Texture, Seed: 3})
	for i := range scenes {
		sc := &scenes[i]
		var one pipeline.ScanResult
		if err := s.Scan(&one, sc.Pix, sc.H, sc.W, 1); err != nil {
			t.Fatal(err)
		}
		if len(one.Fixations) == 0 {
			t.Fatalf("scene %d: no fixations", i)
		}
		for _, wk := range []int{2, 5} {
			var many pipeline.ScanResult
			if err := s.Scan(&many, sc.Pix, sc.H, sc.W, wk); err != nil {
				t.Fatal(err)
			}
			if !reflect.DeepEqual(one, many) {
				t.Errorf("scene %d: %d workers give %+v; 1 gives %+v", i, wk, many, one)
			}
		}
	}
}

// IoU of half-open boxes against hand-worked values of the PASCAL VOC
// definition |A ∩ B| / |A ∪ B| (Everingham et al. 2010), and against
// eval.IoU (checked there against a NumPy port of the VOC devkit) on
// random boxes.
func TestIoUHandWorked(t *testing.T) {
	for _, c := range []struct {
		a, b [4]int
		want float64
	}{
		{[4]int{0, 0, 10, 10}, [4]int{5, 5, 15, 15}, 25.0 / 175},   // corner overlap 5×5
		{[4]int{0, 0, 2, 2}, [4]int{1, 0, 3, 2}, 2.0 / 6},          // half shifted
		{[4]int{0, 0, 10, 10}, [4]int{2, 2, 7, 7}, 25.0 / 100},     // contained
		{[4]int{3, 4, 9, 12}, [4]int{3, 4, 9, 12}, 1},              // identical
		{[4]int{0, 0, 10, 10}, [4]int{10, 0, 20, 10}, 0},           // sharing an edge: no pixel in common
		{[4]int{0, 0, 4, 4}, [4]int{6, 6, 9, 9}, 0},                // apart
		{[4]int{1, 1, 11, 11}, [4]int{6, 1, 16, 11}, 50.0 / 150},   // VOC (1,1)-(10,10) vs (6,1)-(15,10) inclusive
		{[4]int{0, 0, 10, 20}, [4]int{0, 10, 10, 30}, 100.0 / 300}, // stacked halves
	} {
		if got := pipeline.IoU(c.a, c.b); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("IoU(%v, %v) = %v; want %v", c.a, c.b, got, c.want)
		}
		if got := pipeline.IoU(c.b, c.a); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("IoU(%v, %v) = %v; want %v (symmetric)", c.b, c.a, got, c.want)
		}
	}
	r := rand.New(rand.NewPCG(1, 2))
	box := func() [4]int {
		x, y := r.IntN(50), r.IntN(50)
		return [4]int{x, y, x + 1 + r.IntN(30), y + 1 + r.IntN(30)}
	}
	f := func(b [4]int) [4]float64 {
		return [4]float64{float64(b[0]), float64(b[1]), float64(b[2]), float64(b[3])}
	}
	for range 1000 {
		a, b := box(), box()
		if got, want := pipeline.IoU(a, b), eval.IoU(f(a), f(b)); math.Abs(got-want) > 1e-12 {
			t.Fatalf("IoU(%v, %v) = %v; eval.IoU gives %v", a, b, got, want)
		}
	}
}

// Greedy NMS on a hand-worked case (common practice: visit by decreasing
// score, drop a box overlapping a kept one by more than the limit;
// suppressed boxes suppress nothing).
func TestNMSHandWorked(t *testing.T) {
	A := pipeline.ScanItem{Score: 0.9, Box: [4]int{0, 0, 10, 10}, Fixation: 0}
	B := pipeline.ScanItem{Score: 0.8, Box: [4]int{1, 1, 11, 11}, Fixation: 1}   // IoU(A) = 81/119 = 0.681
	C := pipeline.ScanItem{Score: 0.7, Box: [4]int{20, 20, 30, 30}, Fixation: 2} // apart
	D := pipeline.ScanItem{Score: 0.6, Box: [4]int{6, 1, 16, 11}, Fixation: 3}   // IoU(A) = 36/164 = 0.220, IoU(B) = 50/150 = 0.333
	E := pipeline.ScanItem{Score: 0.9, Box: [4]int{0, 0, 10, 10}, Fixation: 4}   // ties A: A came first
	in := []pipeline.ScanItem{D, C, B, E, A}
	for _, c := range []struct {
		limit float64
		want  []pipeline.ScanItem
	}{
		{0.5, []pipeline.ScanItem{A, C, D}},     // B (0.681) and E (1) go; D overlaps only the dropped B by more
		{0.3, []pipeline.ScanItem{A, C, D}},     // D's 0.220 with A is under 0.3
		{0.2, []pipeline.ScanItem{A, C}},        // now D goes too
		{0.7, []pipeline.ScanItem{A, B, C, D}},  // B's 0.681 is under 0.7, D's 0.333 with B too; E (1) goes
		{1, []pipeline.ScanItem{A, E, B, C, D}}, // nothing exceeds IoU 1
	} {
		got := pipeline.NMS(in, c.limit)
		if !reflect.DeepEqual(got, c.want) {
			t.Errorf("NMS at %v: %+v; want %+v", c.limit, got, c.want)
		}
	}
	if len(in) != 5 || in[0] != D {
		t.Error("NMS changed its input")
	}
}

// A belt's own texture is not ink: on a frame of dark bricks (grey 0.08)
// with irregular mortar lines (0.3, below the brightest grey of datasets'
// Texture belts, DefaultTextureLevel 0.35) and one bright 6×6 scrap of
// lint in a corner, no item is found; without the frame-contrast rule
// (FrameContrast < 0) the mortar around fixations far from the lint is
// taken for ink and recognised.
func TestScanBeltTextureIsNotInk(t *testing.T) {
	const h, w = 128, 128
	img := make([]float32, h*w)
	r := rand.New(rand.NewPCG(4, 5))
	for i := range img {
		img[i] = 0.08
	}
	for y0 := 0; y0 < h; y0 += 18 + r.IntN(12) { // courses of irregular height and brick length
		for x := range w {
			for y := y0; y < min(h, y0+3); y++ {
				img[y*w+x] = 0.3
			}
		}
		for x0 := r.IntN(30); x0 < w; x0 += 25 + r.IntN(30) {
			for y := y0; y < min(h, y0+30); y++ {
				for x := x0; x < min(w, x0+3); x++ {
					img[y*w+x] = 0.3
				}
			}
		}
	}
	for _, p := range [][2]int{{112, 110}} {
		for y := p[1]; y < p[1]+6; y++ {
			for x := p[0]; x < p[0]+6; x++ {
				img[y*w+x] = 1
			}
		}
	}
	count := func(fc float64) int {
		s, err := pipeline.NewScanner(shapeModel(t), pipeline.ScanConfig{FrameContrast: fc, Threshold: 1e-6, MaxFixations: 100})
		if err != nil {
			t.Fatal(err)
		}
		var res pipeline.ScanResult
		if err := s.Scan(&res, img, h, w, 1); err != nil {
			t.Fatal(err)
		}
		return len(res.Items)
	}
	if n := count(0); n != 0 {
		t.Errorf("default FrameContrast: %d items on a bare brick belt with lint; want none", n)
	}
	if n := count(-1); n == 0 {
		t.Errorf("FrameContrast < 0: no item on the brick belt; the test's mortar no longer reaches the ink rule")
	}
}
