package pipeline

import (
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

var devVariants = map[string]func(*InputConfig){
	"base":     func(*InputConfig) {},
	"adaptive": func(in *InputConfig) { in.Denoise = DenoiseAdaptive },
	"smooth":   func(in *InputConfig) { in.Denoise = DenoiseSmooth },
	"deblur":   func(in *InputConfig) { in.Deblur = DeblurAuto },
	"robust":   func(in *InputConfig) { in.Center = CenterRobust },
	"both":     func(in *InputConfig) { in.Denoise, in.Center = DenoiseAdaptive, CenterRobust },
}

// devFitSets gives, for a refitted variant ("fit:NAME"), the training set
// it is fitted on in place of the first 10,000 training images (augmented
// training data); absent means those images.
var devFitSets = map[string]func(*testing.T, *datasets.Set) *datasets.Set{}

func devAcc(m *Model, s *datasets.Set) float64 {
	imgs := make([][]float32, s.N)
	for i := range imgs {
		imgs[i] = s.Float(nil, i)
	}
	probs, err := m.PredictBatch(imgs, s.H, s.W, runtime.GOMAXPROCS(0))
	if err != nil {
		panic(err)
	}
	c := 0
	for i, p := range probs {
		best := 0
		for k, v := range p {
			if v > p[best] {
				best = k
			}
		}
		if best == s.Labels[i] {
			c++
		}
	}
	return float64(c) / float64(s.N)
}

// TestInputSuiteValidation is how the input stage's settings are chosen
// (issue 12's rule): a preset pipeline (digits on MNIST, garments on
// Fashion-MNIST, seed 1) is fitted once on the first 10,000 training
// images, and each candidate input stage is then scored on validation
// images from the training split — images 50,000-51,999, never test
// images — under the whole development suite (datasets.DevelopmentSuite:
// the 15 MNIST-C kinds at severities 1-5 and the six-kind grid, seed
// datasets.SuiteSeed). A candidate is judged by the mean over the MNIST-C
// kinds and by the worst kind, never at one condition. Candidates that
// change clean images are scored with the model fitted under the preset's
// own input stage (no refit), which handicaps them slightly.
//
// Run (about 10 minutes per candidate on 2 busy cores):
//
//	STRIATE_INPUT_SUITE=mnist STRIATE_INPUT_VARIANTS=base,adaptive,robust \
//	  nice -n 10 go test -v -timeout 2h -run InputSuiteValidation ./pipeline
//
// STRIATE_INPUT_DIR, if set, caches the fitted model and writes each
// candidate's figures there as JSON.
//
// Figures (3 Dec 2026; accuracy %, validation images; MNIST-C mean over
// the 15 kinds; no refit):
//
//	candidate                                 MNIST mean / worst   clean
//	base (denoise auto, center mass)          78.97 / stripe 30.3  98.70
//	  (Fashion-MNIST, garments preset: 61.04 / stripe 26.2, clean 89.60)
//	adaptive, open 8 then close 4             80.25 / stripe 29.2  98.45
//	  (impulse 73.4→95.1, dotted line 74.5→95.4, zigzag 55.9→60.9;
//	   shot noise 92.8→77.6, canny edges 51.3→42.3)
//	adaptive, close 4 then open 8             80.27 / stripe 29.2  98.45
//	  (shot noise 79.0, impulse 94.2; grid noise 88.7→85.8, grid mean
//	   92.69→92.19: the opening first is kept)
//	adaptive, open 8 then close 4, Fashion    63.45 / stripe 25.5  89.65
//	  (from 61.04; impulse 48.3→79.7, dotted line 62.0→83.2, zigzag
//	   50.2→54.1; shot noise 62.8→55.7, canny edges 36.5→31.7, grid
//	   noise 66.0→62.4)
//	robust centring (denoise auto, center robust) 77.18 / stripe 30.3  97.90
//	  (dotted line 74.5→75.4, zigzag 55.9→56.1; clean −0.8 without refit)
//	(4 Dec 2026, issue 11: fragments pasted into the item's image)
//	attend (center attend, no refit)          80.36 / stripe 26.9  98.55
//	  Fashion                                 62.99 / stripe 27.0  88.60
//	  (impulse 73.3→90.8, dotted line 74.5→96.2; shot noise 92.8→80.6)
//	fit:attend (refitted)                     78.75 / stripe 33.7  98.20
//	  Fashion                                 62.39 / stripe 24.2  88.65
//	fit:aug (preset refitted on its images and their Set.Fragmented copies)
//	                                          85.68 / stripe 59.2  98.60
//	  Fashion                                 66.72 / canny 35.5   89.50
//	fit:attend-aug                            81.67 / stripe 35.5  98.20
//	  Fashion                                 65.58 / canny 28.7   89.15
//
// "attend" is not adopted: without a refit it lowers MNIST's worst kind,
// with one MNIST's mean and Fashion-MNIST's worst kind. Fragments in
// training raise the mean and the worst kind on both data sets, but at full
// scale (60,000 training images, test split) the clean accuracy falls from
// 99.40% to 99.26% on MNIST and from 92.41% to 92.13% on Fashion-MNIST, so
// it is a recipe, not a preset's default (TestAttendFragments).
//
// Figures of 4 Dec 2026 (SIMD build, `/work/heavy run`, both datasets in
// one run; the base figures differ from 3 Dec's by the head's summation
// order):
//
//	candidate                         MNIST mean / worst   clean  grid mean
//	base (denoise auto)               78.93 / stripe 29.84  98.70  93.05
//	smooth (denoise smooth)           78.96 / stripe 29.84  98.70  93.10
//	  (Gaussian noise σ = 0.2 96.30→97.25, 0.25 95.85→96.75, 0.35
//	   91.55→92.25; impulse noise 73.32→73.80; no condition worse)
//	base, Fashion                     61.07 / stripe 25.60  89.65  75.36
//	smooth, Fashion                   61.08 / stripe 25.60  89.65  75.42
//	  (σ = 0.15 74.35→75.65, 0.2 73.25→75.75; shot noise 62.94→63.14;
//	   impulse noise 48.16→48.11, the largest loss, 0.6 at severity 5)
//
// Figures of 4 Dec 2026, 21:10-21:44 UTC (the same models; input.deblur
// "auto" on top of "smooth"; the reference is measured on the 10,000 fitting
// images, 0.691 px on MNIST, 0.738 on Fashion-MNIST):
//
//	candidate                                     MNIST mean / worst   grid mean
//	smooth                                        78.96 / stripe 29.84  93.10
//	deblur without gates                          78.87 / stripe 29.53  94.12
//	  (blur 87.66→93.77, σ 2.5 66.15→84.15; glass blur 87.22→86.14,
//	   severity 5 67.7→62.8; stripe severity 1 44.35→42.70)
//	deblur, spread ≤ 0.3                          78.93 / stripe 29.62  94.10
//	deblur, spread ≤ 0.4                          78.90 / stripe 29.6   94.12
//	deblur, spread ≤ 0.3, excess ≥ 0.4            78.93 / stripe 29.6   94.10
//	deblur, spread ≤ 0.3, excess ≥ 0.5 (adopted)  78.95 / stripe 29.84  94.10
//	  (blur 87.66→93.64; glass blur 87.22→87.05)
//	smooth, Fashion                               61.08 / stripe 25.60  75.42
//	deblur without gates, Fashion                 61.30 / stripe 25.75  76.98
//	deblur, spread ≤ 0.3, Fashion                 61.08 / stripe 25.7   76.32
//	deblur, spread ≤ 0.3, excess ≥ 0.5, Fashion   61.09 / stripe 25.60  76.31
//	  (blur 69.63→74.93, σ 2.5 46.5→55.45)
//
// The gated deblur is the only candidate that keeps the worst kind on both
// datasets; the MNIST-C means move by 0.01 point (on MNIST, 15 of 2,000
// images at glass blur severity 5), so the presets take it. Clean
// validation accuracy is unchanged on both (98.70%, 89.65%; no refit).
//
// "smooth" is not worse on the mean and the worst kind on either dataset,
// so the digits and garments presets take it. Neither adaptive nor
// robust centring is adopted by a preset: the area filters raise the MNIST-C mean
// on both datasets (+1.3 and +2.4 points) but lower the worst kind and cost shot noise and canny edges (strokes
// broken into fragments smaller than the area threshold are removed with
// the noise); robust centring gains little on the line kinds and its clean
// cost can only be judged after a refit.
func TestInputSuiteValidation(t *testing.T) {
	ds := os.Getenv("STRIATE_INPUT_SUITE")
	if ds != "mnist" && ds != "fashion" {
		t.Skip("input-stage validation: set STRIATE_INPUT_SUITE=mnist or fashion and STRIATE_INPUT_VARIANTS")
	}
	dir := os.Getenv("STRIATE_INPUT_DIR")
	fashion := ds == "fashion"
	load, preset := datasets.LoadMNIST, "digits"
	if fashion {
		load, preset = datasets.LoadFashionMNIST, "garments"
	}
	train, err := load(datasets.Train, "")
	if err != nil {
		t.Fatal(err)
	}
	idx := make([]int, 2000)
	for i := range idx {
		idx[i] = 50000 + i
	}
	val := train.Subset(idx)
	fitSet := train.First(10000)
	suite := datasets.DevelopmentSuite()
	sets := make([]*datasets.Set, len(suite))
	for i, c := range suite {
		sets[i], err = val.Perturbed(c.Op, datasets.SuiteSeed, runtime.GOMAXPROCS(0))
		if err != nil {
			t.Fatal(err)
		}
	}
	models := map[string]*Model{}
	for _, spec := range strings.Split(os.Getenv("STRIATE_INPUT_VARIANTS"), ",") {
		refit := strings.HasPrefix(spec, "fit:")
		name := strings.TrimPrefix(spec, "fit:")
		mod, ok := devVariants[name]
		if !ok {
			t.Fatalf("no variant %q", name)
		}
		cfg, _ := Preset(preset)
		cfg.Seed = 1
		key := "base"
		if refit {
			key = name
		}
		mod(&cfg.Input)
		base := models[key]
		if base == nil {
			path := filepath.Join(dir, fmt.Sprintf("%s-%s.striate", ds, key))
			if base, err = LoadFile(path); dir == "" || err != nil {
				fc, _ := Preset(preset)
				fc.Seed = 1
				fs := fitSet
				if refit {
					mod(&fc.Input)
					if f := devFitSets[name]; f != nil {
						fs = f(t, fitSet)
					}
				}
				if base, err = Fit(fc, fs, FitOptions{Workers: runtime.GOMAXPROCS(0)}); err != nil {
					t.Fatal(err)
				}
				if dir != "" {
					if err := base.SaveFile(path); err != nil {
						t.Fatal(err)
					}
				}
			}
			models[key] = base
		}
		if cfg.Input.Deblur == DeblurAuto && cfg.Input.DeblurRef == 0 {
			// No refit: the reference Fit would measure, on the same images.
			cfg.Input.DeblurRef = measureDeblurRef(base.plan, fitSet, runtime.GOMAXPROCS(0))
			t.Logf("%s %s: deblur reference %.3f px", ds, spec, cfg.Input.DeblurRef)
		}
		p2 := *base.plan
		p2.cfg.Input = cfg.Input.withDefaults()
		m, err := newModel(&p2, base.classes, base.tmpl, base.guard, base.head)
		if err != nil {
			t.Fatal(err)
		}
		res := map[string]float64{"clean": devAcc(m, val)}
		kind := map[string][]float64{}
		var order []string
		for i, c := range suite {
			a := devAcc(m, sets[i])
			res[c.Name] = a
			k := c.Group + "/" + c.Kind
			if kind[k] == nil {
				order = append(order, k)
			}
			kind[k] = append(kind[k], a)
		}
		var line strings.Builder
		mean, n, worst, wk := 0.0, 0, 2.0, ""
		gmean, gn := 0.0, 0
		for _, k := range order {
			s := 0.0
			for _, v := range kind[k] {
				s += v
			}
			s /= float64(len(kind[k]))
			res["kind:"+k] = s
			fmt.Fprintf(&line, " %s=%.1f", strings.SplitN(k, "/", 2)[1], 100*s)
			if strings.HasPrefix(k, datasets.GroupMNISTC) {
				mean += s
				n++
				if s < worst {
					worst, wk = s, k
				}
			} else {
				gmean += s
				gn++
			}
		}
		mean /= float64(max(n, 1))
		gmean /= float64(max(gn, 1))
		res["mean"], res["worst"], res["gridmean"] = mean, worst, gmean
		t.Logf("%s %s: clean %.2f mnistc-mean %.2f worst %s %.1f grid-mean %.2f |%s", ds, spec, 100*res["clean"], 100*mean, wk, 100*worst, 100*gmean, line.String())
		if dir != "" {
			b, _ := json.MarshalIndent(res, "", " ")
			if err := os.WriteFile(filepath.Join(dir, fmt.Sprintf("%s-%s.json", ds, strings.ReplaceAll(spec, ":", "_"))), b, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
}
