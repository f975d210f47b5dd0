package main

import (
	"flag"
	"fmt"
	"sort"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
)

func init() {
	register(&command{
		name:    "predict",
		summary: "classify image files or folders of images",
		usage:   "IMAGE|FOLDER...",
		example: `  striate predict --model fashion.stm shirt.png
  striate predict --model fashion.stm --top 3 incoming/          # every image under incoming/
  striate predict --model fashion.stm bin1/ bin2/ > sorted.tsv

Output: one line per image, tab-separated: path, class, probability
(with --top k: k class/probability pairs, most probable first).`,
		setup: func(fs *flag.FlagSet, g *globals) func([]string) error {
			model := fs.String("model", "", "model `file` written by striate train")
			top := fs.Int("top", 1, "print the `k` most probable classes")
			batch := fs.Int("batch", 256, "images per prediction batch")
			g.addWorkers(fs)
			g.addQuiet(fs)
			return func(args []string) error {
				if len(args) == 0 {
					return usagef("predict needs at least one image file or folder")
				}
				return runPredict(g, *model, *top, *batch, args)
			}
		},
	})
}

func runPredict(g *globals, modelPath string, top, batch int, args []string) error {
	m, err := loadModel(modelPath)
	if err != nil {
		return err
	}
	if top < 1 || top > m.NumClasses() {
		return usagef("--top %d; want 1 to %d (the model's classes)", top, m.NumClasses())
	}
	if batch < 1 {
		return usagef("--batch %d; want at least 1", batch)
	}
	files, err := datasets.ListImages(args...)
	if err != nil {
		return err
	}
	h, w := m.InputSize()
	classes := m.Classes()
	failed := 0
	bar := progressFor(g, len(files), "predict")
	defer bar.Done()
	for lo := 0; lo < len(files); lo += batch {
		hi := min(lo+batch, len(files))
		var imgs [][]float32
		var names []string
		for _, p := range files[lo:hi] {
			// The guarded decoder refuses empty images and declared sizes
			// above datasets.MaxImagePixels; such a file is reported and
			// skipped, and the others are still predicted.
			img, err := datasets.DecodeImageFile(p)
			if err != nil {
				fmt.Fprintf(g.stderr, "striate predict: skipped: %v\n", err)
				failed++
				continue
			}
			imgs = append(imgs, datasets.ToGray(nil, img, h, w))
			names = append(names, p)
		}
		probs, err := eval.Predict(m, imgs, h, w, eval.RunOptions{Workers: g.workers, Batch: batch})
		if err != nil {
			return err
		}
		for i, p := range probs {
			order := make([]int, len(p))
			for c := range order {
				order[c] = c
			}
			sort.SliceStable(order, func(a, b int) bool { return p[order[a]] > p[order[b]] })
			line := names[i]
			for _, c := range order[:top] {
				line += fmt.Sprintf("\t%s\t%.4f", classes[c], p[c])
			}
			fmt.Fprintln(g.stdout, line)
		}
		bar.Step(hi, len(files), "predict")
	}
	if failed > 0 {
		return fmt.Errorf("%d of %d files could not be read as images", failed, len(files))
	}
	return nil
}
