package eval

import (
	"bytes"
	"encoding/json"
	"flag"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/v1layer"
)

var reportDir = flag.String("reportdir", "", "also write the sample report to this folder (to look at it)")

// sampleReport builds a report from the committed prediction file and the
// test fakes: two "models" on one data set (the second with its
// probabilities sharpened, so it differs), a six-kind robustness sweep, a
// label-efficiency curve, an invariance probe and speed figures.
func sampleReport(t *testing.T) *Report {
	p := loadPredictions(t)
	m1, err := Score(p.Labels, p.Probs, p.Classes, MetricsConfig{})
	if err != nil {
		t.Fatal(err)
	}
	sharp := make([][]float32, len(p.Probs))
	for i, row := range p.Probs {
		s := make([]float32, len(row))
		var sum float64
		for c, v := range row {
			x := math.Pow(float64(v), 3)
			if c == p.Labels[i] && i%3 == 0 {
				x *= 4
			}
			s[c] = float32(x)
			sum += x
		}
		for c := range s {
			s[c] = float32(float64(s[c]) / sum)
		}
		sharp[i] = s
	}
	m2, err := Score(p.Labels, sharp, p.Classes, MetricsConfig{})
	if err != nil {
		t.Fatal(err)
	}
	cmp, err := Compare("hand-set", "learned", p.Labels, Classify(p.Probs), Classify(sharp), CompareConfig{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	test := twoLevelData(400, 4, 4, 0.03)
	var conds []Condition
	units := map[string]string{"noise": "σ, pixel units", "shift": "px", "rotate": "degrees", "scale": "factor − 1", "blur": "σ, px", "contrast": "1 − factor"}
	for _, kind := range []string{"noise", "shift", "rotate", "scale", "blur", "contrast"} {
		conds = append(conds, Condition{Kind: kind, Unit: units[kind], Level: 0})
		for _, s := range []float64{0.05, 0.1, 0.2} {
			conds = append(conds, Condition{Kind: kind, Unit: units[kind], Level: s, P: noiseP{s}})
		}
	}
	r1, err := RobustnessSweep("hand-set", meanPredictor{0.5}, test, conds, RobustnessConfig{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	r2, err := RobustnessSweep("learned", meanPredictor{0.51}, test, conds, RobustnessConfig{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	train := gaussData(120, 4, 8, 1.2, 1)
	gtest := gaussData(200, 4, 8, 1.2, 2)
	fit := func(idx []int) (Predictor, error) { return fitCentroids(train, idx), nil }
	l1, err := LabelEfficiency("hand-set", fit, train.Labels, gtest, LabelConfig{PerClass: []int{1, 2, 5, 10, 20, 50, 100}, Repeats: 2})
	if err != nil {
		t.Fatal(err)
	}
	l2, err := LabelEfficiency("learned", fit, train.Labels, gtest, LabelConfig{PerClass: []int{1, 2, 5, 10, 20, 50, 100}, Seed: 7})
	if err != nil {
		t.Fatal(err)
	}
	inv, err := Invariance(fakeCells(8), InvarianceConfig{Wavelengths: []float64{4, 8}, Orientations: 4})
	if err != nil {
		t.Fatal(err)
	}
	chans := []v1layer.Channel{{Kind: v1layer.KindGabor}, {Kind: v1layer.KindGabor, Phase: math.Pi / 2},
		{Kind: v1layer.KindRectified}, {Kind: v1layer.KindEnergy}}
	for i := range chans {
		chans[i].Wavelength = 8
	}
	hand, err := v1layer.GaborBank(v1layer.GaborConfig{})
	if err != nil {
		t.Fatal(err)
	}
	learned := &v1layer.Bank{}
	for i, lam := range []float64{4, 5, 6, 8, 10, 12} {
		e, o := quadPair(lam, 15)
		for j, k := range [][]float64{e, o} {
			w := make([]float32, len(k))
			for p, v := range k {
				w[p] = float32(v)
			}
			learned.Kernels = append(learned.Kernels, v1layer.Kernel{Size: 15, W: w,
				Meta: v1layer.Channel{Kind: v1layer.KindLearned, Wavelength: lam, Pair: 2*i + 1 - j}})
		}
	}
	suite, right := knownSuite()
	st := indexedSet(40, 4, 4, 4)
	s1, err := ScoreSuite("hand-set", subsetPredictor{4, right}, st, suite, SuiteConfig{})
	if err != nil {
		t.Fatal(err)
	}
	right2 := map[int]int{}
	for k, v := range right {
		right2[k] = max(0, v-3*(k%3))
	}
	s2, err := ScoreSuite("learned", subsetPredictor{4, right2}, st, suite, SuiteConfig{})
	if err != nil {
		t.Fatal(err)
	}
	peer, err := ParsePeer([]byte(peerJSON(suite, right, 40, datasets.SuiteSeed)), "testdata/peer/lenet5_indexed.json", "")
	if err != nil {
		t.Fatal(err)
	}
	if err := s1.SetPeer(peer); err != nil {
		t.Fatal(err)
	}
	// The whole development suite on 28×28 quadrant images, with a peer
	// made of a second recognizer's figures, as the report shows a real run.
	qs := quadrantSet(32)
	q1, err := ScoreSuite("hand-set", quadrantPredictor{}, qs, datasets.DevelopmentSuite(), SuiteConfig{})
	if err != nil {
		t.Fatal(err)
	}
	q2, err := ScoreSuite("peer", blurredQuadrants{}, qs, datasets.DevelopmentSuite(), SuiteConfig{})
	if err != nil {
		t.Fatal(err)
	}
	qp, err := ParsePeer(peerFileOf(q2), "testdata/peer/lenet5_quadrants.json", "")
	if err != nil {
		t.Fatal(err)
	}
	if err := q1.SetPeer(qp); err != nil {
		t.Fatal(err)
	}
	return &Report{
		Suites:  []*SuiteResult{s1, s2, q1},
		Banks:   []BankPanel{{Name: "hand-set", Bank: hand}, {Name: "learned", Bank: learned}},
		Title:   "Sample report | garment-sorting station",
		Created: time.Date(2026, 12, 1, 12, 0, 0, 0, time.UTC),
		Summary: "A **synthetic** report built by the eval tests from `predictions.json` and test fakes.",
		Command: "go test ./eval -run TestWriteReport",
		Config:  map[string]any{"hand-set": map[string]int{"orientations": 4}, "learned": map[string]int{"atoms": 64}},
		Data: []Provenance{{Name: "garments", Source: "/srv/depot/intake/2026-11/garments-test-images-idx3-ubyte.gz + /srv/depot/intake/2026-11/garments-test-labels-idx1-ubyte.gz",
			TrainName: "garments-train", Train: 6000, Test: len(p.Labels), H: 28, W: 28, Classes: p.Classes, Note: "synthetic predictions"}},
		Models: []ModelResult{
			{Name: "hand-set", Data: "garments", Description: "Gabor bank", TrainSeconds: 12.5, Metrics: m1,
				Speed: &Speed{Images: 300, Workers: 2, ExtractPerSec: 4100, PredictPerSec: 3900, LatencyP50: 0.41, LatencyP99: 0.93, HeapPeak: 48 << 20, ModelBytes: 123456}},
			{Name: "learned", Data: "garments", Metrics: m2},
			{Name: "hand-set", Data: "garments-again", Description: "Gabor bank", Metrics: m1},
		},
		Comparisons: []*Comparison{cmp},
		Robustness:  []*Robustness{r1, r2},
		Labels:      []*LabelCurve{l1, l2},
		Invariance:  []InvarianceResult{{Model: "test cells", Channels: chans, Rows: inv}},
		Notes:       []string{"Numbers here are synthetic.", "A `code` note."},
	}
}

// blurredQuadrants is quadrantPredictor blind to a band across the middle,
// a second recognizer that differs from the first under shifts and warps.
type blurredQuadrants struct{}

func (blurredQuadrants) NumClasses() int { return 4 }

func (blurredQuadrants) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	cut := make([][]float32, len(imgs))
	for j, im := range imgs {
		c := append([]float32(nil), im...)
		for y := h/2 - 2; y < h/2+2; y++ {
			for x := range w {
				c[y*w+x] = 0
			}
		}
		cut[j] = c
	}
	return quadrantPredictor{}.PredictBatch(cut, h, w, workers)
}

// peerFileOf writes r's accuracies in the layout of testdata/peer/lenet5.py
// (one seed).
func peerFileOf(r *SuiteResult) []byte {
	type cond struct {
		Name     string    `json:"name"`
		Group    string    `json:"group"`
		Kind     string    `json:"kind"`
		Unit     string    `json:"unit"`
		Level    float64   `json:"level"`
		Accuracy []float64 `json:"accuracy"`
		Mean     float64   `json:"mean"`
	}
	f := struct {
		Generator  string `json:"generator"`
		Dataset    string `json:"dataset"`
		SuiteSeed  uint64 `json:"suite_seed"`
		Seeds      []int  `json:"seeds"`
		Conditions []cond `json:"conditions"`
	}{"eval tests", r.Data, r.Seed, []int{0}, []cond{{Name: "clean", Group: "clean", Accuracy: []float64{r.Clean.Accuracy}, Mean: r.Clean.Accuracy}}}
	for _, p := range r.Points {
		f.Conditions = append(f.Conditions, cond{p.Name, p.Group, p.Kind, p.Unit, p.Level, []float64{p.Accuracy}, p.Accuracy})
	}
	b, err := json.Marshal(f)
	if err != nil {
		panic(err)
	}
	return b
}

// parseMarkdownTables returns every table in md as header + rows.
func parseMarkdownTables(md string) [][][]string {
	var tables [][][]string
	var cur [][]string
	split := func(line string) []string {
		line = strings.TrimSpace(line)
		line = strings.TrimPrefix(strings.TrimSuffix(line, "|"), "|")
		// Cells escape a literal '|' as \|.
		var out []string
		var b strings.Builder
		for i := 0; i < len(line); i++ {
			if line[i] == '\\' && i+1 < len(line) && line[i+1] == '|' {
				b.WriteByte('|')
				i++
				continue
			}
			if line[i] == '|' {
				out = append(out, strings.TrimSpace(b.String()))
				b.Reset()
				continue
			}
			b.WriteByte(line[i])
		}
		return append(out, strings.TrimSpace(b.String()))
	}
	for _, line := range strings.Split(md, "\n") {
		if strings.HasPrefix(line, "|") {
			if strings.HasPrefix(line, "|---") {
				continue
			}
			cur = append(cur, split(line))
			continue
		}
		if cur != nil {
			tables = append(tables, cur)
			cur = nil
		}
	}
	return tables
}

func TestWriteReport(t *testing.T) {
	r := sampleReport(t)
	dir := t.TempDir()
	if *reportDir != "" {
		dir = *reportDir
	}
	files, err := WriteReport(dir, r)
	if err != nil {
		t.Fatal(err)
	}
	var pngs []string
	for _, f := range files {
		if strings.HasSuffix(f, ".png") {
			pngs = append(pngs, f)
			b, err := os.ReadFile(f)
			if err != nil {
				t.Fatal(err)
			}
			img, err := png.Decode(bytes.NewReader(b))
			if err != nil {
				t.Fatalf("%s: %v", f, err)
			}
			if s := img.Bounds().Size(); s.X < 400 || s.Y < 300 {
				t.Errorf("%s is only %v px", f, s)
			}
		}
	}
	// per-class + reliability (2 data sets), confusion ×3, robustness, suite kinds and curves ×2, labels, invariance, mosaics
	if len(pngs) != 15 {
		t.Errorf("%d figures: %v; want 15", len(pngs), pngs)
	}

	md, err := os.ReadFile(filepath.Join(dir, ReportMarkdown))
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range pngs {
		if !strings.Contains(string(md), "("+ReportFigures+"/"+filepath.Base(p)+")") {
			t.Errorf("report.md does not show %s", filepath.Base(p))
		}
	}
	// The accuracy table parses and carries the scores.
	tables := parseMarkdownTables(string(md))
	var acc [][]string
	for _, tb := range tables {
		if len(tb) > 0 && tb[0][0] == "model" && len(tb[0]) > 3 && tb[0][3] == "accuracy (%)" {
			acc = tb
		}
	}
	if len(acc) != 4 {
		t.Fatalf("accuracy table %v; want header + 3 rows", acc)
	}
	for i, m := range r.Models {
		// Two decimals of a percentage: off by at most half a unit of the last digit.
		got, err := strconv.ParseFloat(acc[i+1][3], 64)
		if err != nil || math.Abs(got-100*m.Metrics.Accuracy) > 0.005+1e-9 {
			t.Errorf("table accuracy of %s = %q; want %.2f", m.Name, acc[i+1][3], 100*m.Metrics.Accuracy)
		}
	}
	// Headings are words with units, never JSON keys, and the per-class
	// tables use our own row names.
	jsonKey := regexp.MustCompile(`^[a-z0-9]+(_[a-z0-9]+)+$`)
	for _, tb := range tables {
		for _, h := range tb[0] {
			if jsonKey.MatchString(h) {
				t.Errorf("table %q has the raw heading %q", tb[0][0], h)
			}
		}
	}
	for _, word := range []string{"support", "macro avg", "weighted avg", "macro_avg", "weighted_avg"} {
		if strings.Contains(string(md), word) {
			t.Errorf("report.md says %q", word)
		}
	}
	if !strings.Contains(string(md), "| class mean | 300 |") || !strings.Contains(string(md), "| image-weighted mean | 300 |") {
		t.Error("per-class table lacks the class-mean and image-weighted-mean rows")
	}
	if n := strings.Count(string(md), "**hand-set**: Gabor bank"); n != 1 {
		t.Errorf("the description of hand-set is printed %d times; want once", n)
	}
	// The Data table names the training set, and shows file names, not paths.
	for _, tb := range tables {
		if tb[0][0] == "test set" {
			if tb[0][1] != "trained on" || tb[1][1] != "garments-train" || tb[1][2] != "6000" {
				t.Errorf("data table %v", tb)
			}
			if last := tb[1][len(tb[1])-1]; last != "garments-test-images-idx3-ubyte.gz + garments-test-labels-idx1-ubyte.gz" {
				t.Errorf("data table files cell %q", last)
			}
		}
	}
	// The development suite: its figures sit in its section, and the
	// condition table shows each model's and the peer's accuracy
	// (alpha-2: 30/40 right, the second model 3·(2 mod 3) = 6 fewer, the peer 1 point below).
	if h, f := strings.Index(string(md), "## Development suite"), strings.Index(string(md), "(figures/suite-kinds-"); h < 0 || f < h {
		t.Error("the suite figures are not in the development-suite section")
	}
	found := false
	for _, tb := range tables {
		if tb[0][0] != "condition" || len(tb) < 3 || tb[2][0] != "alpha-1" {
			continue // not the indexed-test table
		}
		if !reflect.DeepEqual(tb[0][3:], []string{"hand-set (%)", "learned (%)", "LeNet-5 (peer) (%)", "hand-set 95% interval (%)", "learned 95% interval (%)"}) {
			t.Errorf("condition table header %v", tb[0])
		}
		for _, row := range tb[1:] {
			if row[0] == "alpha-2" {
				found = true
				if want := []string{"75.00", "60.00", "74.00", pctCI(Wilson(30, 40, 0.95)), pctCI(Wilson(24, 40, 0.95))}; !reflect.DeepEqual(row[3:], want) {
					t.Errorf("alpha-2 row %v; want %v", row[3:], want)
				}
			}
		}
	}
	if !found {
		t.Error("no condition table with alpha-2")
	}
	// The opening key figures come before the data table.
	if k, d := strings.Index(string(md), "## Key figures"), strings.Index(string(md), "## Data"); k < 0 || k > d ||
		!strings.Contains(string(md), "- **hand-set** on garments: ") {
		t.Error("report.md does not open with the key figures")
	}
	for _, tb := range tables {
		for j, row := range tb {
			if len(row) != len(tb[0]) {
				t.Errorf("table %q row %d has %d cells; header has %d", tb[0][0], j, len(row), len(tb[0]))
			}
		}
	}

	// results.json round-trips the scores.
	js, err := os.ReadFile(filepath.Join(dir, ReportJSON))
	if err != nil {
		t.Fatal(err)
	}
	var back Report
	if err := json.Unmarshal(js, &back); err != nil {
		t.Fatalf("results.json: %v", err)
	}
	if len(back.Models) != 3 || back.Models[1].Metrics.Accuracy != r.Models[1].Metrics.Accuracy ||
		len(back.Robustness) != 2 || back.Comparisons[0].PValue != r.Comparisons[0].PValue ||
		len(back.Suites) != 3 || back.Suites[0].Peer == nil || back.Suites[0].Peer.MeanCorruption != r.Suites[0].Peer.MeanCorruption ||
		back.Suites[1].Worst.Kind != r.Suites[1].Worst.Kind || back.Suites[1].Points[3].CI != r.Suites[1].Points[3].CI {
		t.Errorf("results.json lost data: %+v", back.Models)
	}

	// report.html is self-contained: every figure inline, nothing fetched.
	h, err := os.ReadFile(filepath.Join(dir, ReportHTML))
	if err != nil {
		t.Fatal(err)
	}
	hs := string(h)
	if n := strings.Count(hs, `src="data:image/png;base64,`); n != len(pngs) {
		t.Errorf("report.html embeds %d images; want %d", n, len(pngs))
	}
	if regexp.MustCompile(`(src|href)="(http|/|\.)`).MatchString(hs) {
		t.Error("report.html refers to an outside resource")
	}
	if !strings.Contains(hs, "Sample report | garment-sorting station") || !strings.Contains(hs, "<strong>synthetic</strong>") {
		t.Error("report.html lacks the escaped title or the inline markup")
	}
	if !strings.Contains(hs, `title="`+r.Data[0].Source+`"`) {
		t.Error("report.html has no tooltip with the full file paths")
	}
}

func TestWriteReportRejects(t *testing.T) {
	if _, err := WriteReport(t.TempDir(), nil); err == nil {
		t.Error("nil report accepted")
	}
	r := &Report{Models: []ModelResult{{Name: "x"}}}
	if _, err := WriteReport(t.TempDir(), r); err == nil {
		t.Error("model without metrics accepted")
	}
	r = &Report{Figures: []Figure{{Name: "empty"}}}
	if _, err := WriteReport(t.TempDir(), r); err == nil {
		t.Error("figure without PNG accepted")
	}
}
