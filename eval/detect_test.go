package eval

import (
	"math"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// apTol bounds the difference from hand-worked fractions and from the
// NumPy / scikit-learn references: both sides sum at most a few hundred
// float64 terms of size ≤ 1, so rounding stays below 1e-13.
const apTol = 1e-12

func item(x0, y0, x1, y1, class int) datasets.SceneItem {
	return datasets.SceneItem{Box: [4]int{x0, y0, x1, y1}, Class: class, Source: -1}
}

func det(x0, y0, x1, y1 float64, class int, score float64) Detection {
	return Detection{Box: [4]float64{x0, y0, x1, y1}, Class: class, Score: score}
}

// TestIoUHandWorked checks IoU on worked boxes:
//
//	[0,0,10,10) vs [5,5,15,15): ∩ 5·5 = 25, ∪ 100 + 100 − 25 = 175 → 1/7
//	[0,0,4,2) vs [1,0,3,4):     ∩ 2·2 = 4,  ∪ 8 + 8 − 4 = 12       → 1/3
//	[0,0,10,10) vs [0,0,10,5):  ∩ 50,       ∪ 100                  → 1/2 exactly (a VOC match: IoU ≥ 0.5)
//	[0,0,1,1) vs [1,0,2,1):     touching, no shared pixel           → 0
func TestIoUHandWorked(t *testing.T) {
	for _, c := range []struct {
		a, b [4]float64
		want float64
	}{
		{[4]float64{0, 0, 10, 10}, [4]float64{5, 5, 15, 15}, 1.0 / 7},
		{[4]float64{0, 0, 4, 2}, [4]float64{1, 0, 3, 4}, 1.0 / 3},
		{[4]float64{0, 0, 10, 10}, [4]float64{0, 0, 10, 5}, 0.5},
		{[4]float64{0, 0, 1, 1}, [4]float64{1, 0, 2, 1}, 0},
	} {
		for _, got := range []float64{IoU(c.a, c.b), IoU(c.b, c.a)} {
			if math.Abs(got-c.want) > apTol {
				t.Errorf("IoU(%v, %v) = %v, want %v", c.a, c.b, got, c.want)
			}
		}
	}
}

// detectRef is testdata/eval/detect.json (gen_detect.py: NumPy 1.24.2,
// scikit-learn 1.2.1).
type detectRef struct {
	Generator string `json:"generator"`
	Classes   int    `json:"classes"`
	Frames    []struct {
		Truth []struct {
			Box   [4]int `json:"box"`
			Class int    `json:"class"`
		} `json:"truth"`
		Found []struct {
			Box   [4]float64 `json:"box"`
			Class int        `json:"class"`
			Score float64    `json:"score"`
		} `json:"found"`
	} `json:"frames"`
	IoU []struct {
		A   [4]float64 `json:"a"`
		B   [4]float64 `json:"b"`
		IoU float64    `json:"iou"`
	} `json:"iou"`
	PerClass []struct {
		Npos      int       `json:"npos"`
		Ntp       int       `json:"ntp"`
		Found     int       `json:"found"`
		TP        []bool    `json:"tp"`
		Scores    []float64 `json:"scores"`
		Recall    []float64 `json:"recall"`
		Precision []float64 `json:"precision"`
		VOCAP     float64   `json:"voc_ap"`
		SklearnAP *float64  `json:"sklearn_ap"`
		StepAP    float64   `json:"step_ap"`
	} `json:"per_class"`
	Totals struct {
		Truth, Found, Matched int
		Precision, Recall     float64
		MAP                   float64 `json:"map"`
		CountRight            int     `json:"count_right"`
		CountAccuracy         float64 `json:"count_accuracy"`
		Located               int     `json:"located"`
		LocatedRight          int     `json:"located_right"`
		RecognitionAccuracy   float64 `json:"recognition_accuracy"`
		EmptyFrames           int     `json:"empty_frames"`
		FalseOnEmpty          int     `json:"false_on_empty"`
		FalsePerEmpty         float64 `json:"false_per_empty"`
	} `json:"totals"`
}

func loadDetectRef(t *testing.T) (detectRef, []FrameResult) {
	var ref detectRef
	readJSON(t, "detect.json", &ref)
	frames := make([]FrameResult, len(ref.Frames))
	for f, fr := range ref.Frames {
		for _, g := range fr.Truth {
			frames[f].Truth = append(frames[f].Truth, datasets.SceneItem{Box: g.Box, Class: g.Class, Source: -1})
		}
		for _, d := range fr.Found {
			frames[f].Found = append(frames[f].Found, Detection{Box: d.Box, Class: d.Class, Score: d.Score})
		}
	}
	return ref, frames
}

// TestIoUMatchesDevkit compares IoU with the PASCAL VOC devkit's inclusive
// "+1" formula applied to our half-open boxes, computed by gen_detect.py.
func TestIoUMatchesDevkit(t *testing.T) {
	ref, _ := loadDetectRef(t)
	for _, p := range ref.IoU {
		if got := IoU(p.A, p.B); math.Abs(got-p.IoU) > apTol {
			t.Errorf("IoU(%v, %v) = %v, devkit formula %v", p.A, p.B, got, p.IoU)
		}
	}
}

// TestScoreScenesMatchesReference compares every score with gen_detect.py's
// NumPy port of the VOC2010 devkit (VOCevaldet matching, VOCap) and with
// scikit-learn 1.2.1's average_precision_score on the ranked matches:
// StepAP = sklearn AP · matched/truth (see StepAP).
func TestScoreScenesMatchesReference(t *testing.T) {
	ref, frames := loadDetectRef(t)
	s, err := ScoreScenes(frames, ref.Classes)
	if err != nil {
		t.Fatal(err)
	}
	for c, want := range ref.PerClass {
		got := s.PerClass[c]
		if got.Truth != want.Npos || got.Matched != want.Ntp || got.Found != want.Found || len(got.Curve) != len(want.TP) {
			t.Fatalf("class %d: truth %d matched %d found %d, reference %d %d %d", c, got.Truth, got.Matched, got.Found, want.Npos, want.Ntp, want.Found)
		}
		for k, p := range got.Curve {
			if p.Score != want.Scores[k] || math.Abs(p.Recall-want.Recall[k]) > apTol || math.Abs(p.Precision-want.Precision[k]) > apTol {
				t.Fatalf("class %d rank %d: %+v, reference score %v recall %v precision %v", c, k, p, want.Scores[k], want.Recall[k], want.Precision[k])
			}
		}
		if math.Abs(got.AP-want.VOCAP) > apTol {
			t.Errorf("class %d: AP %v, VOC2010 devkit (NumPy) %v", c, got.AP, want.VOCAP)
		}
		if want.SklearnAP == nil {
			t.Fatalf("class %d has no true positive; the reference should exercise scikit-learn", c)
		}
		sk := *want.SklearnAP * float64(want.Ntp) / float64(want.Npos)
		if math.Abs(got.StepAP-sk) > apTol {
			t.Errorf("class %d: StepAP %v, scikit-learn AP·matched/truth %v", c, got.StepAP, sk)
		}
		if got.AP < got.StepAP-apTol {
			t.Errorf("class %d: interpolated AP %v below the step AP %v", c, got.AP, got.StepAP)
		}
	}
	w := ref.Totals
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"truth", float64(s.Truth), float64(w.Truth)}, {"found", float64(s.Found), float64(w.Found)},
		{"matched", float64(s.Matched), float64(w.Matched)}, {"precision", s.Precision, w.Precision},
		{"recall", s.Recall, w.Recall}, {"mAP", s.MAP, w.MAP},
		{"count right", float64(s.CountRight), float64(w.CountRight)}, {"count accuracy", s.CountAccuracy, w.CountAccuracy},
		{"located", float64(s.Located), float64(w.Located)}, {"located right", float64(s.LocatedRight), float64(w.LocatedRight)},
		{"recognition accuracy", s.RecognitionAccuracy, w.RecognitionAccuracy},
		{"empty frames", float64(s.EmptyFrames), float64(w.EmptyFrames)}, {"false on empty", float64(s.FalseOnEmpty), float64(w.FalseOnEmpty)},
		{"false per empty", s.FalsePerEmpty, w.FalsePerEmpty},
	} {
		if math.Abs(c.got-c.want) > apTol {
			t.Errorf("%s: %v, reference %v", c.name, c.got, c.want)
		}
	}
}

// TestAPHandWorked checks the matching and both APs on two worked examples.
//
// A (interpolation matters): one frame, two items of class 0; detections
// ranked FP (0.9), TP (0.8), TP (0.7). After each: P = 0, 1/2, 2/3 and
// R = 0, 1/2, 1. VOC: r̃ = [0, 0, ½, 1, 1], p̃ = [0, 0, ½, ⅔, 0], whose
// envelope from the end is [⅔, ⅔, ⅔, ⅔, 0]; the recall steps at i = 2, 3
// give AP = ½·⅔ + ½·⅔ = 2/3. Step: ½·½ + ½·⅔ = 7/12, which is also
// scikit-learn's average_precision_score([0,1,1], [.9,.8,.7]) (every item
// found, so matched/truth = 1).
//
// B (a duplicate and a miss): frame 0 holds a = [0,0,10,10) and
// b = [20,20,30,30), frame 1 holds c = [0,0,10,10), all class 0. Ranked:
// 0.95 on a (TP), 0.9 on a again at IoU 0.9 (FP: a is taken), 0.6 on c at
// IoU 0.9 (TP), 0.5 far away (FP); b is never found. P = 1, ½, ⅔, ½;
// R = ⅓, ⅓, ⅔, ⅔. VOC: envelope [1, 1, ⅔, ⅔, ½, 0] over r̃ = [0, ⅓, ⅓, ⅔,
// ⅔, 1]; steps at i = 1, 3, 5 give AP = ⅓·1 + ⅓·⅔ + ⅓·0 = 5/9. Step:
// ⅓·(1 + ⅔) = 5/9 (scikit-learn on [1,0,1,0] gives ½·1 + ½·⅔ = 5/6, times
// matched/truth = ⅔ → 5/9). Count accuracy: frame 0 has 2 detections for 2
// items, frame 1 has 2 for 1 → 1/2.
func TestAPHandWorked(t *testing.T) {
	a := []FrameResult{{
		Truth: []datasets.SceneItem{item(0, 0, 10, 10, 0), item(40, 40, 50, 50, 0)},
		Found: []Detection{det(70, 70, 80, 80, 0, 0.9), det(0, 0, 10, 10, 0, 0.8), det(40, 40, 50, 50, 0, 0.7)},
	}}
	b := []FrameResult{
		{Truth: []datasets.SceneItem{item(0, 0, 10, 10, 0), item(20, 20, 30, 30, 0)},
			Found: []Detection{det(1, 0, 10, 10, 0, 0.9), det(0, 0, 10, 10, 0, 0.95)}},
		{Truth: []datasets.SceneItem{item(0, 0, 10, 10, 0)},
			Found: []Detection{det(50, 50, 60, 60, 0, 0.5), det(0, 0, 10, 9, 0, 0.6)}},
	}
	for _, c := range []struct {
		name         string
		frames       []FrameResult
		ap, step, ca float64
		matched      int
	}{
		{"A", a, 2.0 / 3, 7.0 / 12, 0, 2},
		{"B", b, 5.0 / 9, 5.0 / 9, 0.5, 2},
	} {
		s, err := ScoreScenes(c.frames, 1)
		if err != nil {
			t.Fatal(err)
		}
		p := s.PerClass[0]
		if math.Abs(p.AP-c.ap) > apTol || math.Abs(p.StepAP-c.step) > apTol || p.Matched != c.matched ||
			math.Abs(s.CountAccuracy-c.ca) > apTol || math.Abs(s.MAP-c.ap) > apTol {
			t.Errorf("%s: AP %v step %v matched %d count %v mAP %v, want %v %v %d %v", c.name, p.AP, p.StepAP, p.Matched, s.CountAccuracy, s.MAP, c.ap, c.step, c.matched, c.ca)
		}
	}
}

// TestScoreScenesRecognitionAndEmpty checks the class-agnostic scores on a
// worked case: frame 0 holds a class-0 item at A and a class-1 item at B;
// the scanner calls both class 1. Class-aware: the call at A is a false
// positive (no class-1 item there), so precision ½ and recall ½.
// Class-agnostic: both items are located, one with its right class →
// recognition accuracy ½. Frames 1 and 2 are empty with 3 and 0 detections
// → 1.5 false items per empty frame; a perfect class 1 gives AP 1, and
// class 2, without items, has AP NaN and stays out of the mAP.
func TestScoreScenesRecognitionAndEmpty(t *testing.T) {
	frames := []FrameResult{
		{Truth: []datasets.SceneItem{item(0, 0, 20, 20, 0), item(40, 0, 60, 20, 1)},
			Found: []Detection{det(0, 0, 20, 20, 1, 0.8), det(40, 0, 60, 20, 1, 0.9)}},
		{Found: []Detection{det(5, 5, 9, 9, 2, 0.3), det(5, 5, 9, 9, 0, 0.2), det(1, 1, 3, 3, 1, 0.1)}},
		{},
	}
	s, err := ScoreScenes(frames, 3)
	if err != nil {
		t.Fatal(err)
	}
	if s.Precision != 1.0/5 || s.Recall != 0.5 || s.Located != 2 || s.RecognitionAccuracy != 0.5 ||
		s.EmptyFrames != 2 || s.FalsePerEmpty != 1.5 || s.CountRight != 2 {
		t.Errorf("precision %v recall %v located %d recognition %v empty %d false/empty %v count right %d",
			s.Precision, s.Recall, s.Located, s.RecognitionAccuracy, s.EmptyFrames, s.FalsePerEmpty, s.CountRight)
	}
	// Class 1 ranks 0.9 (TP at B), 0.8 (FP at A), 0.1 (FP): AP 1·1 = 1.
	// Class 0 has its item missed: AP 0. Class 2 has no items: NaN.
	if s.PerClass[1].AP != 1 || s.PerClass[0].AP != 0 || !math.IsNaN(s.PerClass[2].AP) || s.MAP != 0.5 {
		t.Errorf("APs %v %v %v, mAP %v; want 0, 1, NaN and 0.5", s.PerClass[0].AP, s.PerClass[1].AP, s.PerClass[2].AP, s.MAP)
	}
}

// TestVOCAPEnvelope checks the VOC interpolation on its definition: AP is
// the area under p_interp(r) = max{p(r′): r′ ≥ r}, here integrated
// numerically on a fine recall grid for a ranking with ups and downs
// (R = ¼, ¼, ½, ½, ¾; P = 1, ½, ⅔, ½, ⅗: the envelope is 1 up to R = ¼, ⅔
// up to ½, ⅗ up to ¾ and 0 beyond, so AP = ¼·1 + ¼·⅔ + ¼·⅗ = 0.5667).
func TestVOCAPEnvelope(t *testing.T) {
	rec := []float64{0.25, 0.25, 0.5, 0.5, 0.75}
	prec := []float64{1, 0.5, 2.0 / 3, 0.5, 0.6}
	want := 0.25*1 + 0.25*(2.0/3) + 0.25*0.6
	if got := VOCAP(rec, prec); math.Abs(got-want) > apTol {
		t.Errorf("VOCAP = %v, want %v", got, want)
	}
	const steps = 100000
	area := 0.0
	for i := range steps {
		r := (float64(i) + 0.5) / steps
		best := 0.0
		for k := range rec {
			if rec[k] >= r {
				best = math.Max(best, prec[k])
			}
		}
		area += best / steps
	}
	// The midpoint sum is exact except in the grid cells that hold a recall
	// step: three cells of width 1e-5 at most one unit off.
	if math.Abs(area-want) > 3.0/steps {
		t.Errorf("area under the envelope %v, VOCAP %v", area, want)
	}
	if got := StepAP([]bool{true, false, true, false, true}, 4); math.Abs(got-(1+2.0/3+0.6)/4) > apTol {
		t.Errorf("StepAP = %v", got)
	}
}

// TestScoreScenesErrors checks that bad input is refused with an error
// naming the frame and item.
func TestScoreScenesErrors(t *testing.T) {
	good := item(0, 0, 10, 10, 0)
	for _, c := range []struct {
		name   string
		frames []FrameResult
		want   string
	}{
		{"truth class", []FrameResult{{Truth: []datasets.SceneItem{item(0, 0, 10, 10, 5)}}}, "frame 0 item 0: class 5"},
		{"truth box", []FrameResult{{}, {Truth: []datasets.SceneItem{item(10, 0, 10, 10, 0)}}}, "frame 1 item 0: box"},
		{"found class", []FrameResult{{Truth: []datasets.SceneItem{good}, Found: []Detection{det(0, 0, 1, 1, -1, 1)}}}, "detection 0: class -1"},
		{"found box", []FrameResult{{Found: []Detection{det(0, 0, math.Inf(1), 1, 0, 1)}}}, "not finite"},
		{"reversed box", []FrameResult{{Found: []Detection{det(5, 0, 1, 1, 0, 1)}}}, "reversed"},
		{"score", []FrameResult{{Found: []Detection{det(0, 0, 1, 1, 0, math.NaN())}}}, "NaN"},
	} {
		if _, err := ScoreScenes(c.frames, 2); err == nil || !strings.HasPrefix(err.Error(), "eval: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one holding %q", c.name, err, c.want)
		}
	}
	if _, err := ScoreScenes(nil, 0); err == nil {
		t.Error("0 classes accepted")
	}
}

// TestMatchAtExactlyHalf checks the VOC rule's boundary: IoU = 0.5 exactly
// ([0,0,10,5) inside [0,0,10,10): 50/100) is a match, IoU just below is not.
func TestMatchAtExactlyHalf(t *testing.T) {
	for _, c := range []struct {
		y1      float64
		matched int
	}{{5, 1}, {4.999, 0}} {
		s, err := ScoreScenes([]FrameResult{{Truth: []datasets.SceneItem{item(0, 0, 10, 10, 0)},
			Found: []Detection{det(0, 0, 10, c.y1, 0, 1)}}}, 1)
		if err != nil {
			t.Fatal(err)
		}
		if s.Matched != c.matched {
			t.Errorf("detection [0,0,10,%v): matched %d, want %d", c.y1, s.Matched, c.matched)
		}
	}
}
