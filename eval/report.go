package eval

import (
	"encoding/base64"
	"encoding/json"
	"fmt"
	"html"
	"math"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"time"

	"github.com/striate/striate/internal/safefile"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/v1layer"
)

// Report is everything one evaluation run produced, as plain data, so a
// command can fill it piece by piece and WriteReport can render it. Empty
// sections are left out of the rendering.
type Report struct {
	Title   string    `json:"title"`
	Created time.Time `json:"created"`
	Summary string    `json:"summary,omitempty"` // one paragraph under the title
	Command string    `json:"command,omitempty"` // the command line that produced it
	// Config is any JSON-marshalable configuration (e.g. pipeline.Config
	// values keyed by model name); it is shown as indented JSON.
	Config      any                `json:"config,omitempty"`
	Data        []Provenance       `json:"data,omitempty"`
	Models      []ModelResult      `json:"models,omitempty"`
	Comparisons []*Comparison      `json:"comparisons,omitempty"`
	Robustness  []*Robustness      `json:"robustness,omitempty"`
	Suites      []*SuiteResult     `json:"suites,omitempty"` // development-suite scores (ScoreSuite)
	Scenes      []*SceneResult     `json:"scenes,omitempty"` // scanner scores on scene folders (ScanJob.Report)
	Labels      []*LabelCurve      `json:"label_efficiency,omitempty"`
	Invariance  []InvarianceResult `json:"invariance,omitempty"`
	Banks       []BankPanel        `json:"banks,omitempty"`   // filter banks shown side by side as mosaics
	Figures     []Figure           `json:"figures,omitempty"` // extra figures supplied by the caller
	Notes       []string           `json:"notes,omitempty"`
}

// Provenance says where a data set came from. Name is the test set the
// models are scored on (ModelResult.Data refers to it); Train counts the
// images the models were trained on, from the set TrainName when known.
type Provenance struct {
	Name      string   `json:"name"`
	Source    string   `json:"source"` // full file paths or folder; the report shows the base names
	TrainName string   `json:"train_name,omitempty"`
	Train     int      `json:"train"` // images used for training (0 if none)
	Test      int      `json:"test"`  // images used for testing
	H         int      `json:"h"`
	W         int      `json:"w"`
	Classes   []string `json:"classes"`
	Note      string   `json:"note,omitempty"`
}

// ModelResult is one fitted model's scores on one test set.
type ModelResult struct {
	Name         string   `json:"name"`
	Data         string   `json:"data"` // Provenance.Name of its test set
	Description  string   `json:"description,omitempty"`
	TrainSeconds float64  `json:"train_seconds,omitempty"`
	Metrics      *Metrics `json:"metrics"`
	Speed        *Speed   `json:"speed,omitempty"`
}

// InvarianceResult is the grating probe of one front end; Channels, when
// set, names each row's kind, orientation and wavelength.
type InvarianceResult struct {
	Model    string              `json:"model"`
	Channels []v1layer.Channel   `json:"channels,omitempty"`
	Rows     []ChannelInvariance `json:"rows"`
}

// BankPanel is one filter bank for the mosaic figure (hand-set and learned
// banks go side by side). Report, when set for a learned bank, adds the
// orientation and bandwidth histograms of its Gabor fits.
type BankPanel struct {
	Name   string            `json:"name"`
	Bank   *v1layer.Bank     `json:"-"`
	Report *learn.BankReport `json:"report,omitempty"`
}

// Figure is a PNG figure supplied by the caller. Name becomes the file stem
// under figures/ (letters, digits and '-' are kept).
type Figure struct {
	Name    string `json:"name"`
	Title   string `json:"title"`
	Caption string `json:"caption,omitempty"`
	PNG     []byte `json:"-"`
}

// Files written by WriteReport inside its folder.
const (
	ReportMarkdown = "report.md"
	ReportHTML     = "report.html"
	ReportJSON     = "results.json"
	ReportFigures  = "figures"
)

// WriteReport renders r into dir (created if missing): report.md with its
// figures as PNG files under figures/, report.html with the same content and
// every figure embedded as a data: URI (one self-contained file), and
// results.json with r as JSON. It returns the paths written. Tables are
// GitHub-flavoured markdown tables with one header row, so both files parse
// mechanically; results.json carries the full precision.
func WriteReport(dir string, r *Report) ([]string, error) {
	if r == nil {
		return nil, fmt.Errorf("eval: WriteReport with a nil report")
	}
	if r.Created.IsZero() {
		r.Created = time.Now().UTC()
	}
	doc, err := buildDoc(r)
	if err != nil {
		return nil, err
	}
	figDir := filepath.Join(dir, ReportFigures)
	if err := os.MkdirAll(figDir, safefile.DirPerm); err != nil {
		return nil, fmt.Errorf("eval: report folder: %w", err)
	}
	var written []string
	write := func(name string, b []byte) error {
		p := filepath.Join(dir, name)
		// Each file is replaced whole (temporary file, sync, rename), so an
		// interrupted run leaves the previous report or the new one.
		if err := safefile.WriteBytes(p, b); err != nil {
			return fmt.Errorf("eval: writing report: %w", err)
		}
		written = append(written, p)
		return nil
	}
	for _, b := range doc {
		if f, ok := b.(figBlock); ok {
			if err := write(filepath.Join(ReportFigures, f.file), f.png); err != nil {
				return nil, err
			}
		}
	}
	if err := write(ReportMarkdown, []byte(renderMarkdown(doc))); err != nil {
		return nil, err
	}
	if err := write(ReportHTML, []byte(renderHTML(r.Title, doc))); err != nil {
		return nil, err
	}
	js, err := json.MarshalIndent(sanitizeJSON(r), "", " ")
	if err != nil {
		return nil, fmt.Errorf("eval: encoding results.json: %w", err)
	}
	if err := write(ReportJSON, append(js, '\n')); err != nil {
		return nil, err
	}
	return written, nil
}

// sanitizeJSON round-trips r through a JSON encoding with NaN and ±Inf
// replaced by null, so results.json is always valid JSON.
func sanitizeJSON(r *Report) any {
	cp := *r
	for i := range cp.Models {
		if s := cp.Models[i].Speed; s != nil {
			cs := *s
			for _, f := range []*float64{&cs.ExtractPerSec, &cs.PredictPerSec, &cs.LatencyP50, &cs.LatencyP99} {
				if math.IsNaN(*f) || math.IsInf(*f, 0) {
					*f = 0
				}
			}
			cp.Models[i].Speed = &cs
		}
	}
	return &cp
}

// The report is first built as a list of blocks, then rendered twice.
type block interface{ isBlock() }

type headBlock struct {
	level int
	text  string
}
type paraBlock struct{ text string }
type codeBlock struct{ text string }
type tableBlock struct {
	header []string
	rows   [][]string
	tips   map[[2]int]string // (row, column) → tooltip shown in report.html
}
type figBlock struct {
	file, title, caption string
	png                  []byte
}
type listBlock struct{ items []string }

func (headBlock) isBlock()  {}
func (paraBlock) isBlock()  {}
func (codeBlock) isBlock()  {}
func (tableBlock) isBlock() {}
func (figBlock) isBlock()   {}
func (listBlock) isBlock()  {}

func slug(s string) string {
	var b strings.Builder
	dash := false
	for _, r := range strings.ToLower(s) {
		if r >= 'a' && r <= 'z' || r >= '0' && r <= '9' {
			b.WriteRune(r)
			dash = false
		} else if !dash && b.Len() > 0 {
			b.WriteByte('-')
			dash = true
		}
	}
	return strings.TrimRight(b.String(), "-")
}

func f4(x float64) string { return fmt.Sprintf("%.4f", x) }

// secs formats a duration in seconds; empty when unknown (0).
func secs(s float64) string {
	if s == 0 {
		return ""
	}
	return fmt.Sprintf("%.1f", s)
}

func buildDoc(r *Report) ([]block, error) {
	var doc []block
	add := func(b ...block) { doc = append(doc, b...) }
	used := map[string]int{}
	fig := func(stem, title, caption string, png []byte) {
		s := slug(stem)
		if s == "" {
			s = "figure"
		}
		used[s]++
		if used[s] > 1 {
			s = fmt.Sprintf("%s-%d", s, used[s])
		}
		add(figBlock{s + ".png", title, caption, png})
	}

	title := r.Title
	if title == "" {
		title = "striate evaluation report"
	}
	add(headBlock{1, title})
	meta := "Created " + r.Created.UTC().Format(time.RFC3339) + "."
	if r.Command != "" {
		meta += " Command: `" + r.Command + "`."
	}
	add(paraBlock{meta})
	if r.Summary != "" {
		add(paraBlock{r.Summary})
	}

	if items := keyFigures(r); len(items) > 0 {
		add(headBlock{2, "Key figures"})
		add(listBlock{items})
	}

	if len(r.Data) > 0 {
		add(headBlock{2, "Data"})
		withTrainName := false
		for _, d := range r.Data {
			withTrainName = withTrainName || d.TrainName != ""
		}
		t := tableBlock{header: []string{"test set"}, tips: map[[2]int]string{}}
		if withTrainName {
			t.header = append(t.header, "trained on")
		}
		t.header = append(t.header, "training images", "test images", "image size (px)", "classes", "files")
		for i, d := range r.Data {
			row := []string{d.Name}
			if withTrainName {
				row = append(row, d.TrainName)
			}
			row = append(row, fmt.Sprint(d.Train), fmt.Sprint(d.Test), fmt.Sprintf("%d×%d", d.H, d.W),
				fmt.Sprintf("%d: %s", len(d.Classes), strings.Join(d.Classes, ", ")), shortSource(d.Source))
			t.tips[[2]int{i, len(row) - 1}] = d.Source
			t.rows = append(t.rows, row)
		}
		add(t)
		add(paraBlock{"Files are shown by name; results.json holds the full paths (and report.html shows them when the pointer rests on a name)."})
		for _, d := range r.Data {
			if d.Note != "" {
				add(paraBlock{d.Name + ": " + d.Note})
			}
		}
	}

	if len(r.Models) > 0 {
		add(headBlock{2, "Accuracy"})
		add(paraBlock{"Accuracy with its 95% Wilson score interval, in %. F1 (the harmonic mean of a class's precision and recall) is averaged " +
			"over classes with equal weight (class mean) and weighted by each class's test images (image-weighted mean); top-2 counts an image " +
			"as right when its class is among the two most probable; log-loss is the mean −ln p(true class) in nats; ECE is the expected " +
			"calibration error over 15 equal-width confidence bins (Guo et al. 2017), in percentage points."})
		t := tableBlock{header: []string{"model", "test set", "test images", "accuracy (%)", "95% interval (%)", "class-mean F1 (%)",
			"image-weighted F1 (%)", "top-2 accuracy (%)", "log-loss (nats)", "ECE (points)", "training time (s)"}}
		for _, m := range r.Models {
			if m.Metrics == nil {
				return nil, fmt.Errorf("eval: report model %q has no metrics", m.Name)
			}
			mm := m.Metrics
			top2 := ""
			for _, tk := range mm.TopK {
				if tk.K == 2 {
					top2 = pct(tk.Accuracy)
				}
			}
			t.rows = append(t.rows, []string{m.Name, m.Data, fmt.Sprint(mm.N), pct(mm.Accuracy), pctCI(mm.CI),
				pct(mm.Macro.F1), pct(mm.Weighted.F1), top2, f4(mm.LogLoss), pct(mm.ECE), secs(m.TrainSeconds)})
		}
		add(t)
		// One line per model name: the same model trained on two data sets
		// carries one description.
		described := map[string]bool{}
		for _, m := range r.Models {
			key := m.Name + "\x00" + m.Description
			if m.Description != "" && !described[key] {
				described[key] = true
				add(paraBlock{"**" + m.Name + "**: " + m.Description})
			}
		}
		// Per data set: per-class bars and reliability over its models.
		for _, dname := range dataOrder(r.Models) {
			var names []string
			var ms []*Metrics
			for _, m := range r.Models {
				if m.Data == dname {
					names = append(names, m.Name)
					ms = append(ms, m.Metrics)
				}
			}
			png, err := PerClassFigure(names, ms, "Per-class F1 on "+dname)
			if err != nil {
				return nil, err
			}
			fig("per-class-"+dname, "Per-class F1 on "+dname, "F1 score of each class, one bar per model.", png)
			png, err = ReliabilityFigure(names, ms, "Reliability on "+dname)
			if err != nil {
				return nil, err
			}
			fig("reliability-"+dname, "Reliability on "+dname,
				"Accuracy against mean confidence in each of 15 confidence bins; points on the dashed diagonal are calibrated; marker area grows with the number of test images in the bin.", png)
		}
		add(headBlock{2, "Per-class scores and confusion matrices"})
		for _, m := range r.Models {
			mm := m.Metrics
			add(headBlock{3, m.Name + " on " + m.Data})
			add(paraBlock{"Recall is the fraction of a class's test images recognised as that class; precision the fraction of images " +
				"recognised as the class that belong to it; the last two rows average the classes with equal weight and by test images."})
			t := tableBlock{header: []string{"class", "test images", "recall (%)", "precision (%)", "F1 (%)"}}
			for _, c := range mm.PerClass {
				t.rows = append(t.rows, []string{c.Class, fmt.Sprint(c.Support), pct(c.Recall), pct(c.Precision), pct(c.F1)})
			}
			t.rows = append(t.rows, []string{"class mean", fmt.Sprint(mm.N), pct(mm.Macro.Recall), pct(mm.Macro.Precision), pct(mm.Macro.F1)})
			t.rows = append(t.rows, []string{"image-weighted mean", fmt.Sprint(mm.N), pct(mm.Weighted.Recall), pct(mm.Weighted.Precision), pct(mm.Weighted.F1)})
			add(t)
			ct := tableBlock{header: append([]string{"true \\ predicted"}, mm.Classes...)}
			for i, row := range mm.Confusion {
				cells := []string{mm.Classes[i]}
				for _, v := range row {
					cells = append(cells, fmt.Sprint(v))
				}
				ct.rows = append(ct.rows, cells)
			}
			add(ct)
			png, err := ConfusionFigure(mm, "Confusion: "+m.Name+" on "+m.Data)
			if err != nil {
				return nil, err
			}
			fig("confusion-"+m.Name+"-"+m.Data, "Confusion matrix of "+m.Name+" on "+m.Data,
				"Rows are true classes, columns predicted; numbers are counts, colour is the fraction of the true class (the diagonal is per-class recall).", png)
		}
	}

	if len(r.Comparisons) > 0 {
		add(headBlock{2, "Paired comparisons"})
		add(paraBlock{"Same test images for both models. \"Right only by a\" and \"right only by b\" count the images only one of them gets right; " +
			"p is the exact two-sided McNemar test on those discordant pairs; the difference a − b, in percentage points, has a paired bootstrap percentile interval."})
		t := tableBlock{header: []string{"a", "b", "condition", "test images", "accuracy a (%)", "accuracy b (%)", "a − b (points)", "95% interval (points)",
			"right only by a", "right only by b", "McNemar p", "bootstrap resamples"}}
		for _, c := range r.Comparisons {
			cond := c.Condition
			if cond == "" {
				cond = "clean"
			}
			t.rows = append(t.rows, []string{c.NameA, c.NameB, cond, fmt.Sprint(c.N), pct(c.AccuracyA), pct(c.AccuracyB), signedPct(c.Diff),
				signedPct(c.DiffCI.Lo) + " to " + signedPct(c.DiffCI.Hi), fmt.Sprint(c.OnlyA), fmt.Sprint(c.OnlyB), fmt.Sprintf("%.4g", c.PValue), fmt.Sprint(c.Resamples)})
		}
		add(t)
	}

	if len(r.Robustness) > 0 {
		add(headBlock{2, "Robustness"})
		add(paraBlock{"Models trained on clean images, tested on perturbed copies of the test set (the same perturbed images for every model); accuracy with 95% Wilson interval."})
		t := tableBlock{header: []string{"model", "test set", "kind", "level", "unit", "perturbation", "accuracy (%)", "95% interval (%)"}}
		for _, rb := range r.Robustness {
			for _, p := range rb.Points {
				t.rows = append(t.rows, []string{rb.Model, rb.Data, p.Kind, fmt.Sprintf("%g", p.Level), p.Unit, p.Label, pct(p.Accuracy), pctCI(p.CI)})
			}
		}
		add(t)
		for _, dname := range robDataOrder(r.Robustness) {
			var cs []*Robustness
			for _, rb := range r.Robustness {
				if rb.Data == dname {
					cs = append(cs, rb)
				}
			}
			png, err := RobustnessFigure(cs)
			if err != nil {
				return nil, err
			}
			fig("robustness-"+dname, "Robustness on "+dname,
				"Test accuracy against perturbation level, one panel per perturbation; bars are 95% Wilson intervals.", png)
		}
	}

	if len(r.Suites) > 0 {
		if err := suiteBlocks(r.Suites, add, fig); err != nil {
			return nil, err
		}
	}

	if len(r.Scenes) > 0 {
		if err := sceneBlocks(r.Scenes, add, fig); err != nil {
			return nil, err
		}
	}

	if len(r.Labels) > 0 {
		add(headBlock{2, "Label efficiency"})
		add(paraBlock{"Test accuracy after training on a class-balanced subset with the given number of labelled images per class (subsets nested across sizes)."})
		t := tableBlock{header: []string{"model", "test set", "labels per class", "training images", "repeat", "accuracy (%)", "95% interval (%)"}}
		for _, lc := range r.Labels {
			for _, p := range lc.Points {
				t.rows = append(t.rows, []string{lc.Model, lc.Data, fmt.Sprint(p.PerClass), fmt.Sprint(p.NTrain), fmt.Sprint(p.Repeat), pct(p.Accuracy), pctCI(p.CI)})
			}
		}
		add(t)
		byData := map[string][]*LabelCurve{}
		var order []string
		for _, lc := range r.Labels {
			if _, ok := byData[lc.Data]; !ok {
				order = append(order, lc.Data)
			}
			byData[lc.Data] = append(byData[lc.Data], lc)
		}
		for _, dname := range order {
			png, err := LabelFigure(byData[dname], "Label efficiency on "+dname)
			if err != nil {
				return nil, err
			}
			fig("label-efficiency-"+dname, "Label efficiency on "+dname, "Test accuracy against labelled training images per class; bars are 95% Wilson intervals.", png)
		}
	}

	if len(r.Invariance) > 0 {
		add(headBlock{2, "Front-end invariance"})
		add(paraBlock{"Each front-end channel probed with full-field sinusoidal gratings over orientation, wavelength and phase. " +
			"Phase correlation: correlation of the centre response a quarter cycle apart (1 = phase-invariant, 0 = linear); " +
			"shift correlation: correlation of the whole map under a 1 px shift; F1/F0 at the preferred grating classifies simple (> 1) and complex (< 1) cells (Skottun et al. 1991)."})
		for _, iv := range r.Invariance {
			add(headBlock{3, iv.Model})
			t := tableBlock{header: []string{"channel", "kind", "orientation (°)", "wavelength (px)", "preferred orientation (°)", "preferred wavelength (px)",
				"phase correlation", "shift correlation", "F1/F0"}}
			var labels []string
			for i, row := range iv.Rows {
				kind, ori, wl := "", "", ""
				if i < len(iv.Channels) {
					ch := iv.Channels[i]
					kind = ch.Kind.String()
					ori = fmt.Sprintf("%.1f", ch.Orientation*180/math.Pi)
					wl = fmt.Sprintf("%.2f", ch.Wavelength)
				}
				labels = append(labels, channelLabel(i, iv.Channels, len(iv.Rows) > 24))
				t.rows = append(t.rows, []string{fmt.Sprint(row.Channel), kind, ori, wl, fmt.Sprintf("%.1f", row.PrefOrientation*180/math.Pi),
					fmt.Sprintf("%g", row.PrefWavelength), f4(row.PhaseCorr), f4(row.ShiftCorr), fmt.Sprintf("%.4g", row.Modulation)})
			}
			add(t)
			png, err := InvarianceFigure(iv.Rows, labels, "Invariance of "+iv.Model)
			if err != nil {
				return nil, err
			}
			fig("invariance-"+iv.Model, "Grating invariance of "+iv.Model,
				"Top: phase and shift correlation per channel. Bottom: F1/F0 modulation ratio at the preferred grating "+
					"(channel letters on crowded axes: D DoG, G Gabor, L learned, E energy, R rectified, S end-stopped; degrees are the preferred orientation) "+
					"(log scale; linear cells, whose mean response is 0, are capped at 100; values below 0.001 are drawn at 0.001).", png)
		}
	}

	var speedRows [][]string
	for _, m := range r.Models {
		if s := m.Speed; s != nil {
			speedRows = append(speedRows, []string{m.Name, fmt.Sprint(s.Images), fmt.Sprint(s.Workers), fmt.Sprintf("%.0f", s.ExtractPerSec),
				fmt.Sprintf("%.0f", s.PredictPerSec), fmt.Sprintf("%.3f", s.LatencyP50), fmt.Sprintf("%.3f", s.LatencyP99),
				fmt.Sprintf("%.1f", float64(s.HeapPeak)/(1<<20)), fmt.Sprint(s.ModelBytes)})
		}
	}
	if len(speedRows) > 0 {
		add(headBlock{2, "Speed and memory"})
		add(paraBlock{"Throughput in images per second of wall time (median of repeats, batches over all workers); latency of single-image prediction on one worker; " +
			"peak heap is the largest sampled live-heap size during the runs, in MiB; model size is the saved file in bytes."})
		add(tableBlock{header: []string{"model", "images", "workers", "extraction (images/s)", "prediction (images/s)", "latency, median (ms)",
			"latency, 99th percentile (ms)", "peak heap (MiB)", "model file (bytes)"}, rows: speedRows})
	}

	if len(r.Banks) > 0 {
		add(headBlock{2, "Filter banks"})
		png, err := BankMosaicFigure(r.Banks)
		if err != nil {
			return nil, err
		}
		var names []string
		for _, b := range r.Banks {
			names = append(names, b.Name)
		}
		fig("filter-mosaics", "Filter banks: "+strings.Join(names, ", "),
			"Every kernel of each bank, scaled on its own so that 0 is mid-grey and its largest weight is black or white.", png)
		for _, b := range r.Banks {
			if b.Report == nil {
				continue
			}
			rp := b.Report
			add(paraBlock{fmt.Sprintf("**%s**: %d atoms, %d Gabor-like (%.0f%%, fit R² ≥ %g), median R² %.3f, median bandwidth %.2f octaves and %.0f°, %d quadrature pairs, %d unpaired.",
				b.Name, len(rp.Fits), rp.GaborLike, 100*rp.FracGaborLike, learn.GaborLikeR2, rp.MedianR2, rp.MedianFreqBandwidth, rp.MedianOrientationBandwidth, rp.Pairs, rp.Unpaired)})
			png, err := BankHistogramsPNG(rp)
			if err != nil {
				return nil, err
			}
			fig("bank-histograms-"+b.Name, "Gabor fits of "+b.Name, "Fitted orientation, spatial-frequency bandwidth and orientation bandwidth of the Gabor-like atoms.", png)
		}
	}

	if len(r.Figures) > 0 {
		add(headBlock{2, "Other figures"})
		for _, f := range r.Figures {
			if len(f.PNG) == 0 {
				return nil, fmt.Errorf("eval: report figure %q has no PNG data", f.Name)
			}
			fig(f.Name, f.Title, f.Caption, f.PNG)
		}
	}

	if r.Config != nil {
		add(headBlock{2, "Configuration"})
		js, err := json.MarshalIndent(r.Config, "", "  ")
		if err != nil {
			return nil, fmt.Errorf("eval: report configuration: %w", err)
		}
		add(codeBlock{string(js)})
	}
	if len(r.Notes) > 0 {
		add(headBlock{2, "Notes"})
		add(listBlock{r.Notes})
	}
	return doc, nil
}

// kindLetters abbreviate channel kinds on crowded axes.
var kindLetters = map[v1layer.Kind]string{v1layer.KindDoG: "D", v1layer.KindGabor: "G", v1layer.KindLearned: "L",
	v1layer.KindEnergy: "E", v1layer.KindRectified: "R", v1layer.KindEndStop: "T"} // T: terminated (end-stopped)

// channelLabel names channel i for an axis: its index, kind and tuning,
// e.g. "5 energy 45° λ4" or "0 dog+ σ1"; short gives "5 E45°" or "0 D+".
func channelLabel(i int, chans []v1layer.Channel, short bool) string {
	if i >= len(chans) {
		return fmt.Sprint(i)
	}
	ch := chans[i]
	if short {
		l, ok := kindLetters[ch.Kind]
		if !ok {
			return fmt.Sprint(i)
		}
		if ch.Kind == v1layer.KindDoG {
			pol := map[int]string{1: "+", -1: "−"}[ch.Polarity]
			return fmt.Sprintf("%d %s%s", i, l, pol)
		}
		return fmt.Sprintf("%d %s%.0f°", i, l, ch.Orientation*180/math.Pi)
	}
	switch ch.Kind {
	case v1layer.KindDoG:
		pol := ""
		switch ch.Polarity {
		case 1:
			pol = "+"
		case -1:
			pol = "−"
		}
		return fmt.Sprintf("%d dog%s σ%g", i, pol, math.Round(ch.Sigma*10)/10)
	case 0:
		return fmt.Sprint(i)
	}
	return fmt.Sprintf("%d %s %.0f° λ%g", i, ch.Kind, ch.Orientation*180/math.Pi, math.Round(ch.Wavelength*10)/10)
}

func dataOrder(ms []ModelResult) []string {
	var out []string
	seen := map[string]bool{}
	for _, m := range ms {
		if !seen[m.Data] {
			seen[m.Data] = true
			out = append(out, m.Data)
		}
	}
	return out
}

func robDataOrder(rs []*Robustness) []string {
	var out []string
	seen := map[string]bool{}
	for _, r := range rs {
		if !seen[r.Data] {
			seen[r.Data] = true
			out = append(out, r.Data)
		}
	}
	return out
}

// mdCell makes a string safe inside a markdown table cell.
func mdCell(s string) string {
	s = strings.ReplaceAll(s, "|", `\|`)
	return strings.ReplaceAll(s, "\n", " ")
}

func renderMarkdown(doc []block) string {
	var b strings.Builder
	for _, bl := range doc {
		switch v := bl.(type) {
		case headBlock:
			fmt.Fprintf(&b, "%s %s\n\n", strings.Repeat("#", v.level), v.text)
		case paraBlock:
			fmt.Fprintf(&b, "%s\n\n", v.text)
		case codeBlock:
			fmt.Fprintf(&b, "```json\n%s\n```\n\n", v.text)
		case listBlock:
			for _, it := range v.items {
				fmt.Fprintf(&b, "- %s\n", it)
			}
			b.WriteString("\n")
		case tableBlock:
			cells := make([]string, len(v.header))
			for i, h := range v.header {
				cells[i] = mdCell(h)
			}
			fmt.Fprintf(&b, "| %s |\n", strings.Join(cells, " | "))
			seps := make([]string, len(v.header))
			for i := range seps {
				seps[i] = "---"
			}
			fmt.Fprintf(&b, "|%s|\n", strings.Join(seps, "|"))
			for _, row := range v.rows {
				cells := make([]string, len(row))
				for i, c := range row {
					cells[i] = mdCell(c)
				}
				fmt.Fprintf(&b, "| %s |\n", strings.Join(cells, " | "))
			}
			b.WriteString("\n")
		case figBlock:
			fmt.Fprintf(&b, "![%s](%s/%s)\n\n", v.title, ReportFigures, v.file)
			if v.caption != "" {
				fmt.Fprintf(&b, "*%s*\n\n", v.caption)
			}
		}
	}
	return b.String()
}

// inlineMD renders the two inline forms the report uses, **bold** and
// `code`, on already-escaped text.
func inlineMD(s string) string {
	s = html.EscapeString(s)
	for _, pair := range [][3]string{{"**", "<strong>", "</strong>"}, {"`", "<code>", "</code>"}} {
		for {
			i := strings.Index(s, pair[0])
			if i < 0 {
				break
			}
			j := strings.Index(s[i+len(pair[0]):], pair[0])
			if j < 0 {
				break
			}
			j += i + len(pair[0])
			s = s[:i] + pair[1] + s[i+len(pair[0]):j] + pair[2] + s[j+len(pair[0]):]
		}
	}
	return s
}

const htmlStyle = `body{font-family:system-ui,-apple-system,"Segoe UI",Helvetica,Arial,sans-serif;max-width:1100px;margin:2em auto;padding:0 1em;color:#222;line-height:1.45}
table{border-collapse:collapse;margin:1em 0;font-size:0.85em;display:block;max-width:100%;overflow-x:auto}
th,td{border:1px solid #ccc;padding:3px 7px;text-align:right;white-space:nowrap}
th{background:#f0f3f7;white-space:normal;vertical-align:bottom;min-width:4em;max-width:11em}
th.t{text-align:left}td.t{white-space:normal;text-align:left;min-width:6em;max-width:26em;overflow-wrap:anywhere}
td:first-child,th:first-child{text-align:left}
figure{margin:1.5em 0}figure img{max-width:100%;border:1px solid #eee}figcaption{font-size:0.9em;color:#555}
pre{background:#f6f8fa;padding:1em;overflow-x:auto;font-size:0.8em}code{background:#f6f8fa;padding:0 3px}`

func renderHTML(title string, doc []block) string {
	var b strings.Builder
	fmt.Fprintf(&b, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>%s</title>\n<style>\n%s\n</style>\n</head>\n<body>\n",
		html.EscapeString(title), htmlStyle)
	for _, bl := range doc {
		switch v := bl.(type) {
		case headBlock:
			fmt.Fprintf(&b, "<h%d>%s</h%d>\n", v.level, inlineMD(v.text), v.level)
		case paraBlock:
			fmt.Fprintf(&b, "<p>%s</p>\n", inlineMD(v.text))
		case codeBlock:
			fmt.Fprintf(&b, "<pre><code>%s</code></pre>\n", html.EscapeString(v.text))
		case listBlock:
			b.WriteString("<ul>\n")
			for _, it := range v.items {
				fmt.Fprintf(&b, "<li>%s</li>\n", inlineMD(it))
			}
			b.WriteString("</ul>\n")
		case tableBlock:
			b.WriteString("<table>\n<thead><tr>")
			for j, h := range v.header {
				attr := ""
				for _, row := range v.rows {
					if j < len(row) && !numericCell.MatchString(row[j]) {
						attr = ` class="t"` // a text column: its heading goes left too
						break
					}
				}
				fmt.Fprintf(&b, "<th%s>%s</th>", attr, html.EscapeString(h))
			}
			b.WriteString("</tr></thead>\n<tbody>\n")
			for i, row := range v.rows {
				b.WriteString("<tr>")
				for j, c := range row {
					attr := ""
					if tip, ok := v.tips[[2]int{i, j}]; ok && tip != "" {
						attr = ` title="` + html.EscapeString(tip) + `"`
					}
					if !numericCell.MatchString(c) {
						attr += ` class="t"`
					}
					fmt.Fprintf(&b, "<td%s>%s</td>", attr, html.EscapeString(c))
				}
				b.WriteString("</tr>\n")
			}
			b.WriteString("</tbody>\n</table>\n")
		case figBlock:
			fmt.Fprintf(&b, "<figure>\n<img alt=\"%s\" src=\"data:image/png;base64,%s\">\n", html.EscapeString(v.title), base64.StdEncoding.EncodeToString(v.png))
			if v.caption != "" {
				fmt.Fprintf(&b, "<figcaption>%s</figcaption>\n", inlineMD(v.caption))
			}
			b.WriteString("</figure>\n")
		}
	}
	b.WriteString("</body>\n</html>\n")
	return b.String()
}

// numericCell matches the table cells that are numbers, intervals or sizes
// (kept on one line); other cells may wrap in report.html.
var numericCell = regexp.MustCompile(`^[-+−]?[0-9.,]*[0-9]([–×][-+−]?[0-9.]+| to [-+−]?[0-9.]+)?%?$|^$|^—$`)

// signedPct formats a difference of fractions in percentage points with its
// sign.
func signedPct(x float64) string { return fmt.Sprintf("%+.2f", 100*x) }

// shortSource shortens a Provenance.Source for a table cell: each of the
// paths joined by " + " becomes its base name.
func shortSource(src string) string {
	parts := strings.Split(src, " + ")
	for i, p := range parts {
		if b := filepath.Base(strings.TrimSpace(p)); b != "." && b != "/" {
			parts[i] = b
		}
	}
	return strings.Join(parts, " + ")
}

// keyFigures returns the opening list of the report: each model's accuracy,
// each paired comparison, the lowest accuracy of each robustness sweep, the
// development-suite figures and the prediction speed.
func keyFigures(r *Report) []string {
	var out []string
	for _, m := range r.Models {
		if m.Metrics == nil {
			continue
		}
		mm := m.Metrics
		s := fmt.Sprintf("**%s** on %s: %s%% accurate (95%% interval %s%%) on %d test images, class-mean F1 %s%%",
			m.Name, m.Data, pct(mm.Accuracy), pctCI(mm.CI), mm.N, pct(mm.Macro.F1))
		if m.Speed != nil && m.Speed.PredictPerSec > 0 {
			s += fmt.Sprintf(", %.0f images/s on %d workers", m.Speed.PredictPerSec, m.Speed.Workers)
		}
		out = append(out, s+".")
	}
	for _, c := range r.Comparisons {
		cond := c.Condition
		if cond == "" {
			cond = "clean"
		}
		out = append(out, fmt.Sprintf("%s − %s (%s): %s points (95%% interval %s to %s), McNemar p = %.3g.",
			c.NameA, c.NameB, cond, signedPct(c.Diff), signedPct(c.DiffCI.Lo), signedPct(c.DiffCI.Hi), c.PValue))
	}
	for _, rb := range r.Robustness {
		var low *RobustPoint
		for i := range rb.Points {
			if p := &rb.Points[i]; p.Label != "clean" && (low == nil || p.Accuracy < low.Accuracy) {
				low = p
			}
		}
		if low != nil {
			out = append(out, fmt.Sprintf("%s on %s, perturbed: lowest accuracy %s%% (%s).", rb.Model, rb.Data, pct(low.Accuracy), low.Label))
		}
	}
	return append(append(out, suiteKeyFigures(r.Suites)...), sceneKeyFigures(r.Scenes)...)
}
