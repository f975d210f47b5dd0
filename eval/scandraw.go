package eval

import (
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"math"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
	"golang.org/x/image/font"
	"golang.org/x/image/font/basicfont"
	"golang.org/x/image/math/fixed"
)

// ScanDrawing says how DrawScan draws a scanned frame.
type ScanDrawing struct {
	// Classes names the model's classes for the labels.
	Classes []string
	// Scale enlarges the frame by an integer factor (nearest neighbour) so
	// that labels and the fixation path stay readable on small frames;
	// 0 means AutoScale of the frame's size; at most MaxDrawScale.
	Scale int
	// Truth is the frame's ground truth, drawn when Scored: found items
	// matched to it (PASCAL VOC rule, IoU ≥ MatchIoU and the same class) are
	// drawn as hits, the others as false items, and the truth items no one
	// found as misses.
	Truth  []datasets.SceneItem
	Scored bool
}

// MaxDrawScale bounds ScanDrawing.Scale (a larger picture adds no detail).
const MaxDrawScale = 8

// drawTarget is the side, in pixels, that AutoScale enlarges small frames
// towards: a 7×13-pixel label then covers a small part of the picture.
const drawTarget = 384

// AutoScale returns the enlargement DrawScan uses for an h×w frame by
// default: ⌈384 / max(h, w)⌉, between 1 and MaxDrawScale.
func AutoScale(h, w int) int {
	return min(MaxDrawScale, max(1, int(math.Ceil(drawTarget/float64(max(h, w, 1))))))
}

// Colours of the drawings. Boxes of an unscored frame take a class colour
// (the bright members of the Okabe & Ito 2008 palette, which stand out on
// dark belts); a scored frame uses three meanings: hit, false item, miss.
var (
	drawClassColors = []color.RGBA{
		{0x56, 0xB4, 0xE9, 0xff}, // sky blue
		{0xE6, 0x9F, 0x00, 0xff}, // orange
		{0x00, 0x9E, 0x73, 0xff}, // bluish green
		{0xF0, 0xE4, 0x42, 0xff}, // yellow
		{0xCC, 0x79, 0xA7, 0xff}, // reddish purple
		{0xD5, 0x5E, 0x00, 0xff}, // vermillion
	}
	// HitColor, FalseColor and MissColor are the box colours of a scored
	// frame: a found item matched to the truth, a found item that matches
	// nothing, and a truth item that no found item matches (dashed).
	HitColor   = color.RGBA{0x00, 0x9E, 0x73, 0xff}
	FalseColor = color.RGBA{0xD5, 0x5E, 0x00, 0xff}
	MissColor  = color.RGBA{0xF0, 0xE4, 0x42, 0xff}
	// FixationColor marks the fixations that gave items and the path
	// between them; OtherFixationColor the small marks of the others (a
	// ring where no ink was found, a dot where the ink was no new item).
	FixationColor      = color.RGBA{0xff, 0xff, 0xff, 0xff}
	OtherFixationColor = color.RGBA{0x99, 0x99, 0x99, 0xff}
	labelInk           = color.RGBA{0x00, 0x00, 0x00, 0xff}
)

// ClassColor is the box colour of class c on an unscored frame.
func ClassColor(c int) color.RGBA { return drawClassColors[abs(c)%len(drawClassColors)] }

// DrawScan draws frame pix (h×w grey in [0,1], row-major) enlarged by the
// drawing's scale, with what a scan found in it: each fixation that gave an
// item as a dot numbered by its place in the fixation order (1 is the
// first), joined to the next such by a thin line, the other fixations as
// small grey marks (a ring where no ink was found), and each item's box
// labelled with its fixation number, class and score. Frame pixel (x, y) covers picture pixels
// [x·s, (x+1)·s) × [y·s, (y+1)·s); a box [x0, y0, x1, y1) is outlined on
// the picture pixels just inside [x0·s, x1·s) × [y0·s, y1·s), max(1, s/2)
// wide. Labels sit above the box (inside it at the top edge) and may cover
// part of its top side. It returns an error for a pix shorter than h·w or
// a scale out of range.
func DrawScan(pix []float32, h, w int, res *pipeline.ScanResult, d ScanDrawing) (*image.RGBA, error) {
	if h <= 0 || w <= 0 || len(pix) < h*w {
		return nil, fmt.Errorf("eval: DrawScan frame %d×%d with %d pixels; pass the whole row-major frame", h, w, len(pix))
	}
	s := d.Scale
	if s == 0 {
		s = AutoScale(h, w)
	}
	if s < 1 || s > MaxDrawScale {
		return nil, fmt.Errorf("eval: DrawScan scale %d out of range [1,%d]; 0 means AutoScale", s, MaxDrawScale)
	}
	img := image.NewRGBA(image.Rect(0, 0, w*s, h*s))
	for y := range h * s {
		row := pix[(y/s)*w : (y/s+1)*w]
		for x := range w * s {
			v := float64(row[x/s])
			if v != v {
				v = 0
			}
			g := uint8(math.Round(255 * math.Min(1, math.Max(0, v))))
			i := img.PixOffset(x, y)
			img.Pix[i], img.Pix[i+1], img.Pix[i+2], img.Pix[i+3] = g, g, g, 0xff
		}
	}
	if res == nil {
		return img, nil
	}
	thick := max(1, s/2)
	cx := func(v float64) int { return int(math.Round((v + 0.5) * float64(s))) }
	// The path between the fixations that gave items, in fixation order,
	// under everything else.
	gave := make([]bool, len(res.Fixations))
	for _, it := range res.Items {
		if it.Fixation >= 0 && it.Fixation < len(gave) {
			gave[it.Fixation] = true
		}
	}
	last := -1
	for k, f := range res.Fixations {
		if gave[k] {
			if last >= 0 {
				a := res.Fixations[last]
				drawLine(img, cx(a.X), cx(a.Y), cx(f.X), cx(f.Y), color.RGBA{0xff, 0xff, 0xff, 0xb0})
			}
			last = k
		}
	}
	var hit []bool
	if d.Scored {
		var matched []bool
		hit, matched = matchFrame(res.Items, d.Truth)
		for j, tr := range d.Truth {
			if !matched[j] {
				drawBox(img, tr.Box, s, thick, MissColor, true)
				drawLabel(img, tr.Box[0]*s, tr.Box[1]*s, "missed "+className(d.Classes, tr.Class), MissColor)
			}
		}
	}
	for i, it := range res.Items {
		c := ClassColor(it.Class)
		if d.Scored {
			c = FalseColor
			if hit[i] {
				c = HitColor
			}
		}
		drawBox(img, it.Box, s, thick, c, false)
		drawLabel(img, it.Box[0]*s, it.Box[1]*s, fmt.Sprintf("%d %s %.2f", it.Fixation+1, className(d.Classes, it.Class), it.Score), c)
	}
	r := max(3, s+1)
	for k, f := range res.Fixations {
		x, y := cx(f.X), cx(f.Y)
		if !gave[k] {
			drawDot(img, x, y, 2, OtherFixationColor, !f.Item)
			continue
		}
		drawDot(img, x, y, r, FixationColor, false)
		drawText(img, x+r+1, y+4, fmt.Sprint(k+1), FixationColor, true)
	}
	return img, nil
}

// className is classes[c], or the class number when it has no name.
func className(classes []string, c int) string {
	if c >= 0 && c < len(classes) {
		return classes[c]
	}
	return fmt.Sprint(c)
}

// matchFrame matches one frame's items to its truth as ScoreScenes does
// (by decreasing score, each truth once, the same class, IoU ≥ MatchIoU to
// the truth it overlaps most): it returns which items are hits and which
// truth items were found.
func matchFrame(items []pipeline.ScanItem, truth []datasets.SceneItem) (hit, found []bool) {
	fr := []FrameResult{{Truth: truth, Found: Detections(items)}}
	order := rank(fr, func(Detection) bool { return true })
	hit, found = make([]bool, len(items)), make([]bool, len(truth))
	for k, j := range greedyMatch(fr, order, func(it datasets.SceneItem, d Detection) bool { return it.Class == d.Class }) {
		if j >= 0 {
			hit[order[k].idx], found[j] = true, true
		}
	}
	return hit, found
}

// Detections converts a scan's items for ScoreScenes.
func Detections(items []pipeline.ScanItem) []Detection {
	out := make([]Detection, len(items))
	for i, it := range items {
		out[i] = Detection{Box: boxF(it.Box), Class: it.Class, Score: float64(it.Score)}
	}
	return out
}

// drawBox outlines frame box b (half-open, frame pixels) at scale s with
// lines thick picture pixels wide inside the box; dashed leaves gaps.
func drawBox(img *image.RGBA, b [4]int, s, thick int, c color.RGBA, dashed bool) {
	x0, y0, x1, y1 := b[0]*s, b[1]*s, b[2]*s, b[3]*s
	dash := max(3, 2*s)
	on := func(t int) bool { return !dashed || (t/dash)%2 == 0 }
	for t := 0; t < thick; t++ {
		for x := x0; x < x1; x++ {
			if on(x - x0) {
				setPix(img, x, y0+t, c)
				setPix(img, x, y1-1-t, c)
			}
		}
		for y := y0; y < y1; y++ {
			if on(y - y0) {
				setPix(img, x0+t, y, c)
				setPix(img, x1-1-t, y, c)
			}
		}
	}
}

// setPix sets one pixel, ignoring positions outside the picture.
func setPix(img *image.RGBA, x, y int, c color.RGBA) {
	if image.Pt(x, y).In(img.Rect) {
		img.SetRGBA(x, y, c)
	}
}

// blendPix mixes c over the pixel by c's alpha.
func blendPix(img *image.RGBA, x, y int, c color.RGBA) {
	if !image.Pt(x, y).In(img.Rect) {
		return
	}
	i := img.PixOffset(x, y)
	a := uint32(c.A)
	for k, v := range [3]uint8{c.R, c.G, c.B} {
		img.Pix[i+k] = uint8((uint32(v)*a + uint32(img.Pix[i+k])*(255-a) + 127) / 255)
	}
}

// drawLine draws a one-pixel line from (x0, y0) to (x1, y1) (DDA).
func drawLine(img *image.RGBA, x0, y0, x1, y1 int, c color.RGBA) {
	n := max(abs(x1-x0), abs(y1-y0))
	for k := 0; k <= n; k++ {
		t := 0.0
		if n > 0 {
			t = float64(k) / float64(n)
		}
		blendPix(img, int(math.Round(float64(x0)+t*float64(x1-x0))), int(math.Round(float64(y0)+t*float64(y1-y0))), c)
	}
}

func abs(v int) int {
	if v < 0 {
		return -v
	}
	return v
}

// drawDot draws a disc of radius r with a dark rim at (x, y); hollow
// leaves its centre as it was.
func drawDot(img *image.RGBA, x, y, r int, c color.RGBA, hollow bool) {
	for dy := -r - 1; dy <= r+1; dy++ {
		for dx := -r - 1; dx <= r+1; dx++ {
			d := math.Hypot(float64(dx), float64(dy))
			switch {
			case d <= float64(r) && (!hollow || d > float64(r)-1.5):
				setPix(img, x+dx, y+dy, c)
			case d <= float64(r)+1 && d > float64(r):
				setPix(img, x+dx, y+dy, labelInk)
			}
		}
	}
}

// drawLabel writes text on a filled strip of colour c just above (x, y),
// or just below it when there is no room above.
func drawLabel(img *image.RGBA, x, y int, text string, c color.RGBA) {
	face := basicfont.Face7x13
	wd := font.MeasureString(face, text).Ceil() + 4
	top := y - 13
	if top < 0 {
		top = y
	}
	x = max(0, min(x, img.Rect.Dx()-wd))
	draw.Draw(img, image.Rect(x, top, x+wd, top+13), image.NewUniform(c), image.Point{}, draw.Src)
	drawText(img, x+2, top+10, text, labelInk, false)
}

// drawText writes text with its baseline at (x, y); outlined draws a
// dark rim first so it reads on any background.
func drawText(img *image.RGBA, x, y int, text string, c color.RGBA, outlined bool) {
	dr := font.Drawer{Dst: img, Face: basicfont.Face7x13}
	if outlined {
		dr.Src = image.NewUniform(labelInk)
		for _, o := range [][2]int{{-1, 0}, {1, 0}, {0, -1}, {0, 1}} {
			dr.Dot = fixed.P(x+o[0], y+o[1])
			dr.DrawString(text)
		}
	}
	dr.Src = image.NewUniform(c)
	dr.Dot = fixed.P(x, y)
	dr.DrawString(text)
}
