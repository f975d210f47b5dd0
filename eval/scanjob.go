package eval

import (
	"encoding/json"
	"errors"
	"fmt"
	"image"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"text/tabwriter"
	"unicode"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/internal/safefile"
	"github.com/striate/striate/pipeline"
	"github.com/striate/striate/v1layer"
)

// ScanSource is one frame file to scan; a frame of a scene folder carries
// its ground truth (Scored), with classes numbered as the model's.
type ScanSource struct {
	File   string
	Folder string // the scene folder it belongs to; "" for a plain file
	W, H   int    // the size the scene folder's index gives; 0 for a plain file
	Truth  []datasets.SceneItem
	Scored bool
}

// IsSceneFolder reports whether path is a folder holding a scene index
// (datasets.SceneIndex).
func IsSceneFolder(path string) bool {
	st, err := os.Stat(filepath.Join(path, datasets.SceneIndex))
	return err == nil && !st.IsDir()
}

// ScanSources expands paths into the frames to scan, in order: a folder
// holding datasets.SceneIndex is a scene folder (its index is read and
// checked by datasets.ReadSceneFolder, its frames come in index order with
// their ground truth), any other folder is walked for images
// (datasets.ListImages) and a file is taken as given. With truth set every
// path must be a scene folder. A scene folder's class names are looked up
// among classes (the model's); a class its items use that the model does
// not know is an error naming the index. What a walk passes over (links
// that loop or break, devices) is returned in skipped.
func ScanSources(classes []string, truth bool, paths ...string) (out []ScanSource, skipped []datasets.Skipped, err error) {
	index := make(map[string]int, len(classes))
	for i, c := range classes {
		index[c] = i
	}
	for _, p := range paths {
		st, err := os.Stat(p)
		if err != nil {
			return nil, nil, fmt.Errorf("eval: %w", err)
		}
		if !st.IsDir() || (!truth && !IsSceneFolder(p)) {
			if truth {
				return nil, nil, fmt.Errorf("eval: %s is a file, not a scene folder; ground truth comes from a folder holding %s and its frames", p, datasets.SceneIndex)
			}
			files, sk, err := datasets.ListImages(p)
			skipped = append(skipped, sk...)
			if err != nil {
				return nil, nil, err
			}
			for _, f := range files {
				out = append(out, ScanSource{File: f})
			}
			continue
		}
		sf, err := datasets.ReadSceneFolder(p)
		if err != nil {
			return nil, nil, err
		}
		for i, fr := range sf.Frames {
			src := ScanSource{File: filepath.Join(p, filepath.FromSlash(fr.File)), Folder: p, W: fr.W, H: fr.H, Scored: true}
			for j, it := range fr.Items {
				name := sf.Classes[it.Class]
				c, ok := index[name]
				if !ok {
					return nil, nil, &datasets.SceneFolderError{Kind: datasets.ErrSceneUnknownClass, File: filepath.Join(p, datasets.SceneIndex),
						Field:  fmt.Sprintf("frames[%d].items[%d].class", i, j),
						Detail: fmt.Sprintf("%q is not one of the model's classes (%s)", name, strings.Join(classes, ", ")),
						Fix:    "scan with a model trained on these classes, or rename the class to the model's name for it"}
				}
				it.Class = c
				src.Truth = append(src.Truth, it)
			}
			out = append(out, src)
		}
	}
	return out, skipped, nil
}

// ScanJobConfig configures RunScan. Each zero field means its default.
type ScanJobConfig struct {
	Scan    pipeline.ScanConfig // the scanner; its zero value is the documented default
	Workers int                 // goroutines per frame; ≤ 0 means 1
	// Out is the folder the annotated frames go to (under ScanFrames, one
	// PNG per frame drawn by DrawScan) and the items as JSON lines
	// (ScanItemsFile); "" writes nothing.
	Out string
}

// Files RunScan writes under ScanJobConfig.Out.
const (
	ScanFrames    = "frames"
	ScanItemsFile = "items.jsonl"
)

// ScanFrame is what a scan found in one frame.
type ScanFrame struct {
	Source ScanSource
	W, H   int // the frame's size in pixels
	Result pipeline.ScanResult
	// Drawn is the annotated picture written under ScanJobConfig.Out ("" when
	// none).
	Drawn string
	pix   []float32 // the frame's grey pixels, for frames built in memory (the demo's belt); nil for files
}

// ScanJob is the outcome of RunScan.
type ScanJob struct {
	Classes []string
	Config  pipeline.ScanConfig // with every default filled in
	Frames  []ScanFrame         // the frames scanned, in order (skipped ones left out)
	Skipped int                 // files that could not be scanned
	// Scores are the scene metrics over the frames with ground truth (nil
	// when there are none).
	Scores  *SceneScores
	Folders []string // the scene folders scanned
	Written []string // files written under Out
	// Notes are lines for the person running the scan, such as settings
	// that differ from those the model's stored threshold was chosen with.
	Notes []string
}

// RunScan scans every source with a pipeline.Scanner of m: each frame is
// read by the guarded decoder after its declared size is checked against
// the scanner's limits (CheckFrameSize), before any pixel is decoded. A
// file that cannot be scanned (not an image, damaged, empty, too small or
// too large) is passed to skip and the others are still scanned; frames of
// a scene folder are all size-checked before the first scan, so a folder
// that cannot be scored fails at once. Each frame scanned is passed to emit
// in order; mon.Start counts frames. With cfg.Out set, the annotated
// frames and items.jsonl are written there, each file whole or not at all
// (internal/safefile), so an interrupted run never damages what an earlier
// one wrote. The scene metrics (ScoreScenes) cover the frames with ground
// truth. A scene folder whose index is the one the model's threshold was
// chosen on (pipeline.StoredScan.Index) is refused: its scores would not
// be test figures.
func RunScan(m *pipeline.Model, src []ScanSource, cfg ScanJobConfig, mon JobMonitor, skip func(error), emit func(*ScanFrame) error) (*ScanJob, error) {
	sc, err := pipeline.NewScanner(m, cfg.Scan)
	if err != nil {
		return nil, err
	}
	job := &ScanJob{Classes: m.Classes(), Config: sc.Config()}
	ih, iw := m.InputSize()
	for _, s := range src {
		if !s.Scored {
			continue
		}
		if err := CheckFrameSize(s.File, s.W, s.H, sc.MinSide(), ih, iw); err != nil {
			return nil, err
		}
		if len(job.Folders) == 0 || job.Folders[len(job.Folders)-1] != s.Folder {
			if err := checkNotValidation(m, s.Folder); err != nil {
				return nil, err
			}
			job.Folders = append(job.Folders, s.Folder)
		}
	}
	if st, ok := m.Scan(); ok && cfg.Scan.Threshold == 0 {
		if d := st.Differs(job.Config); d != nil {
			job.Notes = append(job.Notes, fmt.Sprintf("the model's threshold %.4f was chosen with other scan settings (%s differ); choose it again with striate train --scenes, or give --threshold",
				st.Config.Threshold, strings.Join(d, ", ")))
		}
	}
	if cfg.Out != "" {
		if err := os.MkdirAll(filepath.Join(cfg.Out, ScanFrames), 0o755); err != nil {
			return nil, fmt.Errorf("eval: scan output: %w", err)
		}
	}
	bar := mon.Start(len(src), "scan")
	defer bar.Done()
	var lines []byte
	var scored []FrameResult
	var pix []float32
	for i, s := range src {
		bar.Step(i, len(src), "scan "+filepath.Base(s.File))
		var f *ScanFrame
		f, pix, err = scanFile(sc, s, pix, ih, iw, cfg.Workers)
		if err != nil {
			if s.Scored {
				return nil, err // a scene folder's frame: its scores would be wrong
			}
			skip(err)
			job.Skipped++
			continue
		}
		if cfg.Out != "" {
			p := filepath.Join(cfg.Out, ScanFrames, fmt.Sprintf("%04d-%s.png", i, strings.TrimSuffix(filepath.Base(s.File), filepath.Ext(s.File))))
			img, err := DrawScan(pix, f.H, f.W, &f.Result, ScanDrawing{Classes: job.Classes, Truth: s.Truth, Scored: s.Scored})
			if err != nil {
				return nil, err
			}
			if err := safefile.Write(p, func(w io.Writer) error { return png.Encode(w, img) }); err != nil {
				return nil, fmt.Errorf("eval: %w", err)
			}
			f.Drawn = p
			job.Written = append(job.Written, p)
			line, err := ScanLine(f, job.Classes)
			if err != nil {
				return nil, err
			}
			lines = append(append(lines, line...), '\n')
		}
		if s.Scored {
			scored = append(scored, FrameResult{Truth: s.Truth, Found: Detections(f.Result.Items)})
		}
		job.Frames = append(job.Frames, *f)
		if err := emit(&job.Frames[len(job.Frames)-1]); err != nil {
			return nil, err
		}
	}
	bar.Step(len(src), len(src), "scan")
	if len(scored) > 0 {
		if job.Scores, err = ScoreScenes(scored, len(job.Classes)); err != nil {
			return nil, err
		}
	}
	if cfg.Out != "" {
		p := filepath.Join(cfg.Out, ScanItemsFile)
		if err := safefile.WriteBytes(p, lines); err != nil {
			return nil, fmt.Errorf("eval: %w", err)
		}
		job.Written = append(job.Written, p)
	}
	return job, nil
}

// CheckFrameSize checks a frame's declared size against what a scanner
// takes: at least minSide px a side (Scanner.MinSide, for a model whose
// input is ih×iw) and at most v1layer.MaxSide. The error names the file and
// the fix.
func CheckFrameSize(file string, w, h, minSide, ih, iw int) error {
	if w < minSide || h < minSide {
		return fmt.Errorf("eval: %s: frame %d×%d is smaller than %d×%d, the least the scanner takes (the model's input is %d×%d and the saliency map needs room around it); pad or enlarge the frame, or classify a single centred item as a whole", file, w, h, minSide, minSide, iw, ih)
	}
	if w > v1layer.MaxSide || h > v1layer.MaxSide {
		return fmt.Errorf("eval: %s: frame %d×%d is larger than the %d px side limit (v1layer.MaxSide); downscale it or cut it into tiles first", file, w, h, v1layer.MaxSide)
	}
	return nil
}

// scanFile reads, checks and scans one frame, decoding into pix (reused).
func scanFile(sc *pipeline.Scanner, s ScanSource, pix []float32, ih, iw, workers int) (*ScanFrame, []float32, error) {
	w, h, err := declaredSize(s.File)
	if err != nil {
		return nil, pix, err
	}
	if err := CheckFrameSize(s.File, w, h, sc.MinSide(), ih, iw); err != nil {
		return nil, pix, err
	}
	img, err := datasets.DecodeImageFile(s.File)
	if err != nil {
		return nil, pix, err
	}
	b := img.Bounds()
	if s.Scored && (b.Dx() != s.W || b.Dy() != s.H) {
		return nil, pix, &datasets.SceneFolderError{Kind: datasets.ErrSceneFrameBad, File: s.File,
			Detail: fmt.Sprintf("the image is %d×%d but %s says %d×%d", b.Dx(), b.Dy(), datasets.SceneIndex, s.W, s.H),
			Fix:    "correct width and height in " + datasets.SceneIndex}
	}
	pix = datasets.ToGray(pix, img, 0, 0)
	f := &ScanFrame{Source: s, W: b.Dx(), H: b.Dy()}
	if err := sc.Scan(&f.Result, pix, f.H, f.W, workers); err != nil {
		return nil, pix, fmt.Errorf("eval: %s: %w", s.File, err)
	}
	return f, pix, nil
}

// declaredSize reads an image file's header; a file that is not a readable
// image gets the guarded decoder's own error (an *datasets.ImageError
// naming the file).
func declaredSize(file string) (w, h int, err error) {
	f, err := os.Open(file)
	if err != nil {
		return 0, 0, fmt.Errorf("eval: %w", err)
	}
	cfg, _, cerr := image.DecodeConfig(f)
	f.Close()
	if cerr != nil {
		if _, err := datasets.DecodeImageFile(file); err != nil {
			return 0, 0, err
		}
		return 0, 0, fmt.Errorf("eval: %s: %w", file, cerr)
	}
	return cfg.Width, cfg.Height, nil
}

// scanLine is one line of ScanLine's JSON.
type scanLine struct {
	File   string         `json:"file"`
	Width  int            `json:"width"`
	Height int            `json:"height"`
	Items  []scanLineItem `json:"items"`
}

type scanLineItem struct {
	Class string  `json:"class"`
	Score float64 `json:"score"`
	Box   [4]int  `json:"box"`
}

// ScanLine returns one frame's items as a line of JSON (JSON lines, one
// frame per line, without the newline):
//
//	{"file":"belt/0007.png","width":128,"height":96,"items":[{"class":"trouser","score":0.9731,"box":[12,40,37,71]}]}
//
// Boxes are [x0, y0, x1, y1] in pixels of the frame, half-open (the item
// covers columns x0 … x1−1 and rows y0 … y1−1, as datasets.SceneItem);
// scores are the recogniser's probabilities rounded to 4 decimals; items
// come in fixation order, and a frame with none has "items": [].
func ScanLine(f *ScanFrame, classes []string) ([]byte, error) {
	l := scanLine{File: f.Source.File, Width: f.W, Height: f.H, Items: make([]scanLineItem, len(f.Result.Items))}
	for i, it := range f.Result.Items {
		l.Items[i] = scanLineItem{Class: className(classes, it.Class), Score: math.Round(float64(it.Score)*1e4) / 1e4, Box: it.Box}
	}
	b, err := json.Marshal(l)
	if err != nil {
		return nil, fmt.Errorf("eval: %s: %w", f.Source.File, err)
	}
	return b, nil
}

// ErrNoTruth is returned by ScanJob.Report when no frame came from a scene
// folder.
var ErrNoTruth = errors.New("eval: no frame with ground truth; a scan report needs a scene folder (a folder holding " + datasets.SceneIndex + ")")

// ScanText returns one frame's items as text for a terminal: a heading
// line with the file, its size and the item count, then one line per item
// in fixation order with its fixation number, class, score and box
// [x0 y0 x1 y1] (half-open pixels). A file name holding control characters
// is quoted, so every item stays on its own line.
func ScanText(f *ScanFrame, classes []string) string {
	var b strings.Builder
	name := f.Source.File
	if strings.ContainsFunc(name, unicode.IsControl) {
		name = strconv.Quote(name)
	}
	switch n := len(f.Result.Items); n {
	case 0:
		fmt.Fprintf(&b, "%s (%d×%d): no items\n", name, f.W, f.H)
	case 1:
		fmt.Fprintf(&b, "%s (%d×%d): 1 item\n", name, f.W, f.H)
	default:
		fmt.Fprintf(&b, "%s (%d×%d): %d items\n", name, f.W, f.H, n)
	}
	for _, it := range f.Result.Items {
		fmt.Fprintf(&b, "  fixation %d: %s %.4f %s\n", it.Fixation+1, className(classes, it.Class), it.Score, boxText(it.Box))
	}
	return b.String()
}

// SceneSummary returns the scene metrics as text for a terminal: the
// headline figures and a table of AP per class, percentages with two
// decimals.
func SceneSummary(s *SceneScores, classes []string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "scenes: %d frames, %d items; found %d, matched %d (precision %s%%, recall %s%%)\n",
		s.Frames, s.Truth, s.Found, s.Matched, pct(s.Precision), pct(s.Recall))
	fmt.Fprintf(&b, "mAP %s%%, count accuracy %s%%, recognition of items found %s%%, false items per empty frame %.3f (%d empty frames)\n",
		apCell(s.MAP), pct(s.CountAccuracy), pct(s.RecognitionAccuracy), s.FalsePerEmpty, s.EmptyFrames)
	tw := tabwriter.NewWriter(&b, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "class\titems\tfound\tmatched\tAP (%)\t")
	for c, ca := range s.PerClass {
		fmt.Fprintf(tw, "%s\t%d\t%d\t%d\t%s\t\n", className(classes, c), ca.Truth, ca.Found, ca.Matched, apCell(ca.AP))
	}
	fmt.Fprintf(tw, "mean (mAP)\t%d\t%d\t%d\t%s\t\n", s.Truth, s.Found, s.Matched, apCell(s.MAP))
	tw.Flush()
	return b.String()
}

// FrameWriter returns an emit function for RunScan that writes each frame
// to w: as a line of JSON (ScanLine) when jsonLines is set, else as
// ScanText.
func FrameWriter(w io.Writer, classes []string, jsonLines bool) func(*ScanFrame) error {
	return func(f *ScanFrame) error {
		if !jsonLines {
			_, err := io.WriteString(w, ScanText(f, classes))
			return err
		}
		line, err := ScanLine(f, classes)
		if err == nil {
			_, err = w.Write(append(line, '\n'))
		}
		return err
	}
}
