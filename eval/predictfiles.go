package eval

import (
	"fmt"
	"os"
	"path/filepath"
	"sort"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// FilePrediction is the class probabilities of one image file.
type FilePrediction struct {
	Path  string
	Probs []float32
}

// MostProbable returns the indices of the k largest values of p, largest first
// (the lower index first on ties).
func MostProbable(p []float32, k int) []int {
	order := make([]int, len(p))
	for c := range order {
		order[c] = c
	}
	sort.SliceStable(order, func(a, b int) bool { return p[order[a]] > p[order[b]] })
	return order[:min(k, len(order))]
}

// PredictFiles classifies image files with m, batch files at a time: each
// is read by the guarded decoder (datasets.DecodeImageFile, which refuses
// empty images and declared sizes above datasets.MaxImagePixels) and
// converted to m's input size. A file that cannot be read is passed to skip
// and the others are still predicted; each batch's predictions are passed
// to emit in file order, and run.Progress (if not nil) counts files. It
// returns the number of files skipped.
func PredictFiles(m *pipeline.Model, files []string, run RunOptions, skip func(error), emit func([]FilePrediction)) (int, error) {
	h, w := m.InputSize()
	batch := run.batch()
	failed := 0
	for lo := 0; lo < len(files); lo += batch {
		hi := min(lo+batch, len(files))
		var imgs [][]float32
		var names []string
		for _, path := range files[lo:hi] {
			img, err := datasets.DecodeImageFile(path)
			if err != nil {
				skip(err)
				failed++
				continue
			}
			imgs = append(imgs, datasets.ToGray(nil, img, h, w))
			names = append(names, path)
		}
		probs, err := Predict(m, imgs, h, w, RunOptions{Workers: run.Workers, Batch: batch})
		if err != nil {
			return failed, err
		}
		out := make([]FilePrediction, len(probs))
		for i := range probs {
			out[i] = FilePrediction{Path: names[i], Probs: probs[i]}
		}
		emit(out)
		if run.Progress != nil {
			run.Progress.Step(hi, len(files), "predict")
		}
	}
	return failed, nil
}

// FitLabelled fits cfg on train with workers goroutines, or, when perClass
// is above 0, on perClass labelled images per class drawn by
// datasets.PerClass with seed while the unsupervised stages still see every
// image of train without its label (pipeline.FitOptions.Unlabeled).
// Progress goes to mon. It returns the model, the fit report and the set the
// head was trained on. A class of train without any image (an empty class
// folder) is an error naming it, before any work: a model cannot learn a
// class it has never seen.
func FitLabelled(cfg pipeline.Config, train *datasets.Set, perClass int, seed uint64, workers int, mon JobMonitor) (*pipeline.Model, pipeline.FitReport, *datasets.Set, error) {
	if err := checkEveryClass(train); err != nil {
		return nil, pipeline.FitReport{}, train, err
	}
	opts := pipeline.FitOptions{Workers: workers}
	if perClass > 0 {
		opts.Unlabeled = train
		train = train.Subset(datasets.PerClass(train.Labels, perClass, seed))
	}
	bar := mon.Start(train.N, "train")
	opts.Progress = bar
	m, rep, err := pipeline.FitReported(cfg, train, opts)
	bar.Done()
	return m, rep, train, err
}

// checkEveryClass returns an error naming the first class of the training
// set s that has no image, with its folder when s was read from a folder of
// class folders (datasets.LoadFolder keeps an empty class folder's class so
// that a test folder still matches a model; for training it is a mistake).
func checkEveryClass(s *datasets.Set) error {
	for c, k := range s.ClassCounts() {
		if k > 0 {
			continue
		}
		where := ""
		if dir := filepath.Join(s.Source, s.Classes[c]); s.Source != "" {
			if st, err := os.Stat(dir); err == nil && st.IsDir() {
				where = " (its folder " + dir + " gave no image)"
			}
		}
		return fmt.Errorf("eval: training data %s: class %q has no images%s; add images of the class or remove it", s.Name, s.Classes[c], where)
	}
	return nil
}
