package eval

import (
	"bytes"
	"encoding/json"
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"image/png"
	"math"
	"path/filepath"
	"strings"

	"github.com/striate/striate/datasets"
	"golang.org/x/image/font"
	"golang.org/x/image/font/basicfont"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// SceneResult is a scanner's scores on scene folders, for the report's
// scenes section.
type SceneResult struct {
	Model     string       `json:"model"`
	Data      string       `json:"data"`   // the scene folders' names
	Source    string       `json:"source"` // their paths, joined by " + "
	Classes   []string     `json:"classes"`
	Threshold float64      `json:"threshold"` // the scanner's "no item" threshold
	Scores    *SceneScores `json:"scores"`
	// Errors lists the frames with a missed or a false item, in frame
	// order.
	Errors []FrameErrors `json:"errors,omitempty"`
	// Gallery is a PNG of annotated frames, those with errors first (the
	// page of hits and misses); nil leaves it out.
	Gallery []byte `json:"-"`
}

// FrameErrors names one frame's missed items and false items, each as
// "class [x0 y0 x1 y1]" (false items with their score).
type FrameErrors struct {
	File   string   `json:"file"`
	Items  int      `json:"items"` // ground-truth items in the frame
	Missed []string `json:"missed,omitempty"`
	False  []string `json:"false,omitempty"`
}

// MarshalJSON writes AP and StepAP as null when they are NaN (a class
// without ground truth), so results.json stays valid JSON.
func (c ClassAP) MarshalJSON() ([]byte, error) {
	type plain ClassAP
	return json.Marshal(struct {
		plain
		AP     *float64
		StepAP *float64
	}{plain(c), finite(c.AP), finite(c.StepAP)})
}

// MarshalJSON writes MAP as null when it is NaN (no ground truth at all).
func (s SceneScores) MarshalJSON() ([]byte, error) {
	type plain SceneScores
	return json.Marshal(struct {
		plain
		MAP *float64
	}{plain(s), finite(s.MAP)})
}

// finite returns &x, or nil for NaN and ±Inf.
func finite(x float64) *float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return nil
	}
	return &x
}

// galleryFrames is how many frames the page of hits and misses shows (in
// galleryCols columns), gallerySide the side a small frame is enlarged to
// at least there, and maxErrorRows the frames its table lists.
const (
	galleryFrames = 12
	galleryCols   = 4
	gallerySide   = 256
	maxErrorRows  = 50
)

// Report returns the report of a scan of scene folders: the scene
// metrics, the AP table per class with mAP, precision-recall curves and a
// page of hits and misses, under title, with the command line and model
// name recorded. Without any frame from a scene folder it returns
// ErrNoTruth.
func (j *ScanJob) Report(title, command, model string) (*Report, error) {
	if j.Scores == nil {
		return nil, ErrNoTruth
	}
	names := make([]string, len(j.Folders))
	for i, f := range j.Folders {
		names[i] = filepath.Base(filepath.Clean(f))
	}
	res, err := j.sceneResult(model, strings.Join(names, " + "), strings.Join(j.Folders, " + "))
	if err != nil {
		return nil, err
	}
	rep := NewReport(title, command)
	rep.Summary = "Garment-sorting station at a second-hand clothing depot: the camera sees whole frames of the belt, and the scanner finds, boxes and names every item in them."
	rep.Config = j.Config
	rep.Scenes = []*SceneResult{res}
	return rep, nil
}

// sceneResult returns the scenes section's result of the job's scored
// frames under the names given: the scores, the frames with errors and the
// page of hits and misses.
func (j *ScanJob) sceneResult(model, data, source string) (*SceneResult, error) {
	res := &SceneResult{Model: model, Data: data, Source: source,
		Classes: j.Classes, Threshold: j.Config.Threshold, Scores: j.Scores}
	var errs, hits []*ScanFrame
	for i := range j.Frames {
		f := &j.Frames[i]
		if !f.Source.Scored {
			continue
		}
		hit, found := matchFrame(f.Result.Items, f.Source.Truth)
		fe := FrameErrors{File: f.Source.File, Items: len(f.Source.Truth)}
		for k, ok := range found {
			if !ok {
				tr := f.Source.Truth[k]
				fe.Missed = append(fe.Missed, fmt.Sprintf("%s %v", className(j.Classes, tr.Class), boxText(tr.Box)))
			}
		}
		for k, ok := range hit {
			if !ok {
				it := f.Result.Items[k]
				fe.False = append(fe.False, fmt.Sprintf("%s %.2f %v", className(j.Classes, it.Class), it.Score, boxText(it.Box)))
			}
		}
		if len(fe.Missed)+len(fe.False) > 0 {
			res.Errors = append(res.Errors, fe)
			errs = append(errs, f)
		} else {
			hits = append(hits, f)
		}
	}
	// Three quarters of the page for errors at most, so it shows hits too.
	nErr := min(len(errs), galleryFrames*3/4)
	shown := append(append(append([]*ScanFrame{}, errs[:nErr]...), hits...), errs[nErr:]...)
	var err error
	if res.Gallery, err = galleryPNG(shown[:min(len(shown), galleryFrames)], j.Classes); err != nil {
		return nil, err
	}
	return res, nil
}

// WriteReport writes the Report of the scan (title, command and model as
// Report takes them) into dir with WriteReport and returns the paths
// written.
func (j *ScanJob) WriteReport(dir, title, command, model string) ([]string, error) {
	rep, err := j.Report(title, command, model)
	if err != nil {
		return nil, err
	}
	return WriteReport(dir, rep)
}

// boxText writes a box as [x0 y0 x1 y1].
func boxText(b [4]int) string { return fmt.Sprintf("[%d %d %d %d]", b[0], b[1], b[2], b[3]) }

// galleryPNG draws frames (their pixels when the scan kept them, else
// re-read from their files) with their hits,
// false items and misses in a grid, each captioned with its file name and
// counts, and encodes it as PNG; no frames give nil.
func galleryPNG(frames []*ScanFrame, classes []string) ([]byte, error) {
	if len(frames) == 0 {
		return nil, nil
	}
	var tiles []*image.RGBA
	var captions []string
	cw, ch := 0, 0
	for _, f := range frames {
		pix := f.pix
		if pix == nil {
			img, err := datasets.DecodeImageFile(f.Source.File)
			if err != nil {
				return nil, fmt.Errorf("eval: page of hits and misses: %w", err)
			}
			pix = datasets.ToGray(nil, img, 0, 0)
		}
		s := min(MaxDrawScale, max(1, (gallerySide+max(f.W, f.H)-1)/max(f.W, f.H)))
		t, err := DrawScan(pix, f.H, f.W, &f.Result, ScanDrawing{Classes: classes, Scale: s, Truth: f.Source.Truth, Scored: true})
		if err != nil {
			return nil, err
		}
		hit, found := matchFrame(f.Result.Items, f.Source.Truth)
		c := fmt.Sprintf("%s: hits %d, missed %d, false %d", filepath.Base(f.Source.File), count(hit, true), count(found, false), count(hit, false))
		captions = append(captions, c)
		tiles = append(tiles, t)
		cw, ch = max(cw, t.Rect.Dx(), font.MeasureString(basicfont.Face7x13, c).Ceil()), max(ch, t.Rect.Dy())
	}
	const pad, capH = 8, 16
	cols := min(galleryCols, len(tiles))
	rows := (len(tiles) + cols - 1) / cols
	out := image.NewRGBA(image.Rect(0, 0, cols*(cw+pad)+pad, rows*(ch+capH+pad)+pad))
	draw.Draw(out, out.Rect, image.NewUniform(color.White), image.Point{}, draw.Src)
	for i, t := range tiles {
		x, y := pad+(i%cols)*(cw+pad), pad+(i/cols)*(ch+capH+pad)
		draw.Draw(out, t.Rect.Add(image.Pt(x, y)), t, image.Point{}, draw.Src)
		drawText(out, x, y+ch+12, captions[i], labelInk, false)
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, out); err != nil {
		return nil, fmt.Errorf("eval: page of hits and misses: %w", err)
	}
	return buf.Bytes(), nil
}

// count returns how many of v equal want.
func count(v []bool, want bool) int {
	n := 0
	for _, b := range v {
		if b == want {
			n++
		}
	}
	return n
}

// PRFigure draws the precision-recall curve of each class with ground
// truth (the raw curve after each ranked detection, as ClassAP.Curve), one
// line per class, labelled with its AP.
func PRFigure(s *SceneScores, classes []string, title string) ([]byte, error) {
	p := newPlot(title, "recall", "precision")
	drawn := 0
	for c, ca := range s.PerClass {
		if ca.Truth == 0 {
			continue
		}
		xy := plotter.XYs{}
		for _, q := range ca.Curve {
			xy = append(xy, plotter.XY{X: q.Recall, Y: q.Precision})
		}
		if len(xy) == 0 {
			xy = append(xy, plotter.XY{X: 0, Y: 0})
		}
		line, pts, err := plotter.NewLinePoints(xy)
		if err != nil {
			return nil, err
		}
		line.Color, pts.Color = seriesColor(drawn), seriesColor(drawn)
		line.Width = vg.Points(1.5)
		pts.Shape, pts.Radius = seriesGlyphs[drawn%len(seriesGlyphs)], vg.Points(2)
		p.Add(line, pts)
		p.Legend.Add(fmt.Sprintf("%s (AP %.3f)", className(classes, c), ca.AP), line, pts)
		drawn++
	}
	if drawn == 0 {
		return nil, fmt.Errorf("eval: precision-recall figure with no class holding ground truth")
	}
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = 0, 1.02, 0, 1.02
	p.X.Tick.Marker = plot.ConstantTicks(unitTicks())
	p.Y.Tick.Marker = plot.ConstantTicks(unitTicks())
	p.Legend.Top, p.Legend.Left = false, true
	p.Legend.XOffs, p.Legend.YOffs = vg.Points(6), vg.Points(6)
	p.Add(plotter.NewGrid())
	return renderPNG([][]*plot.Plot{{p}}, 5.5*vg.Inch, 5*vg.Inch)
}

// unitTicks labels 0, 0.2 … 1.
func unitTicks() []plot.Tick {
	var t []plot.Tick
	for i := 0; i <= 5; i++ {
		t = append(t, plot.Tick{Value: float64(i) / 5, Label: fmt.Sprintf("%.1f", float64(i)/5)})
	}
	return t
}

// apCell formats an AP in percent, "—" when undefined.
func apCell(x float64) string {
	if math.IsNaN(x) {
		return "—"
	}
	return pct(x)
}

// sceneBlocks renders the scenes section: per result the headline scores,
// the AP table per class with mAP, the precision-recall curves and the page
// of hits and misses.
func sceneBlocks(rs []*SceneResult, add func(...block), fig func(stem, title, caption string, png []byte)) error {
	add(headBlock{2, "Scenes: every item in a frame"})
	add(paraBlock{"The scanner looks at whole frames: bottom-up saliency chooses where to look, each attended region is normalised " +
		"on its own and recognised, and a \"no item\" threshold and non-maximum suppression decide what is reported. A found item " +
		"matches a ground-truth item of the same class when their boxes overlap with IoU ≥ 0.5, each item at most once, best score " +
		"first (the PASCAL VOC rule, Everingham et al. 2010). AP is the all-point interpolated average precision of PASCAL VOC from " +
		"2010 on, mAP its mean over the classes with ground truth; precision, recall, AP and accuracies in %."})
	for _, r := range rs {
		s := r.Scores
		if s == nil {
			return fmt.Errorf("eval: report scenes %q have no scores", r.Data)
		}
		add(headBlock{3, r.Model + " on " + r.Data})
		add(tableBlock{header: []string{"model", "scene folders", "frames", "items", "found", "matched", "precision (%)", "recall (%)",
			"mAP (%)", "count accuracy (%)", "recognition of items found (%)", "empty frames", "false items per empty frame", "threshold"},
			rows: [][]string{{r.Model, r.Data, fmt.Sprint(s.Frames), fmt.Sprint(s.Truth), fmt.Sprint(s.Found), fmt.Sprint(s.Matched),
				pct(s.Precision), pct(s.Recall), apCell(s.MAP), pct(s.CountAccuracy), pct(s.RecognitionAccuracy), fmt.Sprint(s.EmptyFrames),
				fmt.Sprintf("%.3f", s.FalsePerEmpty), fmt.Sprintf("%.3f", r.Threshold)}}})
		add(paraBlock{"Count accuracy is the fraction of frames with as many found items as true ones; recognition counts, of the " +
			"items located (IoU ≥ 0.5 whatever the class), those given their right class."})
		at := tableBlock{header: []string{"class", "items", "found", "matched", "AP (%)", "non-interpolated AP (%)"}}
		for c, ca := range s.PerClass {
			at.rows = append(at.rows, []string{className(r.Classes, c), fmt.Sprint(ca.Truth), fmt.Sprint(ca.Found), fmt.Sprint(ca.Matched), apCell(ca.AP), apCell(ca.StepAP)})
		}
		at.rows = append(at.rows, []string{"mean (mAP)", fmt.Sprint(s.Truth), fmt.Sprint(s.Found), fmt.Sprint(s.Matched), apCell(s.MAP), ""})
		add(at)
		if !math.IsNaN(s.MAP) {
			png, err := PRFigure(s, r.Classes, "Precision and recall on "+r.Data)
			if err != nil {
				return err
			}
			fig("precision-recall-"+r.Data, "Precision-recall curves on "+r.Data,
				"Precision against recall after each found item of a class, most confident first; AP is the area under the curve's upper envelope.", png)
		}
		add(headBlock{3, "Hits and misses on " + r.Data})
		if r.Gallery != nil {
			fig("hits-and-misses-"+r.Data, "Hits and misses on "+r.Data,
				"Frames with a missed or false item first. Green boxes are found items that match the truth, vermillion ones false items, "+
					"dashed yellow ones missed items; labels give the fixation number, class and score; white numbered dots are the fixations that gave "+
					"items, joined in fixation order, small grey marks the other fixations (a ring where no ink was found).", r.Gallery)
		}
		if len(r.Errors) == 0 {
			add(paraBlock{"Every item of every frame was found and named, with no false item."})
			continue
		}
		et := tableBlock{header: []string{"frame", "items", "missed", "false items (score)"}, tips: map[[2]int]string{}}
		for i, e := range r.Errors[:min(len(r.Errors), maxErrorRows)] {
			et.rows = append(et.rows, []string{filepath.Base(e.File), fmt.Sprint(e.Items), strings.Join(e.Missed, "; "), strings.Join(e.False, "; ")})
			et.tips[[2]int{i, 0}] = e.File
		}
		add(et)
		if len(r.Errors) > maxErrorRows {
			add(paraBlock{fmt.Sprintf("%d more frames with errors are listed in results.json.", len(r.Errors)-maxErrorRows)})
		}
	}
	return nil
}

// sceneKeyFigures returns one sentence per scene result for the report's
// opening summary.
func sceneKeyFigures(rs []*SceneResult) []string {
	var out []string
	for _, r := range rs {
		if s := r.Scores; s != nil {
			out = append(out, fmt.Sprintf("**%s** on %s: mAP %s%% over %d frames (%d items), count accuracy %s%%, %.3f false items per empty frame.",
				r.Model, r.Data, apCell(s.MAP), s.Frames, s.Truth, pct(s.CountAccuracy), s.FalsePerEmpty))
		}
	}
	return out
}
