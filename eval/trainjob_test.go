package eval

import (
	"path/filepath"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/learn"
	"github.com/striate/striate/pipeline"
)

// TestTrainChecksBeforeWork: Train refuses an output in a missing folder
// before it loads any data, so a bad path costs no loading or fitting; the
// fit itself is covered through the command's train tests.
func TestTrainChecksBeforeWork(t *testing.T) {
	opened := 0
	open := func(string, int, int) (*datasets.Set, error) { opened++; return nil, nil }
	out := filepath.Join(t.TempDir(), "missing", "m.striate")
	_, err := Train(TrainConfig{Preset: "default", Data: "mnist", Out: out}, open, quietMonitor{})
	if err == nil {
		t.Fatal("Train accepted an output in a missing folder")
	}
	if opened != 0 {
		t.Fatalf("Train loaded %d data sets before refusing the output", opened)
	}
	if _, err := Train(TrainConfig{Preset: "no-such-preset", Data: "mnist", Out: out}, open, quietMonitor{}); err == nil {
		t.Fatal("Train accepted an unknown preset")
	}
}

// TestAutoPreset: the documented mapping of --preset auto.
func TestAutoPreset(t *testing.T) {
	for spec, want := range map[string]string{"mnist": "digits", "fashion": "garments", "/srv/depot/photos": "default"} {
		if got := AutoPreset(spec); got != want {
			t.Errorf("AutoPreset(%q) = %q, want %q", spec, got, want)
		}
	}
}

// TestAutoScenesSpec: the documented values of TrainConfig.Scenes.
func TestAutoScenesSpec(t *testing.T) {
	for s, want := range map[string]int{"auto": AutoScenes, "auto:7": 7, "auto:10000": MaxAutoScenes, "": -1, "belt-scenes": -1} {
		n, auto, err := autoScenes(s)
		if err != nil || (want < 0) == auto || (auto && n != want) {
			t.Errorf("autoScenes(%q) = %d, %v, %v; want %d scenes", s, n, auto, err, want)
		}
	}
	for _, s := range []string{"auto:0", "auto:-3", "auto:x", "auto:10001", "auto:07"} {
		if _, _, err := autoScenes(s); err == nil || !strings.Contains(err.Error(), "auto:N") {
			t.Errorf("autoScenes(%q) = %v, want an error naming auto:N", s, err)
		}
	}
}

// TestTrainScenes: Train with Scenes stores the chosen threshold in the
// model file — from a scene folder of training items, whose index
// checksum is recorded so that RunScan refuses to score that folder (and
// scores another), or from held-out training images with auto:N — and the
// scanner of the loaded model takes it as its default. Contract tests of
// the wiring; the choice is pipeline.Scanner.ChooseThreshold's.
func TestTrainScenes(t *testing.T) {
	cfg := pipeline.Config{Templates: []learn.TemplateConfig{}, Pool: pipeline.PoolConfig{Size: 4},
		Head: learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 30, ValFrac: -1}, HeadMinSteps: -1}
	train := beltItems(450, 1)
	opened := ""
	open := func(spec string, h, w int) (*datasets.Set, error) { opened = spec; return train, nil }
	val := beltFolder(t, 6, 3) // items of other seeds than the test folder's, standing in for training items
	for _, c := range []struct {
		scenes string
		n      int
	}{{val, 6}, {"auto:5", 5}} {
		out := filepath.Join(t.TempDir(), "m.striate")
		r, err := Train(TrainConfig{Config: &cfg, Data: "belt", Scenes: c.scenes, Seed: 2, Workers: 2, Out: out}, open, quietMonitor{})
		if err != nil {
			t.Fatalf("Scenes %q: %v", c.scenes, err)
		}
		m, err := pipeline.LoadFile(out)
		if err != nil {
			t.Fatal(err)
		}
		st, ok := m.Scan()
		if !ok || r.Scan == nil || st.Scenes != c.n || st.Config.Threshold != r.Scan.Config.Threshold {
			t.Fatalf("Scenes %q: stored %+v (present %v), job reported %+v", c.scenes, st, ok, r.Scan)
		}
		sc, err := pipeline.NewScanner(m, pipeline.ScanConfig{})
		if err != nil || sc.Config().Threshold != st.Config.Threshold {
			t.Fatalf("Scenes %q: default scanner threshold %v, stored %v (%v)", c.scenes, sc.Config().Threshold, st.Config.Threshold, err)
		}
		auto := c.scenes != val
		if auto {
			if want := train.N - min(AutoHoldout, train.N/10); r.Train.N != want || st.Index != "" {
				t.Errorf("auto: fitted %d images, want %d held-out ones removed; index %q", r.Train.N, want, st.Index)
			}
			continue
		}
		if r.Train.N != train.N || len(st.Index) != 64 {
			t.Errorf("folder: fitted %d of %d images; index %q", r.Train.N, train.N, st.Index)
		}
		src, _, err := ScanSources(m.Classes(), true, val)
		if err != nil {
			t.Fatal(err)
		}
		_, err = RunScan(m, src, ScanJobConfig{}, quietMonitor{}, func(error) {}, func(*ScanFrame) error { return nil })
		if err == nil || !strings.Contains(err.Error(), "chosen on this scene folder") || !strings.Contains(err.Error(), val) {
			t.Errorf("RunScan on the validation folder: %v, want a refusal naming it", err)
		}
		test := beltFolder(t, 4, 9)
		if src, _, err = ScanSources(m.Classes(), true, test); err != nil {
			t.Fatal(err)
		}
		job, err := RunScan(m, src, ScanJobConfig{}, quietMonitor{}, func(error) {}, func(*ScanFrame) error { return nil })
		if err != nil || job.Config.Threshold != st.Config.Threshold || job.Notes != nil {
			t.Errorf("RunScan on test scenes: %v, threshold %v (stored %v), notes %v", err, job.Config.Threshold, st.Config.Threshold, job.Notes)
		}
		job, _ = RunScan(m, src, ScanJobConfig{Scan: pipeline.ScanConfig{MaxItems: 4}}, quietMonitor{}, func(error) {}, func(*ScanFrame) error { return nil })
		if len(job.Notes) != 1 || !strings.Contains(job.Notes[0], "max_items") {
			t.Errorf("RunScan with other settings: notes %v, want one naming max_items", job.Notes)
		}
	}
	if opened != "belt" {
		t.Errorf("opened %q", opened)
	}
}

// TestTrainScenesNoItems: validation scenes on which no fixation finds an
// item cannot choose a threshold; Train then keeps the fit (the model is
// written without a scan section) and fails saying so.
func TestTrainScenesNoItems(t *testing.T) {
	cfg := pipeline.Config{Templates: []learn.TemplateConfig{}, Pool: pipeline.PoolConfig{Size: 4},
		Head: learn.HeadConfig{Kind: learn.KindSoftmax, Epochs: 5, ValFrac: -1}, HeadMinSteps: -1}
	blank := make([]datasets.Scene, 3)
	for i := range blank {
		blank[i] = datasets.Scene{W: 96, H: 96, Pix: make([]float32, 96*96)}
	}
	dir := filepath.Join(t.TempDir(), "blank")
	if err := datasets.WriteSceneFolder(dir, []string{"ring", "bar", "tee"}, blank); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(t.TempDir(), "m.striate")
	open := func(string, int, int) (*datasets.Set, error) { return beltItems(90, 1), nil }
	_, err := Train(TrainConfig{Config: &cfg, Data: "belt", Scenes: dir, Out: out}, open, quietMonitor{})
	if err == nil || !strings.Contains(err.Error(), "without a stored threshold") {
		t.Fatalf("Train on blank validation scenes: %v", err)
	}
	m, err := pipeline.LoadFile(out)
	if err != nil {
		t.Fatalf("the fitted model was not kept: %v", err)
	}
	if _, ok := m.Scan(); ok {
		t.Fatal("the kept model claims a scan section")
	}
}
