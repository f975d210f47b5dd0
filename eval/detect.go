package eval

import (
	"cmp"
	"fmt"
	"math"
	"slices"

	"github.com/striate/striate/datasets"
)

// MatchIoU is the overlap a detection needs with a ground-truth box to count
// as finding it: IoU ≥ 0.5, the PASCAL VOC rule (Everingham et al. 2010,
// IJCV 88:303-338).
const MatchIoU = 0.5

// Detection is one item a scanner reports in a frame: its box in pixels,
// [x0, y0, x1, y1) half-open like datasets.SceneItem (fractional coordinates
// allowed), its class and its score (higher is more confident).
type Detection struct {
	Box   [4]float64
	Class int
	Score float64
}

// FrameResult pairs the ground truth of one frame with the detections a
// scanner made in it. A frame without Truth is an empty frame.
type FrameResult struct {
	Truth []datasets.SceneItem
	Found []Detection
}

// PRPoint is one point of a precision-recall curve: the recall and
// precision of the detections scoring at least Score.
type PRPoint struct {
	Score, Recall, Precision float64
}

// ClassAP holds the detection scores of one class.
type ClassAP struct {
	Truth   int // ground-truth items of the class
	Found   int // detections of the class
	Matched int // detections matched to an item of the class (true positives)

	// AP is the all-point interpolated average precision of PASCAL VOC from
	// 2010 (see ScoreScenes); StepAP the non-interpolated Σ ΔR·P. Both are
	// NaN for a class without ground truth, and 0 when nothing is matched.
	AP, StepAP float64

	// Curve holds (score, recall, precision) after each ranked detection,
	// best score first: the raw curve, before interpolation.
	Curve []PRPoint
}

// SceneScores are the scores of a scanner on a set of frames (see
// ScoreScenes).
type SceneScores struct {
	Frames, Truth, Found int

	// Matched counts detections matched, class by class, to ground truth at
	// IoU ≥ MatchIoU; Precision = Matched/Found, Recall = Matched/Truth
	// (0 when the denominator is 0).
	Matched           int
	Precision, Recall float64

	PerClass []ClassAP
	// MAP is the mean of PerClass[c].AP over the classes with ground truth
	// (NaN when no class has any).
	MAP float64

	// CountRight counts frames with exactly as many detections as items;
	// CountAccuracy = CountRight/Frames.
	CountRight    int
	CountAccuracy float64

	// Located counts items found regardless of class (class-agnostic
	// matching at IoU ≥ MatchIoU), LocatedRight those whose detection has
	// the item's class; RecognitionAccuracy = LocatedRight/Located.
	Located, LocatedRight int
	RecognitionAccuracy   float64

	// EmptyFrames counts frames without items, FalseOnEmpty the detections
	// in them; FalsePerEmpty = FalseOnEmpty/EmptyFrames (0 without empty
	// frames).
	EmptyFrames, FalseOnEmpty int
	FalsePerEmpty             float64
}

// IoU returns the intersection over union of two [x0, y0, x1, y1) boxes,
// area(a ∩ b) / area(a ∪ b), 0 when they do not overlap (or both are empty).
// With half-open boxes the area is (x1−x0)·(y1−y0); the VOC devkit's
// inclusive pixel boxes [x0, x1] with its "+1" are the same numbers.
func IoU(a, b [4]float64) float64 {
	iw := math.Min(a[2], b[2]) - math.Max(a[0], b[0])
	ih := math.Min(a[3], b[3]) - math.Max(a[1], b[1])
	if iw <= 0 || ih <= 0 {
		return 0
	}
	inter := iw * ih
	return inter / ((a[2]-a[0])*(a[3]-a[1]) + (b[2]-b[0])*(b[3]-b[1]) - inter)
}

// boxF converts an integer ground-truth box.
func boxF(b [4]int) [4]float64 {
	return [4]float64{float64(b[0]), float64(b[1]), float64(b[2]), float64(b[3])}
}

// ranked is one detection in the global ranking.
type ranked struct {
	frame, idx int
	score      float64
}

// rank returns the detections accepted by keep, best score first; equal
// scores keep frame order, then detection order (a stable sort).
func rank(frames []FrameResult, keep func(Detection) bool) []ranked {
	var out []ranked
	for f, fr := range frames {
		for i, d := range fr.Found {
			if keep(d) {
				out = append(out, ranked{f, i, d.Score})
			}
		}
	}
	slices.SortStableFunc(out, func(a, b ranked) int { return cmp.Compare(b.score, a.score) })
	return out
}

// greedyMatch walks the ranked detections and marks each a true positive
// when the eligible ground-truth item it overlaps most (among all eligible
// items of its frame, taken or not) has IoU ≥ MatchIoU and is not yet
// taken, which it then takes: the assignment of the VOC devkit (VOCevaldet),
// where a second detection of a found item is a false positive. It returns
// per ranked detection the index of the item taken, or −1.
func greedyMatch(frames []FrameResult, order []ranked, eligible func(datasets.SceneItem, Detection) bool) []int {
	taken := make([][]bool, len(frames))
	for f := range frames {
		taken[f] = make([]bool, len(frames[f].Truth))
	}
	out := make([]int, len(order))
	for k, r := range order {
		d := frames[r.frame].Found[r.idx]
		best, jbest := -1.0, -1
		for j, it := range frames[r.frame].Truth {
			if !eligible(it, d) {
				continue
			}
			if o := IoU(d.Box, boxF(it.Box)); o > best {
				best, jbest = o, j
			}
		}
		out[k] = -1
		if jbest >= 0 && best >= MatchIoU && !taken[r.frame][jbest] {
			taken[r.frame][jbest] = true
			out[k] = jbest
		}
	}
	return out
}

// VOCAP returns the all-point interpolated average precision that PASCAL
// VOC uses from its 2010 challenge on (the VOC2010 development kit's VOCap;
// Everingham et al. 2015, IJCV 111:98-136, describe the change from the
// 11-point interpolation of Everingham et al. 2010) for the cumulative
// recall and precision after each ranked detection:
//
//	r̃ = [0, r₁ … rₙ, 1],  p̃ = [0, p₁ … pₙ, 0]
//	p̃ᵢ ← max(p̃ᵢ, p̃ᵢ₊₁) from the end (the precision envelope)
//	AP = Σ over i with r̃ᵢ ≠ r̃ᵢ₋₁ of (r̃ᵢ − r̃ᵢ₋₁)·p̃ᵢ
//
// That is the area under the envelope p_interp(r) = max{p(r′): r′ ≥ r}. It
// is never below the non-interpolated StepAP of the same ranking.
func VOCAP(recall, precision []float64) float64 {
	n := len(recall)
	mr := make([]float64, n+2)
	mp := make([]float64, n+2)
	copy(mr[1:], recall)
	copy(mp[1:], precision)
	mr[n+1] = 1
	for i := n; i >= 0; i-- {
		mp[i] = math.Max(mp[i], mp[i+1])
	}
	ap := 0.0
	for i := 1; i < n+2; i++ {
		if mr[i] != mr[i-1] {
			ap += (mr[i] - mr[i-1]) * mp[i]
		}
	}
	return ap
}

// StepAP returns the non-interpolated average precision of a ranking with
// true-positive flags tp out of truth ground-truth items:
//
//	StepAP = Σₖ (Rₖ − Rₖ₋₁)·Pₖ = (1/truth)·Σ over true positives k of Pₖ
//
// which is scikit-learn's average_precision_score on the ranked detections
// (labels tp, the scores) times matched/truth: scikit-learn takes its recall
// over the positives among the ranked items, so it cannot see the items
// never detected. (With tied scores scikit-learn pools the tie into one
// threshold; the two agree exactly for distinct scores.)
func StepAP(tp []bool, truth int) float64 {
	if truth == 0 {
		return math.NaN()
	}
	ap, hits := 0.0, 0
	for k, ok := range tp {
		if ok {
			hits++
			ap += float64(hits) / float64(k+1)
		}
	}
	return ap / float64(truth)
}

// ScoreScenes scores detections against ground truth over frames for
// classes classes, by the PASCAL VOC protocol (Everingham et al. 2010):
//
//   - per class, the detections of that class over all frames are ranked by
//     score (ties in frame then list order) and matched greedily, best first:
//     a detection is a true positive when the item of its class it overlaps
//     most in its frame has IoU ≥ MatchIoU and was not found before, else a
//     false positive (duplicates are false positives);
//   - recall rₖ = TPₖ/Truth and precision pₖ = TPₖ/k after the k-th
//     detection give the curve, AP (VOCAP) and StepAP; MAP averages AP over
//     the classes with ground truth;
//   - Precision and Recall pool the classes' matches over all detections;
//   - count accuracy compares the number of detections with the number of
//     items in each frame;
//   - recognition accuracy matches the same way with classes ignored (a
//     detection may take any item) and asks, of the items so found, how many
//     were given their right class;
//   - false items per empty frame count all detections in frames with no
//     item.
//
// Scores of every detection count: pass what the scanner reports after its
// own "no item" decision and non-maximum suppression. ScoreScenes returns an
// error naming the frame and item for a class outside [0, classes), a box
// that is empty, reversed or not finite, or a score that is NaN.
func ScoreScenes(frames []FrameResult, classes int) (*SceneScores, error) {
	if classes < 1 {
		return nil, fmt.Errorf("eval: ScoreScenes needs classes ≥ 1, got %d; pass the number of the recognizer's classes", classes)
	}
	if err := checkFrames(frames, classes); err != nil {
		return nil, err
	}
	s := &SceneScores{Frames: len(frames), PerClass: make([]ClassAP, classes)}
	for _, fr := range frames {
		s.Truth += len(fr.Truth)
		s.Found += len(fr.Found)
		for _, it := range fr.Truth {
			s.PerClass[it.Class].Truth++
		}
		if len(fr.Found) == len(fr.Truth) {
			s.CountRight++
		}
		if len(fr.Truth) == 0 {
			s.EmptyFrames++
			s.FalseOnEmpty += len(fr.Found)
		}
	}

	sumAP, withTruth := 0.0, 0
	for c := range classes {
		ca := &s.PerClass[c]
		order := rank(frames, func(d Detection) bool { return d.Class == c })
		match := greedyMatch(frames, order, func(it datasets.SceneItem, d Detection) bool { return it.Class == d.Class })
		ca.Found = len(order)
		tp := make([]bool, len(order))
		rec := make([]float64, len(order))
		prec := make([]float64, len(order))
		ca.Curve = make([]PRPoint, len(order))
		for k, j := range match {
			if j >= 0 {
				ca.Matched++
				tp[k] = true
			}
			if ca.Truth > 0 {
				rec[k] = float64(ca.Matched) / float64(ca.Truth)
			}
			prec[k] = float64(ca.Matched) / float64(k+1)
			ca.Curve[k] = PRPoint{Score: order[k].score, Recall: rec[k], Precision: prec[k]}
		}
		s.Matched += ca.Matched
		if ca.Truth == 0 {
			ca.AP, ca.StepAP = math.NaN(), math.NaN()
			continue
		}
		ca.AP = VOCAP(rec, prec)
		ca.StepAP = StepAP(tp, ca.Truth)
		sumAP += ca.AP
		withTruth++
	}
	s.MAP = math.NaN()
	if withTruth > 0 {
		s.MAP = sumAP / float64(withTruth)
	}

	order := rank(frames, func(Detection) bool { return true })
	for k, j := range greedyMatch(frames, order, func(datasets.SceneItem, Detection) bool { return true }) {
		if j < 0 {
			continue
		}
		s.Located++
		if frames[order[k].frame].Truth[j].Class == frames[order[k].frame].Found[order[k].idx].Class {
			s.LocatedRight++
		}
	}

	s.Precision = ratio(s.Matched, s.Found)
	s.Recall = ratio(s.Matched, s.Truth)
	s.CountAccuracy = ratio(s.CountRight, s.Frames)
	s.RecognitionAccuracy = ratio(s.LocatedRight, s.Located)
	s.FalsePerEmpty = ratio(s.FalseOnEmpty, s.EmptyFrames)
	return s, nil
}

// ratio is a/b, 0 when b is 0.
func ratio(a, b int) float64 {
	if b == 0 {
		return 0
	}
	return float64(a) / float64(b)
}

// checkFrames validates classes, boxes and scores.
func checkFrames(frames []FrameResult, classes int) error {
	for f, fr := range frames {
		for j, it := range fr.Truth {
			b := it.Box
			if it.Class < 0 || it.Class >= classes {
				return fmt.Errorf("eval: frame %d item %d: class %d is outside [0,%d); pass the class count of the ground truth", f, j, it.Class, classes)
			}
			if b[2] <= b[0] || b[3] <= b[1] {
				return fmt.Errorf("eval: frame %d item %d: box %v is empty or reversed; boxes are [x0, y0, x1, y1) with x0 < x1, y0 < y1", f, j, b)
			}
		}
		for j, d := range fr.Found {
			b := d.Box
			if d.Class < 0 || d.Class >= classes {
				return fmt.Errorf("eval: frame %d detection %d: class %d is outside [0,%d)", f, j, d.Class, classes)
			}
			finite := !math.IsInf(b[0]+b[1]+b[2]+b[3], 0) && !math.IsNaN(b[0]+b[1]+b[2]+b[3])
			if !finite || b[2] <= b[0] || b[3] <= b[1] {
				return fmt.Errorf("eval: frame %d detection %d: box %v is empty, reversed or not finite; boxes are [x0, y0, x1, y1) with x0 < x1, y0 < y1", f, j, b)
			}
			if math.IsNaN(d.Score) {
				return fmt.Errorf("eval: frame %d detection %d: score is NaN; give every detection a comparable score", f, j)
			}
		}
	}
	return nil
}
