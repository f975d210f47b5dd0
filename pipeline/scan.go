package pipeline

import (
	"cmp"
	"fmt"
	"image"
	"math"
	"slices"
	"sync"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/v1layer"
)

// ScanConfig sets up a Scanner, the attention pathway that finds and
// recognises every item of a grey frame (see Scanner for the method). Each
// zero field means its own documented default, whatever the others hold.
type ScanConfig struct {
	// Saliency is the bottom-up saliency map's configuration; its zero
	// value is v1layer's default (one map pixel per 8×8 frame pixels,
	// frames of at least 57 px a side).
	Saliency v1layer.SaliencyConfig `json:"saliency"`
	// ItemSize is the typical side of an item in frame pixels. It sets the
	// search region around a fixation (2.25·ItemSize, enough for an item
	// 1.6× this size off the fixation by a map pixel), the inhibited
	// square when a fixation finds nothing, and the defaults of MinItemSide
	// and Border. Default: the larger side of the model's input (28 for
	// MNIST-sized models). Range [4, 1024].
	ItemSize int `json:"item_size,omitempty"`
	// MinItemSide: a group of ink whose box's longer side is shorter than
	// this is not an item (lint, scraps). Default ItemSize/2; range
	// [1, ItemSize].
	MinItemSide int `json:"min_item_side,omitempty"`
	// InkFraction: a pixel of the search region is ink when it lies above
	// the region's background (its median) by more than InkFraction of
	// the region's range (max − median). Default 0.25; range (0, 1).
	InkFraction float64 `json:"ink_fraction,omitempty"`
	// FrameContrast: a pixel is ink only when it also lies above the search
	// region's background by more than FrameContrast of the whole frame's
	// range (its maximum − its median grey), so that a belt's own texture
	// (bricks' mortar, grass) is not taken for ink in a region that holds
	// no item, whose own range is only the texture's. A frame of belt
	// texture alone, without any item or lint, has only the texture's range
	// and is not helped. Default 0.3: on 300 validation scenes of MNIST
	// training images 50,000-59,999 on textured belts with lint (a model
	// fitted on 6,000 other training images), false items on bare belt
	// fell from 268 to 2 with 0.3 (188 with 0.2; 0.4 lost 5 of 690 found
	// items), on Fashion-MNIST from 249 to 8; negative for none; range
	// [0, 1).
	FrameContrast float64 `json:"frame_contrast,omitempty"`
	// Gap joins ink across background gaps of up to 2·Gap px (a square
	// dilation of radius Gap before 8-connected grouping), so broken
	// strokes and the parts of a sandal stay together. Default 1; range
	// [1, 16].
	Gap int `json:"gap,omitempty"`
	// Frames are the candidate window sides as multiples of the item's
	// longer box side; the recogniser's most confident window wins (the
	// scale search). MNIST frames a 20-px digit in 28 px (1.4),
	// Fashion-MNIST fills nearly the whole 28 px (about 1.0). Default
	// [1.0, 1.2, 1.4, 1.6]: on 500 cluttered 60×60 canvases of MNIST
	// training images 50,000-50,499 (validation, never test images) with a
	// model fitted on 2,000 other training images, it gave 4.4% error
	// without fragments and 12.8% with four, against 5.0% and 13.8% for
	// [1.0, 1.2, 1.4]. At most 8 factors, each in [1, 3].
	Frames []float64 `json:"frames,omitempty"`
	// Sizes are the window sides, as multiples of ItemSize, tried around
	// the fixation when the ink group is more than SplitSide·ItemSize long and
	// may hold several touching items (the scale search at the item's own
	// size). Default [1.0, 1.4, 1.8]: items of 0.8-1.6·ItemSize framed
	// about 1.2×; at most 8 factors, each in [0.5, 3].
	Sizes []float64 `json:"sizes,omitempty"`
	// SplitSide: an ink group whose box's longer side exceeds
	// SplitSide·ItemSize may hold several touching items, so the Sizes
	// windows around the fixation are tried as well. Default 1.25, for
	// items of 0.8-1.6× the ItemSize whose ink fills about 0.7 of it (MNIST
	// digits: 20 of 28 px); items whose ink fills the whole item
	// (Fashion-MNIST) reach 1.6·ItemSize alone, and the Sizes windows then
	// cut them into parts: 1.7 suits them (on 300 validation scenes of
	// Fashion-MNIST training images, parts of items reported fell from 113
	// to 75; on MNIST, 1.7 lost 20 of 690 items found). Range [1, 3].
	SplitSide float64 `json:"split_side,omitempty"`
	// KeepSurround passes the window's other ink (neighbours, lint) to the
	// recogniser too; by default only the attended item's ink (dilated by
	// Gap) is kept and the rest of the window is set to background.
	KeepSurround bool `json:"keep_surround,omitempty"`
	// Threshold is the "no item" decision: a window whose most probable
	// class has a probability below Threshold is not an item. Default: the
	// model's stored threshold (Model.Scan, chosen on validation scenes),
	// else 0.5; range (0, 1]. ChooseThreshold picks it on validation scenes.
	Threshold float64 `json:"threshold,omitempty"`
	// NMSIoU: of two items whose boxes overlap with an IoU above NMSIoU
	// only the more confident is kept (greedy non-maximum suppression).
	// Default 0.3; range (0, 1].
	NMSIoU float64 `json:"nms_iou,omitempty"`
	// MaxItems stops the scan once this many items (windows at or above
	// Threshold) are found. Default 10; range [1, 1000].
	MaxItems int `json:"max_items,omitempty"`
	// MaxFixations bounds the fixations per frame. Default 3·MaxItems;
	// range [1, 3000].
	MaxFixations int `json:"max_fixations,omitempty"`
	// StopFraction stops the scan when the winner's saliency falls below
	// StopFraction of the first fixation's. Default 0.05; range (0, 1).
	StopFraction float64 `json:"stop_fraction,omitempty"`
	// Border is the band along the frame's edges, in frame pixels, whose
	// map pixels are never fixated: a belt texture that does not continue
	// across the edge makes the edge salient (see v1layer.Saliency), while
	// an item's centre lies at least half its size inside the frame.
	// Default ItemSize/4; negative for none; at most ItemSize.
	Border int `json:"border,omitempty"`
}

// Defaults of ScanConfig's zero fields.
const (
	DefaultInkFraction   = 0.25
	DefaultFrameContrast = 0.3
	DefaultSplitSide     = 1.25
	DefaultGap           = 1
	DefaultThreshold     = 0.5
	DefaultNMSIoU        = 0.3
	DefaultMaxItems      = 10
	DefaultStopFraction  = 0.05
)

// DefaultFrames and DefaultSizes are the defaults of ScanConfig.Frames
// and ScanConfig.Sizes.
var (
	DefaultFrames = []float64{1.0, 1.2, 1.4, 1.6}
	DefaultSizes  = []float64{1.0, 1.4, 1.8}
)

// Limits of ScanConfig.
const (
	maxScanItems     = 1000
	maxScanFrames    = 8
	searchPerItem    = 2.25 // search side / ItemSize
	searchGrow       = 1.5  // the search side's growth when an item touches it
	minScanContrast  = 4.0 / 255
	maxScanItemSize  = 1024
	minScanItemSize  = 4
	maxScanGap       = 16
	maxScanFrameMult = 3
)

func (c ScanConfig) withDefaults(m *Model) ScanConfig {
	if c.ItemSize == 0 {
		ih, iw := m.InputSize()
		c.ItemSize = max(ih, iw)
	}
	if c.MinItemSide == 0 {
		c.MinItemSide = max(1, c.ItemSize/2)
	}
	if c.InkFraction == 0 {
		c.InkFraction = DefaultInkFraction
	}
	if c.Gap == 0 {
		c.Gap = DefaultGap
	}
	if c.SplitSide == 0 {
		c.SplitSide = DefaultSplitSide
	}
	if c.FrameContrast == 0 {
		c.FrameContrast = DefaultFrameContrast
	}
	c.Frames, c.Sizes = factorsOr(c.Frames, DefaultFrames), factorsOr(c.Sizes, DefaultSizes)
	if c.Threshold == 0 {
		c.Threshold = m.scanThreshold() // the model's stored threshold, else DefaultThreshold
	}
	if c.NMSIoU == 0 {
		c.NMSIoU = DefaultNMSIoU
	}
	if c.MaxItems == 0 {
		c.MaxItems = DefaultMaxItems
	}
	if c.MaxFixations == 0 {
		c.MaxFixations = 3 * c.MaxItems
	}
	if c.StopFraction == 0 {
		c.StopFraction = DefaultStopFraction
	}
	if c.Border == 0 {
		c.Border = c.ItemSize / 4
	}
	return c
}

// factorsOr returns a copy of v, or of def when v is empty.
func factorsOr(v, def []float64) []float64 {
	if len(v) == 0 {
		return slices.Clone(def)
	}
	return slices.Clone(v)
}

func (c ScanConfig) validate() error {
	switch {
	case c.ItemSize < minScanItemSize || c.ItemSize > maxScanItemSize:
		return fmt.Errorf("pipeline: ScanConfig.ItemSize %d px out of range [%d,%d]; 0 means the model's input side", c.ItemSize, minScanItemSize, maxScanItemSize)
	case c.MinItemSide < 1 || c.MinItemSide > c.ItemSize:
		return fmt.Errorf("pipeline: ScanConfig.MinItemSide %d px out of range [1,%d] (ItemSize); 0 means ItemSize/2", c.MinItemSide, c.ItemSize)
	case !(c.InkFraction > 0 && c.InkFraction < 1):
		return fmt.Errorf("pipeline: ScanConfig.InkFraction %v out of range (0,1); 0 means %v", c.InkFraction, DefaultInkFraction)
	case !(c.FrameContrast < 1) || math.IsNaN(c.FrameContrast):
		return fmt.Errorf("pipeline: ScanConfig.FrameContrast %v out of range [0,1); 0 means %v, negative none", c.FrameContrast, DefaultFrameContrast)
	case c.Gap < 1 || c.Gap > maxScanGap:
		return fmt.Errorf("pipeline: ScanConfig.Gap %d px out of range [1,%d]; 0 means %d", c.Gap, maxScanGap, DefaultGap)
	case len(c.Frames) > maxScanFrames:
		return fmt.Errorf("pipeline: ScanConfig.Frames has %d factors; at most %d (default %v)", len(c.Frames), maxScanFrames, DefaultFrames)
	case !(c.Threshold > 0 && c.Threshold <= 1):
		return fmt.Errorf("pipeline: ScanConfig.Threshold %v out of range (0,1]; 0 means %v, ChooseThreshold picks one on validation scenes", c.Threshold, DefaultThreshold)
	case !(c.NMSIoU > 0 && c.NMSIoU <= 1):
		return fmt.Errorf("pipeline: ScanConfig.NMSIoU %v out of range (0,1]; 0 means %v", c.NMSIoU, DefaultNMSIoU)
	case !(c.SplitSide >= 1 && c.SplitSide <= maxScanFrameMult):
		return fmt.Errorf("pipeline: ScanConfig.SplitSide %v out of range [1,%d]; 0 means %v", c.SplitSide, maxScanFrameMult, DefaultSplitSide)
	case c.MaxItems < 1 || c.MaxItems > maxScanItems:
		return fmt.Errorf("pipeline: ScanConfig.MaxItems %d out of range [1,%d]; 0 means %d", c.MaxItems, maxScanItems, DefaultMaxItems)
	case c.MaxFixations < 1 || c.MaxFixations > 3*maxScanItems:
		return fmt.Errorf("pipeline: ScanConfig.MaxFixations %d out of range [1,%d]; 0 means 3·MaxItems", c.MaxFixations, 3*maxScanItems)
	case !(c.StopFraction > 0 && c.StopFraction < 1):
		return fmt.Errorf("pipeline: ScanConfig.StopFraction %v out of range (0,1); 0 means %v", c.StopFraction, DefaultStopFraction)
	case c.Border > c.ItemSize:
		return fmt.Errorf("pipeline: ScanConfig.Border %d px is above ItemSize %d; 0 means ItemSize/4, negative none", c.Border, c.ItemSize)
	}
	if len(c.Sizes) > maxScanFrames {
		return fmt.Errorf("pipeline: ScanConfig.Sizes has %d factors; at most %d (default %v)", len(c.Sizes), maxScanFrames, DefaultSizes)
	}
	for _, z := range c.Sizes {
		if !(z >= 0.5 && z <= maxScanFrameMult) {
			return fmt.Errorf("pipeline: ScanConfig.Sizes factor %v out of range [0.5,%d]; the default is %v", z, maxScanFrameMult, DefaultSizes)
		}
	}
	for _, f := range c.Frames {
		if !(f >= 1 && f <= maxScanFrameMult) {
			return fmt.Errorf("pipeline: ScanConfig.Frames factor %v out of range [1,%d]; the default is %v", f, maxScanFrameMult, DefaultFrames)
		}
	}
	return nil
}

// ScanItem is one item a Scanner found.
type ScanItem struct {
	Class int     // index into the model's Classes
	Score float32 // the recogniser's probability of Class for the chosen window
	// Box is the item's ink box in frame pixels, half-open:
	// columns Box[0] … Box[2]−1, rows Box[1] … Box[3]−1 (datasets.SceneItem's
	// convention).
	Box [4]int
	// Fixation is the index in ScanResult.Fixations of the fixation that
	// found the item.
	Fixation int
}

// Fixation is one winner of the winner-take-all, in the order visited.
type Fixation struct {
	X, Y     float64 // frame position of the winning map pixel's centre (pixel centres at integers)
	Salience float32 // the saliency map's value there when it won
	Item     bool    // a group of ink of at least MinItemSide was found there
}

// ScanResult is what Scan found in one frame.
type ScanResult struct {
	Items     []ScanItem // in fixation order
	Fixations []Fixation
}

// Scanner finds and recognises the items of a frame with a model trained
// on single centred items: a second pathway beside the single-item one,
// as in the visual system (bottom-up saliency chooses where to look,
// attention selects one region at a time, recognition runs on it).
//
// # Method
//
//  1. Saliency. The frame's saliency map S (Itti, Koch & Niebur 1998;
//     v1layer.Saliency), with the map pixels within Border of the frame's
//     edges set to zero.
//  2. Winner-take-all with inhibition of return (Koch & Ullman 1985,
//     "Shifts in selective visual attention", Human Neurobiology 4:219-227):
//     the map's maximum (the first in row-major order on ties) is the next
//     fixation; once the item there is recognised, the map pixels whose
//     centres lie in its box grown by ItemSize/4 are set to zero (an
//     ItemSize/2 square when the fixation found no ink), so attention moves
//     on to the next most salient place. The scan stops when the winner
//     falls below StopFraction of the first winner or is zero (the map is
//     exhausted), after MaxFixations fixations, or when MaxItems windows
//     have reached Threshold.
//  3. The region of a fixation. In a square of 2.25·ItemSize px around the
//     fixation the background is the median grey b and the range r = max −
//     b; pixels above b + max(InkFraction·r, FrameContrast·R) are ink,
//     where R is the whole frame's maximum − median (a region holding only
//     belt texture has a small r of its own, but a belt's texture stays
//     well below the items' contrast R), ink pixels up to 2·Gap
//     apart form groups (8-connected after a square dilation by Gap), and
//     groups whose box has a longer side below MinItemSide are dropped
//     (lint, scraps). The group nearest the fixation (distance to its box;
//     the larger ink mass on ties) is attended; when it touches the
//     square's side the square is grown 1.5× around it once. A group whose
//     whole-group window already won at an earlier fixation is not
//     recognised again (a core's window winning counts as the group's).
//  4. Candidate windows, each normalised on its own. One square per factor
//     f of Frames, centred on the group's ink box, of side f·(its longer
//     side), standing for that box; when the group's own ink (before the
//     dilation) has several 8-connected parts, the same squares around the
//     part of largest ink mass (its core: a scrap of lint only bridged to
//     the item by the dilation is left out), with only the core's dilated
//     ink kept, standing for the core's box (on 600 cluttered 60×60
//     canvases of MNIST training images 50,000-50,599, with a FitScanner
//     model of 6,000 other training images, 8.7% → 7.0% error);
//     and, when the box is longer than
//     SplitSide·ItemSize (touching items may have merged), one square per
//     factor z of Sizes, of side z·ItemSize, centred on the centre of mass
//     of the group's ink within ItemSize/2 of the fixation, standing for
//     the box of the group's ink inside it. A window is taken from the
//     frame with the region's own background and range, (v − b)/r clipped
//     to [0, 1], with everything outside the attended group's dilated ink
//     set to 0 (unless KeepSurround) and pixels outside the frame 0; it is
//     resized to the model's input (datasets.ToGray's bilinear kernel) and
//     the model's own input stage then stretches and centres it as it does
//     every image — never the frame's range or centre.
//  5. Recognition and decision. The fixation's windows go to PredictBatch
//     together; the most confident window (the first on ties) gives the
//     item's class, score (its probability) and box (the scale search).
//     An item is reported when its score reaches Threshold (the "no item"
//     decision; ChooseThreshold picks it on validation scenes); of the
//     first MaxItems such items, greedy non-maximum suppression at NMSIoU
//     (NMS) keeps the more confident of overlapping ones.
//
// The fixation sequence never depends on Threshold, which is what lets
// ChooseThreshold try every threshold on one scan of each scene.
// A frame whose grey range is below 4/255, blank or all black, has no items.
// A Scanner is immutable and safe for concurrent use; its results are
// identical for any number of workers.
type Scanner struct {
	m       *Model
	cfg     ScanConfig
	sal     *v1layer.Saliency
	ih, iw  int
	scratch sync.Pool // *scanWork
}

// scanWork is one Scan call's scratch.
type scanWork struct {
	maps   v1layer.Maps
	sal    []float32
	hist   []int32
	floor  float32 // FrameContrast × the frame's range (max − median)
	ink    []bool
	dil    []bool
	tmp    []bool
	lab    []int32
	queue  []int32
	win    []float32
	groups []inkGroup
	// the group's core (Scanner.core)
	clab              []int32
	cink, cmask, ctmp []bool
}

// NewScanner builds a scanner for model m (trained on single items) from
// cfg, validated once.
func NewScanner(m *Model, cfg ScanConfig) (*Scanner, error) {
	if m == nil {
		return nil, fmt.Errorf("pipeline: NewScanner needs a fitted model; Fit or Load one first")
	}
	cfg = cfg.withDefaults(m)
	if err := cfg.validate(); err != nil {
		return nil, err
	}
	sal, err := v1layer.NewSaliency(cfg.Saliency)
	if err != nil {
		return nil, fmt.Errorf("pipeline: ScanConfig.Saliency: %w", err)
	}
	cfg.Saliency = sal.Config()
	ih, iw := m.InputSize()
	s := &Scanner{m: m, cfg: cfg, sal: sal, ih: ih, iw: iw}
	s.scratch.New = func() any { return new(scanWork) }
	return s, nil
}

// Config returns the scanner's configuration with every default filled in.
func (s *Scanner) Config() ScanConfig {
	c := s.cfg
	c.Frames, c.Sizes = slices.Clone(c.Frames), slices.Clone(c.Sizes)
	c.Saliency = s.sal.Config()
	return c
}

// MinSide returns the smallest frame side Scan accepts: the larger of the
// saliency map's minimum and the model's input side.
func (s *Scanner) MinSide() int { return max(s.sal.MinSide(), s.ih, s.iw) }

// Scan finds the items of the h×w row-major grey frame img (values in
// [0,1]) and writes them, with the fixations, to dst (its slices reused),
// using workers goroutines (≤ 0 means 1) for the saliency map and the
// recogniser. It returns an error for a frame smaller than MinSide or
// larger than v1layer.MaxSide, for img shorter than h·w and for NaN or
// infinite pixels (dst is then emptied). It panics if dst is nil.
func (s *Scanner) Scan(dst *ScanResult, img []float32, h, w, workers int) error {
	cands, err := s.scan(dst, img, h, w, workers, s.cfg.Threshold, nil)
	if err != nil {
		return err
	}
	dst.Items = s.decide(dst.Items[:0], cands, s.cfg.Threshold)
	return nil
}

// scan runs steps 1-4 of the method and the recogniser, and returns every
// fixation's most confident window (all of them, whatever their score),
// in fixation order; dst gets the fixations. A non-nil sink receives
// every recognised fixation's candidate windows (at the model's input
// size), the boxes they stand for and their probabilities.
func (s *Scanner) scan(dst *ScanResult, img []float32, h, w, workers int, stopAt float64, sink windowSink) ([]ScanItem, error) {
	if dst == nil {
		panic("pipeline: Scan into a nil *ScanResult")
	}
	dst.Items, dst.Fixations = dst.Items[:0], dst.Fixations[:0]
	if m := s.MinSide(); h < m || w < m {
		return nil, fmt.Errorf("pipeline: scan frame %d×%d is smaller than %d×%d (the saliency map needs %d px, the model's input is %d×%d); use a larger frame or upscale it", h, w, m, m, s.sal.MinSide(), s.ih, s.iw)
	}
	if h > v1layer.MaxSide || w > v1layer.MaxSide {
		return nil, fmt.Errorf("pipeline: scan frame %d×%d is larger than the %d px limit (v1layer.MaxSide); downscale it first", h, w, v1layer.MaxSide)
	}
	if len(img) < h*w {
		return nil, fmt.Errorf("pipeline: scan frame has %d pixels, want %d×%d = %d; pass the whole row-major frame", len(img), h, w, h*w)
	}
	img = img[:h*w]
	lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
	for i, v := range img {
		if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
			return nil, fmt.Errorf("pipeline: scan frame pixel (row %d, column %d) is %v; want finite grey values in [0,1]", i/w, i%w, v)
		}
		lo, hi = min(lo, v), max(hi, v)
	}
	if hi-lo < minScanContrast {
		return nil, nil // blank or all black: nothing to find
	}
	wk := s.scratch.Get().(*scanWork)
	defer s.scratch.Put(wk)
	wk.floor = 0
	if s.cfg.FrameContrast > 0 {
		wk.floor = float32(s.cfg.FrameContrast) * (hi - medianGrey(wk, img, [4]int{0, 0, w, h}, w))
	}
	if err := s.sal.Map(&wk.maps, img, h, w, workers); err != nil {
		return nil, fmt.Errorf("pipeline: scan: %w", err)
	}
	mh, mw := wk.maps.H, wk.maps.W
	wk.sal = append(wk.sal[:0], wk.maps.Pix[:mh*mw]...)
	s.clearBorder(wk.sal, mh, mw, h, w)

	win := wta{m: wk.sal, mh: mh, mw: mw, scale: float64(s.sal.Scale())}
	var cands []ScanItem
	var done [][4]int // groups whose whole-group window won: nothing more to find in them
	var peak0 float32
	found := 0
	mg := s.cfg.ItemSize / 4
	for len(dst.Fixations) < s.cfg.MaxFixations && found < s.cfg.MaxItems {
		k, fx, fy, v := win.next()
		if len(dst.Fixations) == 0 {
			peak0 = v
		}
		if v <= 0 || float64(v) < s.cfg.StopFraction*float64(peak0) {
			break
		}
		g, rect, ok := s.attend(wk, img, h, w, fx, fy)
		dst.Fixations = append(dst.Fixations, Fixation{X: fx, Y: fy, Salience: v, Item: ok})
		r := s.cfg.ItemSize / 4
		inhibit := [4]int{int(fx) - r, int(fy) - r, int(fx) + r + 1, int(fy) + r + 1}
		if ok && slices.Contains(done, g.box) {
			inhibit = grow(g.box, mg)
		} else if ok {
			var whole int
			wins, boxes := s.candidates(wk, img, h, w, g, rect, fx, fy, &whole)
			probs, err := s.m.PredictBatch(wins, s.ih, s.iw, workers)
			if err != nil {
				return nil, fmt.Errorf("pipeline: scan: %w", err)
			}
			if sink != nil {
				sink(wins, boxes, probs)
			}
			bj, bc, bp := 0, 0, float32(-1)
			for j, p := range probs {
				if c := argmax(p); p[c] > bp {
					bj, bc, bp = j, c, p[c]
				}
			}
			it := ScanItem{Class: bc, Score: bp, Box: boxes[bj], Fixation: len(dst.Fixations) - 1}
			cands = append(cands, it)
			if bj < whole {
				done = append(done, g.box)
			}
			if float64(bp) >= stopAt {
				found++
			}
			inhibit = grow(it.Box, mg)
		}
		win.inhibit(k, inhibit)
	}
	return cands, nil
}

// windowSink receives one fixation's candidate windows (see scan).
type windowSink func(wins [][]float32, boxes [][4]int, probs [][]float32)

// candidates returns the candidate windows of the attended group g (at the
// model's input size) and the item box each stands for: first one window
// per Frames factor around the group's box, then, for a group that may
// hold several items, one per Sizes factor around the ink near the
// fixation, whose box is the group's ink inside the window.
func (s *Scanner) candidates(wk *scanWork, img []float32, h, w int, g inkGroup, rect [4]int, fx, fy float64, whole *int) ([][]float32, [][4]int) {
	var wins [][]float32
	var boxes [][4]int
	add := func(cx, cy float64, n int, box [4]int) {
		x0, y0 := int(math.Round(cx-float64(n)/2)), int(math.Round(cy-float64(n)/2))
		wk.win = growScan(wk.win, n*n)
		s.window(wk.win, img, h, w, x0, y0, n, g.bg, g.rng, g.mask, rect)
		wins = append(wins, s.resize(wk.win, n))
		boxes = append(boxes, box)
	}
	side := max(g.box[2]-g.box[0], g.box[3]-g.box[1])
	cx, cy := float64(g.box[0]+g.box[2])/2, float64(g.box[1]+g.box[3])/2
	for _, f := range s.cfg.Frames {
		add(cx, cy, max(2, int(math.Round(f*float64(side)))), g.box)
	}
	if core, box, ok := s.core(wk, img, w, g, rect); ok {
		cside := max(box[2]-box[0], box[3]-box[1])
		ccx, ccy := float64(box[0]+box[2])/2, float64(box[1]+box[3])/2
		for _, f := range s.cfg.Frames {
			n := max(2, int(math.Round(f*float64(cside))))
			x0, y0 := int(math.Round(ccx-float64(n)/2)), int(math.Round(ccy-float64(n)/2))
			wk.win = growScan(wk.win, n*n)
			s.window(wk.win, img, h, w, x0, y0, n, g.bg, g.rng, core, rect)
			wins = append(wins, s.resize(wk.win, n))
			boxes = append(boxes, box)
		}
	}
	*whole = len(wins)
	if float64(side) <= s.cfg.SplitSide*float64(s.cfg.ItemSize) {
		return wins, boxes
	}
	// The centre of the group's ink within ItemSize/2 of the fixation.
	rw := rect[2] - rect[0]
	near := centredRect(fx, fy, s.cfg.ItemSize, h, w)
	var m, mx, my float64
	for y := max(near[1], rect[1]); y < min(near[3], rect[3]); y++ {
		for x := max(near[0], rect[0]); x < min(near[2], rect[2]); x++ {
			if p := (y-rect[1])*rw + x - rect[0]; wk.ink[p] && g.mask[p] {
				v := float64(img[y*w+x] - g.bg)
				m, mx, my = m+v, mx+v*float64(x), my+v*float64(y)
			}
		}
	}
	if m > 0 {
		fx, fy = mx/m, my/m
	}
	for _, z := range s.cfg.Sizes {
		n := max(2, int(math.Round(z*float64(s.cfg.ItemSize))))
		x0, y0 := int(math.Round(fx-float64(n)/2)), int(math.Round(fy-float64(n)/2))
		box := [4]int{x0 + n, y0 + n, x0, y0}
		for y := max(y0, rect[1]); y < min(y0+n, rect[3]); y++ {
			for x := max(x0, rect[0]); x < min(x0+n, rect[2]); x++ {
				if p := (y-rect[1])*rw + x - rect[0]; wk.ink[p] && g.mask[p] {
					box = [4]int{min(box[0], x), min(box[1], y), max(box[2], x+1), max(box[3], y+1)}
				}
			}
		}
		if box[2] > box[0] && max(box[2]-box[0], box[3]-box[1]) >= s.cfg.MinItemSide {
			add(fx, fy, n, box)
		}
	}
	return wins, boxes
}

// core finds the group's core: the 8-connected component of its own ink
// (before the dilation by Gap joined it to scraps nearby) with the largest
// ink mass. When the group has more than one such component and the core's
// box is at least MinItemSide long, it returns the core's dilated ink as a
// mask over rect and its tight box.
func (s *Scanner) core(wk *scanWork, img []float32, w int, g inkGroup, rect [4]int) ([]bool, [4]int, bool) {
	rw, rh := rect[2]-rect[0], rect[3]-rect[1]
	n := rw * rh
	if cap(wk.clab) < n {
		wk.clab = make([]int32, n)
	}
	lab := wk.clab[:n]
	clear(lab)
	best, parts := int32(0), 0
	bestMass := 0.0
	var bestBox [4]int
	for p := range n {
		if !wk.ink[p] || !g.mask[p] || lab[p] != 0 {
			continue
		}
		parts++
		id := int32(parts)
		lab[p] = id
		box := [4]int{rw, rh, -1, -1}
		mass := 0.0
		wk.queue = append(wk.queue[:0], int32(p))
		for qi := 0; qi < len(wk.queue); qi++ {
			q := int(wk.queue[qi])
			y, x := q/rw, q%rw
			box = [4]int{min(box[0], x), min(box[1], y), max(box[2], x+1), max(box[3], y+1)}
			mass += float64(img[(y+rect[1])*w+x+rect[0]] - g.bg)
			for dy := -1; dy <= 1; dy++ {
				for dx := -1; dx <= 1; dx++ {
					yy, xx := y+dy, x+dx
					if yy < 0 || yy >= rh || xx < 0 || xx >= rw {
						continue
					}
					if r := yy*rw + xx; wk.ink[r] && g.mask[r] && lab[r] == 0 {
						lab[r] = id
						wk.queue = append(wk.queue, int32(r))
					}
				}
			}
		}
		if mass > bestMass {
			best, bestMass, bestBox = id, mass, box
		}
	}
	if parts < 2 || max(bestBox[2]-bestBox[0], bestBox[3]-bestBox[1]) < s.cfg.MinItemSide {
		return nil, [4]int{}, false
	}
	wk.cink, wk.cmask, wk.ctmp = growBool(wk.cink, n), growBool(wk.cmask, n), growBool(wk.ctmp, n)
	for p, l := range lab {
		wk.cink[p] = l == best
	}
	dilate(wk.cmask, wk.cink, wk.ctmp, rh, rw, s.cfg.Gap)
	for p := range wk.cmask {
		wk.cmask[p] = wk.cmask[p] && g.mask[p]
	}
	b := bestBox
	return wk.cmask, [4]int{b[0] + rect[0], b[1] + rect[1], b[2] + rect[0], b[3] + rect[1]}, true
}

// grow returns box b grown by m px on every side.
func grow(b [4]int, m int) [4]int { return [4]int{b[0] - m, b[1] - m, b[2] + m, b[3] + m} }

// decide appends to dst the items of cands (in fixation order) that reach
// threshold, at most MaxItems of them (the stop rule: the first MaxItems
// in fixation order), after non-maximum suppression, in fixation order.
func (s *Scanner) decide(dst []ScanItem, cands []ScanItem, threshold float64) []ScanItem {
	var kept []ScanItem
	for _, c := range cands {
		if float64(c.Score) >= threshold {
			kept = append(kept, c)
			if len(kept) == s.cfg.MaxItems {
				break
			}
		}
	}
	kept = NMS(kept, s.cfg.NMSIoU)
	slices.SortFunc(kept, func(a, b ScanItem) int { return cmp.Compare(a.Fixation, b.Fixation) })
	return append(dst, kept...)
}

// clearBorder zeroes the map pixels whose centres lie within Border frame
// pixels of the frame's edges.
func (s *Scanner) clearBorder(m []float32, mh, mw, h, w int) {
	b := float64(s.cfg.Border)
	if b <= 0 {
		return
	}
	sc := float64(s.sal.Scale())
	for i := range mh {
		y := (float64(i)+0.5)*sc - 0.5
		for j := range mw {
			x := (float64(j)+0.5)*sc - 0.5
			if y < b || x < b || y > float64(h-1)-b || x > float64(w-1)-b {
				m[i*mw+j] = 0
			}
		}
	}
}

// wta is the winner-take-all over a saliency map with inhibition of return
// (Koch & Ullman 1985): next returns the map's maximum, the first in
// row-major order on ties, and inhibit clears the winner and every map
// pixel whose centre lies in a frame box. Map pixel (i, j) is centred on
// frame position ((j+0.5)·scale − 0.5, (i+0.5)·scale − 0.5).
type wta struct {
	m      []float32 // mh×mw, modified in place
	mh, mw int
	scale  float64
}

// next returns the winner's index, frame position and value.
func (t *wta) next() (k int, x, y float64, v float32) {
	v = t.m[0]
	for i, u := range t.m {
		if u > v {
			k, v = i, u
		}
	}
	return k, (float64(k%t.mw)+0.5)*t.scale - 0.5, (float64(k/t.mw)+0.5)*t.scale - 0.5, v
}

// inhibit zeroes map pixel k and the map pixels whose centres lie in the
// half-open frame box b.
func (t *wta) inhibit(k int, b [4]int) {
	t.m[k] = 0
	for i := range t.mh {
		y := (float64(i)+0.5)*t.scale - 0.5
		if y < float64(b[1])-0.5 || y >= float64(b[3])-0.5 {
			continue
		}
		for j := range t.mw {
			x := (float64(j)+0.5)*t.scale - 0.5
			if x >= float64(b[0])-0.5 && x < float64(b[2])-0.5 {
				t.m[i*t.mw+j] = 0
			}
		}
	}
}

// inkGroup is a group of ink pixels in a search rectangle.
type inkGroup struct {
	box     [4]int // tight box of its ink, frame px
	mass    float64
	label   int32
	bg, rng float32
	mask    []bool // its dilated ink over the rect (only for the returned group)
}

// attend finds the item at fixation (fx, fy): step 3 of the method. It
// returns the attended group and the search rectangle its mask covers.
func (s *Scanner) attend(wk *scanWork, img []float32, h, w int, fx, fy float64) (inkGroup, [4]int, bool) {
	side := int(math.Ceil(searchPerItem * float64(s.cfg.ItemSize)))
	cx, cy := fx, fy
	for try := 0; ; try++ {
		rect := centredRect(cx, cy, side, h, w)
		g, ok := s.group(wk, img, w, rect, fx, fy)
		if !ok {
			return g, rect, false
		}
		touches := (g.box[0] <= rect[0] && rect[0] > 0) || (g.box[1] <= rect[1] && rect[1] > 0) ||
			(g.box[2] >= rect[2] && rect[2] < w) || (g.box[3] >= rect[3] && rect[3] < h)
		if !touches || try == 1 {
			return g, rect, true
		}
		side = int(math.Ceil(searchGrow * float64(side)))
		cx, cy = float64(g.box[0]+g.box[2]-1)/2, float64(g.box[1]+g.box[3]-1)/2
	}
}

// centredRect returns the half-open square of side n centred on (cx, cy),
// clipped to the h×w frame.
func centredRect(cx, cy float64, n, h, w int) [4]int {
	x0, y0 := int(math.Round(cx-float64(n-1)/2)), int(math.Round(cy-float64(n-1)/2))
	return [4]int{max(0, x0), max(0, y0), min(w, x0+n), min(h, y0+n)}
}

// group finds the ink groups of rect and returns the one nearest (fx, fy).
func (s *Scanner) group(wk *scanWork, img []float32, w int, rect [4]int, fx, fy float64) (inkGroup, bool) {
	rw, rh := rect[2]-rect[0], rect[3]-rect[1]
	n := rw * rh
	if n <= 0 {
		return inkGroup{}, false
	}
	hi := float32(0)
	for y := rect[1]; y < rect[3]; y++ {
		for _, v := range img[y*w+rect[0] : y*w+rect[2]] {
			hi = max(hi, v)
		}
	}
	bg := min(medianGrey(wk, img, rect, w), hi)
	rng := hi - bg
	if rng < minScanContrast {
		return inkGroup{}, false
	}
	t := bg + max(float32(s.cfg.InkFraction)*rng, wk.floor)
	if hi <= t {
		return inkGroup{}, false
	}
	wk.ink, wk.dil, wk.tmp = growBool(wk.ink, n), growBool(wk.dil, n), growBool(wk.tmp, n)
	for y := range rh {
		for x, v := range img[(y+rect[1])*w+rect[0] : (y+rect[1])*w+rect[2]] {
			wk.ink[y*rw+x] = v > t
		}
	}
	dilate(wk.dil, wk.ink, wk.tmp, rh, rw, s.cfg.Gap)
	// 8-connected components of the dilated ink.
	if cap(wk.lab) < n {
		wk.lab = make([]int32, n)
	}
	lab := wk.lab[:n]
	clear(lab)
	wk.groups = wk.groups[:0]
	for p := range n {
		if !wk.dil[p] || lab[p] != 0 {
			continue
		}
		id := int32(len(wk.groups) + 1)
		g := inkGroup{box: [4]int{rw, rh, -1, -1}, label: id}
		lab[p] = id
		wk.queue = append(wk.queue[:0], int32(p))
		for qi := 0; qi < len(wk.queue); qi++ {
			q := int(wk.queue[qi])
			y, x := q/rw, q%rw
			if wk.ink[q] {
				g.box = [4]int{min(g.box[0], x), min(g.box[1], y), max(g.box[2], x+1), max(g.box[3], y+1)}
				g.mass += float64(img[(y+rect[1])*w+x+rect[0]] - bg)
			}
			for dy := -1; dy <= 1; dy++ {
				for dx := -1; dx <= 1; dx++ {
					yy, xx := y+dy, x+dx
					if yy < 0 || yy >= rh || xx < 0 || xx >= rw {
						continue
					}
					if r := yy*rw + xx; wk.dil[r] && lab[r] == 0 {
						lab[r] = id
						wk.queue = append(wk.queue, int32(r))
					}
				}
			}
		}
		g.box = [4]int{g.box[0] + rect[0], g.box[1] + rect[1], g.box[2] + rect[0], g.box[3] + rect[1]}
		wk.groups = append(wk.groups, g)
	}
	best, bd := -1, math.Inf(1)
	for i, g := range wk.groups {
		if max(g.box[2]-g.box[0], g.box[3]-g.box[1]) < s.cfg.MinItemSide {
			continue
		}
		d := boxDistance(g.box, fx, fy)
		if best < 0 || d < bd || (d == bd && g.mass > wk.groups[best].mass) {
			best, bd = i, d
		}
	}
	if best < 0 {
		return inkGroup{}, false
	}
	g := wk.groups[best]
	g.bg, g.rng = bg, rng
	g.mask = growBool(wk.tmp, n)
	for p, l := range lab {
		g.mask[p] = l == g.label
	}
	return g, true
}

// medianGrey returns the median grey of the half-open rectangle rect of
// the frame img of width w, to within half a bin of a 1024-bin histogram.
func medianGrey(wk *scanWork, img []float32, rect [4]int, w int) float32 {
	const bins = 1024
	if len(wk.hist) != bins {
		wk.hist = make([]int32, bins)
	}
	clear(wk.hist)
	for y := rect[1]; y < rect[3]; y++ {
		for _, v := range img[y*w+rect[0] : y*w+rect[2]] {
			wk.hist[min(bins-1, max(0, int(v*bins)))]++
		}
	}
	n := (rect[2] - rect[0]) * (rect[3] - rect[1])
	var acc int32
	for b, c := range wk.hist {
		acc += c
		if 2*int(acc) >= n {
			return (float32(b) + 0.5) / bins
		}
	}
	return 0
}

// boxDistance is the distance from (x, y) to the half-open pixel box b
// (0 inside).
func boxDistance(b [4]int, x, y float64) float64 {
	dx := max(float64(b[0])-x, 0, x-float64(b[2]-1))
	dy := max(float64(b[1])-y, 0, y-float64(b[3]-1))
	return math.Hypot(dx, dy)
}

// dilate writes the square dilation of radius r of the rh×rw mask src to
// dst (tmp: scratch of the same size), separably.
func dilate(dst, src, tmp []bool, rh, rw, r int) {
	for y := range rh {
		row, out := src[y*rw:(y+1)*rw], tmp[y*rw:(y+1)*rw]
		for x := range rw {
			v := false
			for k := max(0, x-r); k <= min(rw-1, x+r) && !v; k++ {
				v = row[k]
			}
			out[x] = v
		}
	}
	for y := range rh {
		for x := range rw {
			v := false
			for k := max(0, y-r); k <= min(rh-1, y+r) && !v; k++ {
				v = tmp[k*rw+x]
			}
			dst[y*rw+x] = v
		}
	}
}

// window writes the n×n window at (x0, y0) of the frame, normalised on its
// own ((v − bg)/rng clipped to [0,1]), to dst: pixels outside the frame are
// 0, and so are those outside the attended group's mask over rect unless
// KeepSurround.
func (s *Scanner) window(dst, img []float32, h, w, x0, y0, n int, bg, rng float32, mask []bool, rect [4]int) {
	rw := rect[2] - rect[0]
	inv := 1 / rng
	for y := range n {
		fy := y0 + y
		for x := range n {
			fx := x0 + x
			v := float32(0)
			if fy >= 0 && fy < h && fx >= 0 && fx < w {
				in := fx >= rect[0] && fx < rect[2] && fy >= rect[1] && fy < rect[3]
				if s.cfg.KeepSurround || (in && mask[(fy-rect[1])*rw+fx-rect[0]]) {
					v = min(1, max(0, (img[fy*w+fx]-bg)*inv))
				}
			}
			dst[y*n+x] = v
		}
	}
}

// resize returns the n×n window win resized to the model's input.
func (s *Scanner) resize(win []float32, n int) []float32 {
	g := image.NewGray16(image.Rect(0, 0, n, n))
	for i, v := range win[:n*n] {
		u := uint16(v*65535 + 0.5)
		g.Pix[2*i], g.Pix[2*i+1] = byte(u>>8), byte(u)
	}
	return datasets.ToGray(nil, g, s.ih, s.iw)
}

func growScan(b []float32, n int) []float32 {
	if cap(b) < n {
		return make([]float32, n)
	}
	return b[:n]
}

func growBool(b []bool, n int) []bool {
	if cap(b) < n {
		return make([]bool, n)
	}
	return b[:n]
}

// IoU returns the intersection over union of two half-open pixel boxes
// [x0, y0, x1, y1): |a ∩ b| / |a ∪ b|, the overlap measure of the PASCAL
// VOC challenge (Everingham et al. 2010, IJCV 88:303-338; VOC's inclusive
// pixel boxes [x0, x1] are [x0, x1+1) here, so its "+1" is built in). Two
// empty boxes give 0.
func IoU(a, b [4]int) float64 {
	iw := min(a[2], b[2]) - max(a[0], b[0])
	ih := min(a[3], b[3]) - max(a[1], b[1])
	if iw <= 0 || ih <= 0 {
		return 0
	}
	inter := float64(iw) * float64(ih)
	area := func(r [4]int) float64 { return float64(max(0, r[2]-r[0])) * float64(max(0, r[3]-r[1])) }
	return inter / (area(a) + area(b) - inter)
}

// NMS is greedy non-maximum suppression (common practice in object
// detection, e.g. Felzenszwalb et al. 2010, IEEE PAMI 32:1627-1645): items
// are visited by decreasing Score (the earlier fixation first on ties) and
// one is kept unless its box has an IoU above maxIoU with a box already
// kept, whatever the classes. It returns the kept items in that order, in
// a new slice.
func NMS(items []ScanItem, maxIoU float64) []ScanItem {
	order := byScore(items)
	kept := order[:0]
	for _, it := range order {
		ok := true
		for _, k := range kept {
			if IoU(it.Box, k.Box) > maxIoU {
				ok = false
				break
			}
		}
		if ok {
			kept = append(kept, it)
		}
	}
	return kept
}

// ThresholdChoice is what ChooseThreshold found on the validation scenes.
type ThresholdChoice struct {
	Threshold float64 // the chosen ScanConfig.Threshold
	// At that threshold: items matched to a truth of the same class at
	// IoU ≥ 0.5, items reported, truth items, and the F1 score
	// 2·Matched/(Found + Truth).
	Matched, Found, Truth int
	F1                    float64
}

// matchIoU is the PASCAL VOC criterion for a detection to match a truth
// box (Everingham et al. 2010): IoU ≥ 0.5.
const matchIoU = 0.5

// ChooseThreshold chooses the "no item" threshold on validation scenes.
// Build them from the TRAINING split (datasets.SceneBuilder on training
// images the model was not fitted on, if there are any), never from test
// images, so that test figures stay unbiased.
//
// It scans every scene once, keeping every fixation's best window whatever
// its score, then tries each distinct score t as the threshold, applying the
// decision exactly as Scan does at Threshold = t (at most MaxItems in
// fixation order, then NMS). Items are matched to the truth greedily by
// decreasing score, each truth at most once, when the class agrees and
// IoU ≥ 0.5 (the PASCAL VOC rule). The threshold with the largest F1 =
// 2·matched/(found + truth) wins (the largest t on ties, fewer false
// items); F1 weighs missed items and false items alike (common practice).
// The other fields of the Scanner's configuration are used as they are.
// With no scene or no candidate at all it returns an error.
func (s *Scanner) ChooseThreshold(scenes []datasets.Scene, workers int) (ThresholdChoice, error) {
	if len(scenes) == 0 {
		return ThresholdChoice{}, fmt.Errorf("pipeline: ChooseThreshold needs validation scenes; build some from the training split with datasets.NewSceneBuilder")
	}
	cands := make([][]ScanItem, len(scenes))
	var scores []float64
	truth := 0
	var res ScanResult
	for i := range scenes {
		sc := &scenes[i]
		c, err := s.scan(&res, sc.Pix, sc.H, sc.W, workers, math.Inf(1), nil)
		if err != nil {
			return ThresholdChoice{}, fmt.Errorf("pipeline: ChooseThreshold: scene %d: %w", i, err)
		}
		cands[i] = c
		for _, it := range c {
			scores = append(scores, float64(it.Score))
		}
		truth += len(sc.Items)
	}
	if len(scores) == 0 {
		return ThresholdChoice{}, fmt.Errorf("pipeline: ChooseThreshold: no fixation of the %d scenes found an item; check the scenes hold items of ScanConfig.ItemSize", len(scenes))
	}
	slices.Sort(scores)
	scores = slices.Compact(scores)
	best := ThresholdChoice{F1: -1}
	var items []ScanItem
	for k := len(scores) - 1; k >= 0; k-- { // highest t first: ties keep it
		t := scores[k]
		ch := ThresholdChoice{Threshold: t, Truth: truth}
		for i := range scenes {
			items = s.decide(items[:0], cands[i], t)
			ch.Found += len(items)
			ch.Matched += matchItems(items, scenes[i].Items)
		}
		if ch.Found+ch.Truth > 0 {
			ch.F1 = 2 * float64(ch.Matched) / float64(ch.Found+ch.Truth)
		}
		if ch.F1 > best.F1 {
			best = ch
		}
	}
	best.Threshold = max(best.Threshold, math.SmallestNonzeroFloat64)
	return best, nil
}

// matchItems counts the items matched to truth: greedily by decreasing
// score (the earlier fixation on ties), each truth at most once, to the
// unmatched truth of the same class with the largest IoU ≥ 0.5.
func matchItems(items []ScanItem, truth []datasets.SceneItem) int {
	order := byScore(items)
	used := make([]bool, len(truth))
	n := 0
	for _, it := range order {
		bj, bv := -1, 0.0
		for j, tr := range truth {
			if used[j] || tr.Class != it.Class {
				continue
			}
			if v := IoU(it.Box, tr.Box); v >= matchIoU && v > bv {
				bj, bv = j, v
			}
		}
		if bj >= 0 {
			used[bj] = true
			n++
		}
	}
	return n
}

// byScore returns a copy of items sorted by decreasing Score, the earlier
// fixation first on ties.
func byScore(items []ScanItem) []ScanItem {
	order := slices.Clone(items)
	slices.SortStableFunc(order, func(a, b ScanItem) int {
		if c := cmp.Compare(b.Score, a.Score); c != 0 {
			return c
		}
		return cmp.Compare(a.Fixation, b.Fixation)
	})
	return order
}
