package eval

import (
	"bufio"
	"bytes"
	"encoding/binary"
	"encoding/json"
	"errors"
	"hash/crc32"
	"image"
	"image/color"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"sync"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
)

// beltItems returns n synthetic 28×28 items of three classes, bright on
// black: a ring, a flat bar and a tee, with random size and centre.
func beltItems(n int, seed uint64) *datasets.Set {
	r := rand.New(rand.NewPCG(seed, 0xbe17))
	s := &datasets.Set{Name: "belt items", H: 28, W: 28, Classes: []string{"ring", "bar", "tee"}}
	rect := func(dx, dy, hw, hh float64) float64 { return math.Max(math.Abs(dx)-hw, math.Abs(dy)-hh) }
	for i := range n {
		c := i % 3
		size := 7 + 3*r.Float64()
		ox, oy := 13.5+2*(r.Float64()-0.5), 13.5+2*(r.Float64()-0.5)
		for y := range 28 {
			for x := range 28 {
				dx, dy := float64(x)-ox, float64(y)-oy
				d := math.Abs(math.Hypot(dx, dy) - size) // ring
				switch c {
				case 1:
					d = rect(dx, dy, size, 2.5)
				case 2:
					d = math.Min(rect(dx, dy+size-1.5, size, 1.5), rect(dx, dy, 1.5, size))
				}
				s.Pix = append(s.Pix, uint8(255*math.Min(1, math.Max(0, 1.5-d))))
			}
		}
		s.Labels = append(s.Labels, c)
		s.N++
	}
	return s
}

var beltOnce struct {
	sync.Once
	m   *pipeline.Model
	err error
}

// beltModel is a tiny recogniser fitted once on 450 belt items.
func beltModel(t testing.TB) *pipeline.Model {
	t.Helper()
	beltOnce.Do(func() {
		cfg := pipeline.Config{Templates: []learn.TemplateConfig{}, Pool: pipeline.PoolConfig{Size: 4},
			Head: learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 30, ValFrac: -1}, HeadMinSteps: -1, Seed: 2}
		beltOnce.m, beltOnce.err = pipeline.Fit(cfg, beltItems(450, 1), pipeline.FitOptions{Workers: 2})
	})
	if beltOnce.err != nil {
		t.Fatal(beltOnce.err)
	}
	return beltOnce.m
}

// beltFolder writes n scenes of belt items (other items than the model's)
// as a scene folder under a new temporary folder and returns its path.
func beltFolder(t testing.TB, n int, seed uint64) string {
	t.Helper()
	b, err := datasets.NewSceneBuilder(beltItems(150, seed+100), datasets.SceneConfig{W: 96, H: 96, MaxItems: 3, EmptyFrac: 0.2, Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "belt")
	if err := datasets.WriteSceneFolder(dir, []string{"ring", "bar", "tee"}, b.Scenes(0, n)); err != nil {
		t.Fatal(err)
	}
	return dir
}

// quietMonitor counts what a job reports.
type quietMonitor struct{ steps *int }

func (m quietMonitor) Start(int, string) JobProgress { return quietBar(m) }
func (quietMonitor) Logf(string, ...any)             {}

type quietBar quietMonitor

func (b quietBar) Step(int, int, string) {
	if b.steps != nil {
		*b.steps++
	}
}
func (quietBar) Done() {}

func writePNG(t testing.TB, path string, img image.Image) {
	t.Helper()
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// A scene folder scanned with --out: every frame gets a line in
// items.jsonl and an annotated PNG, the scores are ScoreScenes of the same
// items, and the report holds the AP table, the precision-recall curves
// and the page of hits and misses.
func TestRunScanSceneFolderReport(t *testing.T) {
	m := beltModel(t)
	dir := beltFolder(t, 10, 3)
	src, _, err := ScanSources(m.Classes(), true, dir)
	if err != nil {
		t.Fatal(err)
	}
	out := t.TempDir()
	steps := 0
	var emitted []string
	job, err := RunScan(m, src, ScanJobConfig{Workers: 2, Out: out}, quietMonitor{&steps}, func(err error) { t.Errorf("skipped: %v", err) },
		func(f *ScanFrame) error { emitted = append(emitted, f.Source.File); return nil })
	if err != nil {
		t.Fatal(err)
	}
	if len(job.Frames) != 10 || len(emitted) != 10 || job.Skipped != 0 || steps < 10 {
		t.Fatalf("%d frames, %d emitted, %d skipped, %d progress steps; want 10, 10, 0, ≥ 10", len(job.Frames), len(emitted), job.Skipped, steps)
	}
	frames := make([]FrameResult, len(job.Frames))
	for i, f := range job.Frames {
		frames[i] = FrameResult{Truth: f.Source.Truth, Found: Detections(f.Result.Items)}
		st, err := os.Stat(f.Drawn)
		if err != nil || st.Size() == 0 {
			t.Errorf("frame %d: annotated picture %q: %v", i, f.Drawn, err)
		}
	}
	want, err := ScoreScenes(frames, 3)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(job.Scores, want) {
		t.Errorf("job scores %+v differ from ScoreScenes of its items %+v", job.Scores, want)
	}
	t.Logf("mAP %.3f, %d of %d items matched, count accuracy %.3f", want.MAP, want.Matched, want.Truth, want.CountAccuracy)
	// Rings, bars and tees on a black belt are easy: 0.5 is a smoke floor
	// that only a broken scan misses (common practice for a smoke floor).
	if want.MAP < 0.5 {
		t.Errorf("mAP %.3f; want ≥ 0.5 on clean belt scenes", want.MAP)
	}
	raw, err := os.ReadFile(filepath.Join(out, ScanItemsFile))
	if err != nil {
		t.Fatal(err)
	}
	if n := bytes.Count(raw, []byte("\n")); n != 10 {
		t.Errorf("items.jsonl has %d lines; want 10", n)
	}

	rep, err := job.Report("scan test", "striate scan", "belt")
	if err != nil {
		t.Fatal(err)
	}
	rdir := filepath.Join(out, "report")
	if _, err := WriteReport(rdir, rep); err != nil {
		t.Fatal(err)
	}
	md, err := os.ReadFile(filepath.Join(rdir, ReportMarkdown))
	if err != nil {
		t.Fatal(err)
	}
	table := "| class | items | found | matched | AP (%) | non-interpolated AP (%) |"
	if !strings.Contains(string(md), table) {
		t.Errorf("report.md has no AP table %q:\n%s", table, md)
	}
	for c, name := range m.Classes() {
		row := "| " + name + " | " + itoa(want.PerClass[c].Truth) + " | "
		if !strings.Contains(string(md), row) {
			t.Errorf("report.md has no AP row starting %q", row)
		}
	}
	if !strings.Contains(string(md), "| mean (mAP) | ") || !strings.Contains(string(md), "Hits and misses") {
		t.Errorf("report.md lacks the mAP row or the hits and misses:\n%s", md)
	}
	for _, f := range []string{ReportHTML, ReportJSON, "figures/precision-recall-belt.png", "figures/hits-and-misses-belt.png"} {
		if st, err := os.Stat(filepath.Join(rdir, f)); err != nil || st.Size() == 0 {
			t.Errorf("report file %s: %v", f, err)
		}
	}
	var back Report
	js, _ := os.ReadFile(filepath.Join(rdir, ReportJSON))
	if err := json.Unmarshal(js, &back); err != nil || len(back.Scenes) != 1 || back.Scenes[0].Scores.Truth != want.Truth {
		t.Errorf("results.json: %v, scenes %+v", err, back.Scenes)
	}
}

func itoa(n int) string { b, _ := json.Marshal(n); return string(b) }

// JSON lines (jsonlines.org: one JSON value per line, UTF-8, '\n'
// between): each line decodes on its own into exactly the documented
// fields, boxes are the items' half-open pixel boxes, and a frame without
// items has "items": [] rather than null.
func TestScanLineFormat(t *testing.T) {
	f := &ScanFrame{Source: ScanSource{File: "belt/a\tb.png"}, W: 128, H: 96, Result: pipeline.ScanResult{Items: []pipeline.ScanItem{
		{Class: 2, Score: 0.987654, Box: [4]int{12, 40, 37, 71}}, {Class: 0, Score: 0.5, Box: [4]int{0, 0, 28, 28}}}}}
	empty := &ScanFrame{Source: ScanSource{File: "belt/empty.png"}, W: 64, H: 64}
	var buf bytes.Buffer
	for _, fr := range []*ScanFrame{f, empty} {
		line, err := ScanLine(fr, []string{"ring", "bar", "tee"})
		if err != nil {
			t.Fatal(err)
		}
		if bytes.ContainsAny(line, "\n\r") {
			t.Fatalf("line holds a line break: %s", line)
		}
		buf.Write(append(line, '\n'))
	}
	sc := bufio.NewScanner(&buf)
	var got []map[string]any
	for sc.Scan() {
		var v map[string]any
		dec := json.NewDecoder(bytes.NewReader(sc.Bytes()))
		dec.UseNumber()
		if err := dec.Decode(&v); err != nil {
			t.Fatalf("line %q: %v", sc.Text(), err)
		}
		got = append(got, v)
	}
	if len(got) != 2 {
		t.Fatalf("%d lines; want 2", len(got))
	}
	for _, v := range got {
		keys := []string{}
		for k := range v {
			keys = append(keys, k)
		}
		if len(keys) != 4 || v["file"] == nil || v["width"] == nil || v["height"] == nil || v["items"] == nil {
			t.Errorf("line fields %v; want file, width, height, items", keys)
		}
	}
	if got[0]["file"] != "belt/a\tb.png" || got[0]["width"] != json.Number("128") {
		t.Errorf("first line %v", got[0])
	}
	items := got[0]["items"].([]any)
	first := items[0].(map[string]any)
	if first["class"] != "tee" || first["score"] != json.Number("0.9877") || !reflect.DeepEqual(first["box"], []any{json.Number("12"), json.Number("40"), json.Number("37"), json.Number("71")}) {
		t.Errorf("first item %v; want tee, 0.9877, [12 40 37 71]", first)
	}
	if e, ok := got[1]["items"].([]any); !ok || len(e) != 0 {
		t.Errorf("empty frame's items %#v; want []", got[1]["items"])
	}
}

// DrawScan puts a box's outline on the picture pixels inside the scaled
// box, leaves the frame's pixels elsewhere as they were (enlarged by
// nearest neighbour), and marks a miss dashed in MissColor on a scored
// frame.
func TestDrawScanBoxPixels(t *testing.T) {
	const h, w, s = 60, 80, 3
	pix := make([]float32, h*w)
	for i := range pix {
		pix[i] = float32(i%w) / float32(w) // a left-to-right ramp
	}
	res := &pipeline.ScanResult{Items: []pipeline.ScanItem{{Class: 1, Score: 0.9, Box: [4]int{20, 25, 45, 50}}}}
	img, err := DrawScan(pix, h, w, res, ScanDrawing{Classes: []string{"ring", "bar"}, Scale: s})
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != w*s || b.Dy() != h*s {
		t.Fatalf("picture %v; want %d×%d", b, w*s, h*s)
	}
	c := ClassColor(1)
	thick := max(1, s/2)
	// The bottom and both sides of the box (the label covers the top).
	for x := 20 * s; x < 45*s; x++ {
		if got := img.RGBAAt(x, 50*s-1); got != c {
			t.Fatalf("bottom edge pixel (%d,%d) = %v; want the class colour %v", x, 50*s-1, got, c)
		}
	}
	for y := 30 * s; y < 50*s; y++ {
		if img.RGBAAt(20*s, y) != c || img.RGBAAt(45*s-1, y) != c || (thick > 1 && img.RGBAAt(20*s+thick-1, y) != c) {
			t.Fatalf("side pixels at row %d are not the class colour", y)
		}
	}
	grey := func(x, y int) color.RGBA {
		g := uint8(math.Round(255 * float64(pix[(y/s)*w+x/s])))
		return color.RGBA{g, g, g, 0xff}
	}
	for _, p := range [][2]int{{20*s + thick, 40 * s}, {30 * s, 50*s - 1 - thick}, {20*s - 1, 40 * s}, {45 * s, 40 * s}, {30 * s, 50 * s}, {5, 170}} {
		if got := img.RGBAAt(p[0], p[1]); got != grey(p[0], p[1]) {
			t.Errorf("pixel %v = %v; want the frame's grey %v (outside the outline)", p, got, grey(p[0], p[1]))
		}
	}
	// Scored: the item matches nothing (a false item), the truth elsewhere
	// is a miss, drawn dashed.
	img, err = DrawScan(pix, h, w, res, ScanDrawing{Scale: s, Scored: true, Truth: []datasets.SceneItem{{Box: [4]int{60, 30, 75, 55}, Class: 0}}})
	if err != nil {
		t.Fatal(err)
	}
	if got := img.RGBAAt(30*s, 50*s-1); got != FalseColor {
		t.Errorf("false item's edge %v; want FalseColor", got)
	}
	on, off := 0, 0
	for y := 35 * s; y < 55*s; y++ {
		if img.RGBAAt(75*s-1, y) == MissColor {
			on++
		} else {
			off++
		}
	}
	if on == 0 || off == 0 {
		t.Errorf("missed item's right side: %d pixels in MissColor, %d not; want a dashed line", on, off)
	}
	if _, err := DrawScan(pix[:10], h, w, res, ScanDrawing{}); err == nil {
		t.Error("DrawScan of a short frame: no error")
	}
}

// Bad files are skipped with an error naming the file and the fix, before
// their pixels are decoded; flat and all-black frames are scanned and hold
// no items (none invented); the good frame is still scanned.
func TestRunScanBadFiles(t *testing.T) {
	m := beltModel(t)
	dir := t.TempDir()
	scenes := beltFolder(t, 1, 4)
	good, err := os.ReadFile(filepath.Join(scenes, datasets.FrameName(0)))
	if err != nil {
		t.Fatal(err)
	}
	os.WriteFile(filepath.Join(dir, "a-good.png"), good, 0o644)
	grey := image.NewGray(image.Rect(0, 0, 80, 70))
	for i := range grey.Pix {
		grey.Pix[i] = 140
	}
	writePNG(t, filepath.Join(dir, "b-black.png"), image.NewGray(image.Rect(0, 0, 64, 64)))
	writePNG(t, filepath.Join(dir, "c-grey.png"), grey)
	writePNG(t, filepath.Join(dir, "d-small.png"), image.NewGray(image.Rect(0, 0, 40, 100)))
	os.WriteFile(filepath.Join(dir, "e-label.png"), []byte("rail 3, size M"), 0o644)
	os.WriteFile(filepath.Join(dir, "f-huge.png"), pngHeader(20000, 60), 0o644)
	os.WriteFile(filepath.Join(dir, "g-empty.png"), pngHeader(0, 0), 0o644)
	src, _, err := ScanSources(m.Classes(), false, dir)
	if err != nil {
		t.Fatal(err)
	}
	var skipped []string
	frames := map[string]*ScanFrame{}
	job, err := RunScan(m, src, ScanJobConfig{}, quietMonitor{}, func(err error) { skipped = append(skipped, err.Error()) },
		func(f *ScanFrame) error { frames[filepath.Base(f.Source.File)] = f; return nil })
	if err != nil {
		t.Fatal(err)
	}
	if job.Skipped != 4 || len(frames) != 3 || job.Scores != nil {
		t.Fatalf("skipped %d (%q), scanned %d, scores %v; want 4, 3, none", job.Skipped, skipped, len(frames), job.Scores)
	}
	if len(frames["a-good.png"].Result.Items) == 0 {
		t.Error("the good frame: no items")
	}
	for _, n := range []string{"b-black.png", "c-grey.png"} {
		if f := frames[n]; f == nil || len(f.Result.Items) != 0 || len(f.Result.Fixations) != 0 {
			t.Errorf("%s: %+v; want scanned with no items and no fixations", n, f)
		}
	}
	for i, want := range [][2]string{{"d-small.png", "smaller than 57×57"}, {"e-label.png", "not a PNG"}, {"f-huge.png", "8192 px side limit"}, {"g-empty.png", "damaged"}} {
		if !strings.Contains(skipped[i], want[0]) || !strings.Contains(skipped[i], want[1]) {
			t.Errorf("skip %d: %q; want it to name %s and say %q", i, skipped[i], want[0], want[1])
		}
	}
}

// pngHeader is a PNG signature and IHDR chunk declaring w×h 8-bit grey and
// no image data (PNG specification, ISO/IEC 15948 §11.2.2).
func pngHeader(w, h uint32) []byte {
	ihdr := binary.BigEndian.AppendUint32(binary.BigEndian.AppendUint32([]byte("IHDR"), w), h)
	ihdr = append(ihdr, 8, 0, 0, 0, 0)
	b := append([]byte("\x89PNG\r\n\x1a\n"), 0, 0, 0, 13)
	return binary.BigEndian.AppendUint32(append(b, ihdr...), crc32.ChecksumIEEE(ihdr))
}

// Scene folders with a missing, malformed or dangling index, or classes
// the model does not know, fail before any scan with an error naming the
// file; a scene folder whose frame is too small fails before anything is
// written, so an earlier run's output is kept.
func TestScanSourcesBadSceneFolders(t *testing.T) {
	classes := []string{"ring", "bar", "tee"}
	plain := t.TempDir()
	writePNG(t, filepath.Join(plain, "x.png"), image.NewGray(image.Rect(0, 0, 64, 64)))
	if _, _, err := ScanSources(classes, true, plain); !errors.Is(err, datasets.ErrSceneIndexMissing) || !strings.Contains(err.Error(), filepath.Join(plain, datasets.SceneIndex)) {
		t.Errorf("no index, truth wanted: %v", err)
	}
	if src, _, err := ScanSources(classes, false, plain); err != nil || len(src) != 1 || src[0].Scored {
		t.Errorf("a plain folder without truth: %v, %+v; want one unscored frame", err, src)
	}
	bad := beltFolder(t, 2, 5)
	os.WriteFile(filepath.Join(bad, datasets.SceneIndex), []byte(`{"layout": "striate scene folder", "version": 1,`), 0o644)
	if _, _, err := ScanSources(classes, false, bad); !errors.Is(err, datasets.ErrSceneIndexMalformed) {
		t.Errorf("malformed index: %v", err)
	}
	dangling := beltFolder(t, 2, 6)
	os.Remove(filepath.Join(dangling, datasets.FrameName(1)))
	if _, _, err := ScanSources(classes, false, dangling); !errors.Is(err, datasets.ErrSceneFrameMissing) || !strings.Contains(err.Error(), datasets.FrameName(1)) {
		t.Errorf("missing frame: %v", err)
	}
	other := beltFolder(t, 3, 7)
	if _, _, err := ScanSources([]string{"shirt", "sock", "shoe"}, false, other); !errors.Is(err, datasets.ErrSceneUnknownClass) || !strings.Contains(err.Error(), "model's classes") {
		t.Errorf("classes unknown to the model: %v", err)
	}

	m := beltModel(t)
	b, err := datasets.NewSceneBuilder(beltItems(30, 9), datasets.SceneConfig{W: 40, H: 40, MaxScale: 1, Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	small := filepath.Join(t.TempDir(), "small")
	if err := datasets.WriteSceneFolder(small, classes, b.Scenes(0, 2)); err != nil {
		t.Fatal(err)
	}
	src, _, err := ScanSources(m.Classes(), true, small)
	if err != nil {
		t.Fatal(err)
	}
	out := t.TempDir()
	before := []byte("{\"file\":\"earlier run\"}\n")
	os.WriteFile(filepath.Join(out, ScanItemsFile), before, 0o644)
	_, err = RunScan(m, src, ScanJobConfig{Out: out}, quietMonitor{}, func(error) {}, func(*ScanFrame) error { return nil })
	if err == nil || !strings.Contains(err.Error(), datasets.FrameName(0)) || !strings.Contains(err.Error(), "smaller than") {
		t.Errorf("scene folder of 40×40 frames: %v; want an error naming the frame", err)
	}
	if got, _ := os.ReadFile(filepath.Join(out, ScanItemsFile)); !bytes.Equal(got, before) {
		t.Errorf("items.jsonl of the earlier run became %q", got)
	}
	if _, err := os.Stat(filepath.Join(out, ScanFrames)); err == nil {
		t.Error("the failed run created the frames folder")
	}
}

// The report's AP table on a hand-worked case. Class ring: two items, and
// three found items ranked 0.95 (false), 0.9 (hit), 0.7 (hit), so
// precision 0, 1/2, 2/3 at recall 0, 1/2, 1. The all-point interpolated AP
// of the VOC2010 devkit (VOCap; Everingham et al. 2010) is
// ½·max(½, ⅔) + ½·⅔ = ⅔ = 66.67%; the non-interpolated Σ ΔR·P is
// ½·½ + ½·⅔ = 7/12 = 58.33%. Class bar has no items (AP undefined, "—"),
// so mAP is ring's AP; a bar found on the empty frame is one false item per
// empty frame; one frame in three has the right count.
func TestScanReportHandWorkedAP(t *testing.T) {
	dir := t.TempDir()
	var frames []ScanFrame
	for i, items := range [][]pipeline.ScanItem{
		{{Class: 0, Score: 0.95, Box: [4]int{40, 40, 60, 60}}, {Class: 0, Score: 0.9, Box: [4]int{10, 10, 30, 30}, Fixation: 1}},
		{{Class: 0, Score: 0.7, Box: [4]int{5, 5, 25, 25}}},
		{{Class: 1, Score: 0.6, Box: [4]int{0, 0, 20, 20}}},
	} {
		p := filepath.Join(dir, datasets.FrameName(i))
		writePNG(t, p, image.NewGray(image.Rect(0, 0, 64, 64)))
		truth := [][]datasets.SceneItem{{{Box: [4]int{10, 10, 30, 30}}}, {{Box: [4]int{5, 5, 25, 25}}}, nil}[i]
		frames = append(frames, ScanFrame{Source: ScanSource{File: p, Folder: dir, W: 64, H: 64, Truth: truth, Scored: true}, W: 64, H: 64,
			Result: pipeline.ScanResult{Items: items, Fixations: make([]pipeline.Fixation, 2)}})
	}
	fr := make([]FrameResult, len(frames))
	for i, f := range frames {
		fr[i] = FrameResult{Truth: f.Source.Truth, Found: Detections(f.Result.Items)}
	}
	scores, err := ScoreScenes(fr, 3)
	if err != nil {
		t.Fatal(err)
	}
	job := &ScanJob{Classes: []string{"ring", "bar", "tee"}, Frames: frames, Scores: scores, Folders: []string{dir}, Config: pipeline.ScanConfig{Threshold: 0.5}}
	rep, err := job.Report("hand-worked", "", "m")
	if err != nil {
		t.Fatal(err)
	}
	out := t.TempDir()
	if _, err := WriteReport(out, rep); err != nil {
		t.Fatal(err)
	}
	md, _ := os.ReadFile(filepath.Join(out, ReportMarkdown))
	for _, row := range []string{"| ring | 2 | 3 | 2 | 66.67 | 58.33 |", "| bar | 0 | 1 | 0 | — | — |", "| tee | 0 | 0 | 0 | — | — |", "| mean (mAP) | 2 | 4 | 2 | 66.67 |  |",
		"| 3 | 2 | 4 | 2 | 50.00 | 100.00 | 66.67 | 33.33 | 100.00 | 1 | 1.000 | 0.500 |",
		"| frame-000000.png | 1 |  | ring 0.95 [40 40 60 60] |", "| frame-000002.png | 0 |  | bar 0.60 [0 0 20 20] |"} {
		if !strings.Contains(string(md), row) {
			t.Errorf("report.md lacks %q:\n%s", row, md)
		}
	}
	if strings.Contains(string(md), "| frame-000001.png") {
		t.Error("the frame without errors is listed among the errors")
	}
	var back struct {
		Scenes []struct {
			Scores struct {
				MAP      *float64
				PerClass []struct{ AP *float64 }
			}
		}
	}
	js, _ := os.ReadFile(filepath.Join(out, ReportJSON))
	if err := json.Unmarshal(js, &back); err != nil || len(back.Scenes) != 1 {
		t.Fatalf("results.json: %v", err)
	}
	if s := back.Scenes[0].Scores; s.MAP == nil || math.Abs(*s.MAP-2.0/3) > 1e-12 || s.PerClass[0].AP == nil || s.PerClass[1].AP != nil {
		t.Errorf("results.json scores: mAP %v, AP %+v; want 2/3 and null for the class without items", s.MAP, s.PerClass)
	}
}
