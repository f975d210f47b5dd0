package eval

import (
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"os"
	"path/filepath"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// BeltScenes is the scene layout of the validation scenes that
// "striate train --scenes auto" builds and of the demo's belt step: 128×128
// frames of 1-5 items at 0.8-1.6× their size on a belt textured with one of
// the embedded photos, with four 8×8 lint fragments of other items, a tenth
// of the frames empty (the layout of the pipeline package's scene run).
// Seed is set by the caller.
var BeltScenes = datasets.SceneConfig{Background: datasets.Texture, Lint: 4, EmptyFrac: 0.1}

// Defaults of "striate train --scenes auto".
const (
	// AutoScenes is the number of validation scenes built.
	AutoScenes = 200
	// AutoHoldout is the number of training images held out of the fit
	// for them (a tenth of a smaller split); 200 frames of about three
	// items each draw about 600 items and 800 lint fragments.
	AutoHoldout = 2000
)

// autoSceneTag separates the validation scenes' seed from the fit's.
const autoSceneTag = 0x5ce7e5

// HoldOut splits a training set into the images to fit and those held out
// for validation scenes: min(AutoHoldout, N/10) of them, each class keeping
// its share (datasets.StratifiedSplit, seeded).
func HoldOut(train *datasets.Set, seed uint64) (fit, held *datasets.Set) {
	n := min(AutoHoldout, train.N/10)
	fi, hi := datasets.StratifiedSplit(train.Labels, float64(n)/float64(train.N), seed^autoSceneTag)
	return train.Subset(fi), train.Subset(hi)
}

// AutoValidationScenes builds n validation scenes (BeltScenes) from held,
// training images the model is not fitted on, seeded by seed.
func AutoValidationScenes(held *datasets.Set, n int, seed uint64) ([]datasets.Scene, error) {
	cfg := BeltScenes
	cfg.Seed = seed ^ autoSceneTag
	b, err := datasets.NewSceneBuilder(held, cfg)
	if err != nil {
		return nil, err
	}
	return b.Scenes(0, n), nil
}

// ValidationFolder is a scene folder read for choosing the threshold.
type ValidationFolder struct {
	Dir    string
	Scenes []datasets.Scene // classes numbered as the model's
	Index  string           // hex SHA-256 of its scenes.json
}

// ReadValidationFolder reads every frame of the scene folder dir with its
// ground truth, classes numbered as in classes (the training set's, which
// become the model's), and the SHA-256 of its index. Faults name the file
// and the fix (ScanSources, datasets.SceneFolderError).
//
// The folder must be built from the training split: nothing in a frame
// tells where its items came from, so this is the caller's promise. What is
// checked is the other half: the model records the index's SHA-256, and
// RunScan refuses to score that same folder as test data.
func ReadValidationFolder(dir string, classes []string) (*ValidationFolder, error) {
	if !IsSceneFolder(dir) {
		return nil, fmt.Errorf("eval: --scenes %s: not a scene folder (no %s in it); give a folder built from the training split, or auto", dir, datasets.SceneIndex)
	}
	src, _, err := ScanSources(classes, true, dir)
	if err != nil {
		return nil, err
	}
	if len(src) == 0 {
		return nil, fmt.Errorf("eval: %s lists no frames; validation needs scenes holding items", filepath.Join(dir, datasets.SceneIndex))
	}
	idx, err := indexSHA256(dir)
	if err != nil {
		return nil, err
	}
	v := &ValidationFolder{Dir: dir, Index: idx, Scenes: make([]datasets.Scene, len(src))}
	for i, s := range src {
		img, err := datasets.DecodeImageFile(s.File)
		if err != nil {
			return nil, err
		}
		if b := img.Bounds(); b.Dx() != s.W || b.Dy() != s.H {
			return nil, &datasets.SceneFolderError{Kind: datasets.ErrSceneFrameBad, File: s.File,
				Detail: fmt.Sprintf("the image is %d×%d but %s says %d×%d", b.Dx(), b.Dy(), datasets.SceneIndex, s.W, s.H),
				Fix:    "correct width and height in " + datasets.SceneIndex}
		}
		v.Scenes[i] = datasets.Scene{W: s.W, H: s.H, Pix: datasets.ToGray(nil, img, 0, 0), Items: s.Truth}
	}
	return v, nil
}

// indexSHA256 is the hex SHA-256 of dir's scenes.json.
func indexSHA256(dir string) (string, error) {
	raw, err := os.ReadFile(filepath.Join(dir, datasets.SceneIndex))
	if err != nil {
		return "", fmt.Errorf("eval: %w", err)
	}
	s := sha256.Sum256(raw)
	return hex.EncodeToString(s[:]), nil
}

// ChooseScan chooses m's "no item" threshold on validation scenes
// (pipeline.Scanner.ChooseThreshold with the settings cfg, whose Threshold
// is ignored) and returns m with it stored (Model.WithScan), with source
// and index recorded. Scenes must come from the training split, never
// from test images. mon gets a step without a known length (the choice
// scans every scene once and reports no progress of its own) and a line
// with the result.
func ChooseScan(m *pipeline.Model, scenes []datasets.Scene, cfg pipeline.ScanConfig, source, index string, workers int, mon JobMonitor) (*pipeline.Model, pipeline.StoredScan, error) {
	cfg.Threshold = 0
	sc, err := pipeline.NewScanner(m, cfg)
	if err != nil {
		return nil, pipeline.StoredScan{}, err
	}
	bar := mon.Start(0, fmt.Sprintf("threshold (%d scenes)", len(scenes)))
	ch, err := sc.ChooseThreshold(scenes, workers)
	bar.Done()
	if err != nil {
		return nil, pipeline.StoredScan{}, err
	}
	st := pipeline.StoredScan{Config: sc.Config(), Scenes: len(scenes), Truth: ch.Truth, Found: ch.Found, Match: ch.Matched,
		F1: ch.F1, Source: source, Index: index}
	st.Config.Threshold = ch.Threshold
	out, err := m.WithScan(st)
	if err != nil {
		return nil, pipeline.StoredScan{}, err
	}
	st, _ = out.Scan()
	mon.Logf("\"no item\" threshold %.4f chosen on %d validation scenes (%s): %d of %d items found matched, %d true items, F1 %.3f",
		st.Config.Threshold, st.Scenes, source, st.Match, st.Found, st.Truth, st.F1)
	return out, st, nil
}

// checkNotValidation refuses to score a scene folder whose index is the
// one m's threshold was chosen on.
func checkNotValidation(m *pipeline.Model, folder string) error {
	st, ok := m.Scan()
	if !ok || st.Index == "" {
		return nil
	}
	idx, err := indexSHA256(folder)
	if err != nil {
		return err
	}
	if idx == st.Index {
		return fmt.Errorf("eval: %s: the model's \"no item\" threshold was chosen on this scene folder (its %s has the SHA-256 the model records), so its scores would flatter the model; score on test scenes built from the test split", folder, datasets.SceneIndex)
	}
	return nil
}
