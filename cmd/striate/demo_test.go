package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Floors for the quick main job (300 labelled images per class, the first
// 2,000 test images). They sit a few points below what the quick job reached
// when the defaults were tuned (README "The demo"), so a regression of the
// pipeline fails the test while run-to-run noise on a 2,000-image test set
// (Wilson half-width about 1.5 points at 87%) does not. External anchor: the
// Fashion-MNIST paper's best scikit-learn classifier reaches 89.7% with all
// 60,000 training images (Xiao, Rasul & Vollgraf 2017, table 3); with 3,000
// images a few points less is expected.
var quickFloors = map[string]map[string]float64{
	"fashion-mnist-test": {"hand-set": 0.84, "learned": 0.82},
	"mnist-test":         {"hand-set": 0.95, "learned": 0.93},
}

// quickLabelFloor is the floor for 10 labels per class on MNIST; the
// label-efficiency target of the full run is 88% (issue on the pipeline),
// quick runs see only 2,000 test images and reach about 80%.
const quickLabelFloor = 0.70

// TestDemoQuick runs "striate demo --quick" as the README gives it and checks
// the report: every file and figure is there, the tables parse, and the
// accuracies clear the floors above. About two minutes on two cores, so it is
// gated by STRIATE_LONG=1 (CI sets it).
func TestDemoQuick(t *testing.T) {
	if os.Getenv("STRIATE_LONG") == "" {
		t.Skip("set STRIATE_LONG=1 to run the quick main job (about two minutes)")
	}
	out := filepath.Join(t.TempDir(), "report")
	var stdout, stderr bytes.Buffer
	if code := run([]string{"demo", "--quick", "--quiet", "--out", out}, &stdout, &stderr); code != exitOK {
		t.Fatalf("demo --quick exit %d\nstdout:\n%s\nstderr:\n%s", code, stdout.String(), stderr.String())
	}
	t.Logf("demo --quick output:\n%s", stdout.String())

	for _, f := range []string{"report.md", "report.html", "results.json"} {
		if st, err := os.Stat(filepath.Join(out, f)); err != nil || st.Size() == 0 {
			t.Errorf("report file %s missing or empty: %v", f, err)
		}
	}
	for _, fig := range []string{"filter-mosaics", "bank-histograms-learned",
		"confusion-hand-set-mnist-test", "confusion-learned-fashion-mnist-test",
		"robustness-mnist-test", "robustness-fashion-mnist-test", "label-efficiency-mnist-test",
		"per-class-mnist-test", "per-class-fashion-mnist-test", "invariance-hand-set"} {
		b, err := os.ReadFile(filepath.Join(out, "figures", fig+".png"))
		if err != nil || !bytes.HasPrefix(b, []byte("\x89PNG\r\n\x1a\n")) {
			t.Errorf("figure %s.png missing or not a PNG: %v", fig, err)
		}
	}
	html, err := os.ReadFile(filepath.Join(out, "report.html"))
	if err != nil {
		t.Fatal(err)
	}
	if n := strings.Count(string(html), "data:image/png;base64,"); n < 10 {
		t.Errorf("report.html embeds %d PNG figures, want at least 10", n)
	}

	var res struct {
		Models []struct {
			Name    string `json:"name"`
			Data    string `json:"data"`
			Metrics struct {
				N        int     `json:"n"`
				Accuracy float64 `json:"accuracy"`
			} `json:"metrics"`
		} `json:"models"`
		Comparisons []struct {
			P float64 `json:"mcnemar_p"`
		} `json:"comparisons"`
		Robustness []struct {
			Points []struct {
				Label    string  `json:"label"`
				N        int     `json:"n"`
				Accuracy float64 `json:"accuracy"`
			} `json:"points"`
		} `json:"robustness"`
		Labels []struct {
			Points []struct {
				PerClass int     `json:"per_class"`
				Accuracy float64 `json:"accuracy"`
			} `json:"points"`
		} `json:"label_efficiency"`
	}
	b, err := os.ReadFile(filepath.Join(out, "results.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &res); err != nil {
		t.Fatalf("results.json does not parse: %v", err)
	}
	seen := 0
	for _, m := range res.Models {
		floor, ok := quickFloors[m.Data][m.Name]
		if !ok {
			t.Errorf("unexpected model %s on %s", m.Name, m.Data)
			continue
		}
		seen++
		if m.Metrics.N != 2000 {
			t.Errorf("%s on %s scored on %d images, want the first 2000", m.Name, m.Data, m.Metrics.N)
		}
		if m.Metrics.Accuracy < floor {
			t.Errorf("%s on %s: accuracy %.4f below the quick floor %.2f", m.Name, m.Data, m.Metrics.Accuracy, floor)
		}
	}
	if seen != 4 {
		t.Errorf("%d model results, want 4 (hand-set and learned on two sets)", seen)
	}
	if len(res.Comparisons) != 2 {
		t.Errorf("%d comparisons, want 2", len(res.Comparisons))
	}
	for _, c := range res.Comparisons {
		if !(c.P >= 0 && c.P <= 1) {
			t.Errorf("McNemar p-value %v outside [0,1]", c.P)
		}
	}
	if len(res.Robustness) != 4 {
		t.Errorf("%d robustness sweeps, want 4", len(res.Robustness))
	}
	for _, r := range res.Robustness {
		if len(r.Points) == 0 {
			t.Error("a robustness sweep has no points")
		}
		for _, p := range r.Points {
			if p.N != 1000 {
				t.Errorf("robustness %s scored on %d images, want the quick sweep's first 1000", p.Label, p.N)
			}
		}
	}
	if len(res.Labels) != 1 || len(res.Labels[0].Points) != 2 {
		t.Fatalf("label efficiency: %+v, want one curve of two points", res.Labels)
	}
	if p := res.Labels[0].Points[0]; p.PerClass != 10 || p.Accuracy < quickLabelFloor {
		t.Errorf("label efficiency at %d per class: %.4f, want 10 per class ≥ %.2f", p.PerClass, p.Accuracy, quickLabelFloor)
	}

	// The belt step: scenes of each test split scored, with a threshold.
	var belt struct {
		Scenes []struct {
			Data      string  `json:"data"`
			Threshold float64 `json:"threshold"`
			Scores    struct{ Frames int }
		} `json:"scenes"`
	}
	if err := json.Unmarshal(b, &belt); err != nil {
		t.Fatal(err)
	}
	if len(belt.Scenes) != 2 {
		t.Fatalf("%d belt results, want 2 (Fashion-MNIST and MNIST)", len(belt.Scenes))
	}
	for _, r := range belt.Scenes {
		if r.Scores.Frames != 24 || !(r.Threshold > 0 && r.Threshold <= 1) {
			t.Errorf("belt %s: %d frames scored (want the quick 24), threshold %v", r.Data, r.Scores.Frames, r.Threshold)
		}
	}

	md, err := os.ReadFile(filepath.Join(out, "report.md"))
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(md), "Hits and misses on") {
		t.Error("report.md has no page of hits and misses")
	}
	if !strings.Contains(string(md), "| model | test set | test images | accuracy (%) |") {
		t.Error("report.md has no accuracy table header")
	}
}
