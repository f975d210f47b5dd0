package eval

import (
	"fmt"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// beltSizes are the scene counts of the main job's belt step, per dataset.
type beltSizes struct {
	val  int // validation scenes (training split) the threshold is chosen on
	test int // test scenes (test split) scored
}

// beltSizesFor keeps the belt step within the job's budget: a belt frame
// of 128×128 px with 1-5 items costs the scanner a few tens of ms with the
// demo's models (several windows recognised per item; more in the plain
// build), so the full job spends well under a minute per dataset on its
// 150+400 frames and the quick one a few seconds on 24+24.
func beltSizesFor(quick bool) beltSizes {
	if quick {
		return beltSizes{val: 24, test: 24}
	}
	return beltSizes{val: 150, test: 400}
}

// beltTestTag separates the test scenes' seed from the validation
// scenes'.
const beltTestTag = 0xbe17e57

// beltStep is the main job's belt step on one dataset: it chooses the
// "no item" threshold of m on sz.val validation scenes (BeltScenes) built
// from val, images of the training split, and scans sz.test test scenes
// built from test, images of the test split only, with that threshold,
// scoring them (ScoreScenes). It returns the result for the report's scenes
// section (the gallery drawn from the frames in memory) and the threshold's
// record.
func beltStep(m *pipeline.Model, model string, val, test *datasets.Set, sz beltSizes, valNote string, seed uint64, workers int, mon JobMonitor) (*SceneResult, pipeline.StoredScan, error) {
	t0 := time.Now()
	vs, err := AutoValidationScenes(val, sz.val, seed)
	if err != nil {
		return nil, pipeline.StoredScan{}, err
	}
	ms, st, err := ChooseScan(m, vs, pipeline.ScanConfig{}, valNote, "", workers, mon)
	if err != nil {
		return nil, pipeline.StoredScan{}, fmt.Errorf("belt step on %s: %w", test.Name, err)
	}
	cfg := BeltScenes
	cfg.Seed = seed ^ beltTestTag
	tb, err := datasets.NewSceneBuilder(test, cfg)
	if err != nil {
		return nil, pipeline.StoredScan{}, err
	}
	sc, err := pipeline.NewScanner(ms, pipeline.ScanConfig{})
	if err != nil {
		return nil, pipeline.StoredScan{}, err
	}
	job := &ScanJob{Classes: ms.Classes(), Config: sc.Config()}
	var scored []FrameResult
	bar := mon.Start(sz.test, "belt "+test.Name)
	for k := range sz.test {
		s := tb.Scene(nil, k)
		f := ScanFrame{Source: ScanSource{File: fmt.Sprintf("%s test scene %d", test.Name, k), W: s.W, H: s.H, Truth: s.Items, Scored: true},
			W: s.W, H: s.H, pix: s.Pix}
		if err := sc.Scan(&f.Result, s.Pix, s.H, s.W, workers); err != nil {
			bar.Done()
			return nil, pipeline.StoredScan{}, fmt.Errorf("belt step on %s, test scene %d: %w", test.Name, k, err)
		}
		scored = append(scored, FrameResult{Truth: s.Items, Found: Detections(f.Result.Items)})
		job.Frames = append(job.Frames, f)
		bar.Step(k+1, sz.test, "belt "+test.Name)
	}
	bar.Done()
	if job.Scores, err = ScoreScenes(scored, len(job.Classes)); err != nil {
		return nil, pipeline.StoredScan{}, err
	}
	res, err := job.sceneResult(model, test.Name+" belt", fmt.Sprintf("%d scenes built from the %s test split (seed %d)", sz.test, test.Name, cfg.Seed))
	if err != nil {
		return nil, pipeline.StoredScan{}, err
	}
	s := job.Scores
	mon.Logf("  belt of %s: mAP %s%% on %d test scenes (%d items), count accuracy %s%%, recognition of items found %s%%, %.3f false items per empty frame (%s)",
		test.Name, apCell(s.MAP), s.Frames, s.Truth, pct(s.CountAccuracy), pct(s.RecognitionAccuracy), s.FalsePerEmpty, time.Since(t0).Round(time.Second))
	return res, st, nil
}

// unfitted returns the images of full not in the sorted index list fitted
// (the training images a subset left out).
func unfitted(full *datasets.Set, fitted []int) *datasets.Set {
	var rest []int
	j := 0
	for i := range full.N {
		if j < len(fitted) && fitted[j] == i {
			j++
			continue
		}
		rest = append(rest, i)
	}
	return full.Subset(rest)
}
