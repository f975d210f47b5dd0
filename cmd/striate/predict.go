package main

import (
	"flag"
	"fmt"
	"strings"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
)

func init() {
	register(&command{
		name:    "predict",
		summary: "classify image files or folders of images",
		usage:   "IMAGE|FOLDER...",
		example: `  striate predict --model fashion.striate shirt.png
  striate predict --model fashion.striate --top 3 incoming/          # every image under incoming/
  striate predict --model fashion.striate bin1/ bin2/ > sorted.tsv

Output: one line per image, tab-separated: path, class, probability
(with --top k: k class/probability pairs, most probable first). A backslash,
tab, newline or carriage return in a path or class name is written as \\, \t, \n or \r.`,
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
	files, skipped, err := datasets.ListImages(args...)
	if err != nil {
		return err
	}
	skip := func(err error) { fmt.Fprintf(g.stderr, "striate predict: skipped: %v\n", err) }
	for _, s := range skipped {
		skip(fmt.Errorf("%s: %s", s.Path, s.Reason))
	}
	classes := m.Classes()
	bar := g.newProgress(len(files), "predict")
	defer bar.Done()
	failed, err := eval.PredictFiles(m, files, eval.RunOptions{Workers: g.workers, Batch: batch, Progress: bar}, skip,
		func(preds []eval.FilePrediction) {
			for _, p := range preds {
				line := tsvField(p.Path)
				for _, c := range eval.MostProbable(p.Probs, top) {
					line += fmt.Sprintf("\t%s\t%.4f", tsvField(classes[c]), p.Probs[c])
				}
				fmt.Fprintln(g.stdout, line)
			}
		})
	if err != nil {
		return err
	}
	if failed > 0 {
		return fmt.Errorf("%d of %d files could not be read as images", failed, len(files))
	}
	return nil
}

// tsvEscaper escapes what would break a tab-separated line: a backslash, a
// tab, a newline or a carriage return in a path or class name becomes \\,
// \t, \n or \r (the text-format escapes of tab-separated files; common
// practice), so every output line has exactly 1 + 2·top fields.
var tsvEscaper = strings.NewReplacer(`\`, `\\`, "\t", `\t`, "\n", `\n`, "\r", `\r`)

func tsvField(s string) string { return tsvEscaper.Replace(s) }
