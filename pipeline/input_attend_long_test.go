package pipeline

import (
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// The candidates of TestInputSuiteValidation: "attend" (input.center
// "attend"), "aug" (the preset, fitted with fragments in training: its
// images followed by their Set.Fragmented copies; use it as "fit:aug") and
// "attend-aug" (both).
func init() {
	devVariants["attend"] = func(in *InputConfig) { in.Center = CenterAttend }
	devVariants["aug"] = func(*InputConfig) {}
	devVariants["attend-aug"] = func(in *InputConfig) { in.Center = CenterAttend }
	aug := func(t *testing.T, s *datasets.Set) *datasets.Set { return augmented(t, s, "append") }
	devFitSets["aug"], devFitSets["attend-aug"] = aug, aug
}

// attendParams sets CenterAttend's parameters for one candidate ("g/k/f":
// gap px, keep fraction, fringe px) and returns a function restoring them.
func attendParams(t *testing.T, spec string) func() {
	g, k, f := attendGap, attendKeepFrac, attendFringe
	if spec != "" {
		if _, err := fmt.Sscanf(spec, "%d/%g/%d", &attendGap, &attendKeepFrac, &attendFringe); err != nil {
			t.Fatalf("attend parameters %q: %v (want gap/keep/fringe, e.g. 2/0.5/1)", spec, err)
		}
	}
	return func() { attendGap, attendKeepFrac, attendFringe = g, k, f }
}

// withInput returns base's fitted stages under another input stage (no
// refit).
func withInput(t *testing.T, base *Model, in InputConfig) *Model {
	t.Helper()
	p2 := *base.plan
	p2.cfg.Input = in.withDefaults()
	m, err := newModel(&p2, base.classes, base.tmpl, base.guard, base.head)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// fitCached fits cfg on train, or loads the model saved under name in dir.
func fitCached(t *testing.T, dir, name string, cfg Config, train *datasets.Set) *Model {
	t.Helper()
	path := filepath.Join(dir, name+".striate")
	if dir != "" {
		if m, err := LoadFile(path); err == nil {
			return m
		}
	}
	m, err := Fit(cfg, train, FitOptions{Workers: runtime.GOMAXPROCS(0)})
	if err != nil {
		t.Fatal(err)
	}
	if dir != "" {
		if err := m.SaveFile(path); err != nil {
			t.Fatal(err)
		}
	}
	return m
}

// augmented returns train with fragments (datasets.Set.Fragmented, seed
// augSeed, fragments from training images) in every other image ("mix": the
// same number of images) or appended ("append": every image clean and
// fragmented, twice the images).
func augmented(t *testing.T, train *datasets.Set, how string) *datasets.Set {
	t.Helper()
	const augSeed = 7
	f, err := train.Fragmented(datasets.ClutterConfig{Seed: augSeed})
	if err != nil {
		t.Fatal(err)
	}
	n := train.H * train.W
	switch how {
	case "mix":
		out := train.Subset(nil)
		out.Pix, out.Labels, out.N = append([]uint8(nil), train.Pix...), append([]int(nil), train.Labels...), train.N
		for i := 1; i < train.N; i += 2 {
			copy(out.Pix[i*n:(i+1)*n], f.Image(i))
		}
		return out
	case "append":
		out := train.Subset(nil)
		out.Pix = append(append([]uint8(nil), train.Pix...), f.Pix...)
		out.Labels = append(append([]int(nil), train.Labels...), train.Labels...)
		out.N = 2 * train.N
		return out
	}
	t.Fatalf("STRIATE_ATTEND_AUG=%q: want mix or append", how)
	return nil
}

// TestAttendFragments measures input.center "attend" on the issue-11
// condition (datasets.Set.Fragmented: four 8×8 fragments of other images of
// the split pasted into each 28×28 image, seed datasets.SuiteSeed) and on
// clean images, with the preset of the data set (digits on MNIST, garments
// on Fashion-MNIST, seed 1). Off unless STRIATE_ATTEND is mnist or fashion.
//
// STRIATE_ATTEND_SCALE=val (default): the model is fitted on the first
// 10,000 training images and scored on validation images 50,000-51,999 of
// the training split, under the preset's input stage and under "attend"
// with each parameter set of STRIATE_ATTEND_PARAMS (";"-separated
// gap/keep/fringe, default the constants), no refit: how the parameters
// were chosen. STRIATE_ATTEND_SCALE=test: the preset fitted on all 60,000
// training images, with and without "attend", scored on the 10,000 test
// images: the figures reported. STRIATE_INPUT_DIR caches the models (the
// validation model is the one TestInputSuiteValidation caches).
// STRIATE_ATTEND_AUG=mix or append adds the preset fitted with fragments in
// training (see augmented). STRIATE_ATTEND_REFIT=0 skips the refit.
//
// Figures (4 Dec 2026, SIMD build, under /work/heavy run on busy cores;
// accuracy %, clean / fragments):
//
//	validation (fit on 10,000, no refit)        MNIST          Fashion-MNIST
//	base                                        98.70 / 63.65  89.65 / 56.10
//	attend, parameters gap/keep/fringe 2/0.5/1  98.55 / 70.40  89.00 / 58.15
//	attend 1/0.5/1 (gap 1 = 0: 8-connectivity)  98.40 / 75.35  88.45 / 59.30
//	attend 1/0.3/1                              98.50 / 72.25  88.65 / 58.75
//	attend 1/0.7/1                              98.15 / 76.25  88.15 / 58.95
//	attend 1/0.5/0 (adopted: 0/0.5/0)           98.55 / 75.70  88.60 / 59.90
//	attend 1/0.5/2                              98.40 / 75.30  88.40 / 59.05
//	fragments in training, mix                  98.60 / 85.05
//	fragments in training, append               98.60 / 88.35
//	  the same scored with attend               98.50 / 88.90
//
//	test (fit on 60,000)                        MNIST          Fashion-MNIST
//	base                                        99.40 / 65.63  92.41 / 57.27
//	attend, no refit                            99.22 / 76.28  91.85 / 61.48
//	attend, refit                               99.32 / 75.06  91.75 / 61.22
//	fragments in training (append)              99.26 / 92.29  92.13 / 85.07
//	  the same scored with attend               99.03 / 93.20  91.53 / 84.07
//
// Of the fragments' grey on MNIST validation images only 24% lies in ink
// components apart from the digit (10% on Fashion-MNIST), 7% (5%) below
// the threshold, the rest in the item's own component: the ceiling of any
// component-based attention, which is why "attend" gains 10 points on MNIST
// and 4 on Fashion-MNIST, not the 30 the issue asks for.
func TestAttendFragments(t *testing.T) {
	ds := os.Getenv("STRIATE_ATTEND")
	if ds != "mnist" && ds != "fashion" {
		t.Skip("attend measurement: set STRIATE_ATTEND=mnist or fashion (and STRIATE_ATTEND_SCALE=val or test)")
	}
	dir := os.Getenv("STRIATE_INPUT_DIR")
	load, preset := datasets.LoadMNIST, "digits"
	if ds == "fashion" {
		load, preset = datasets.LoadFashionMNIST, "garments"
	}
	train, err := load(datasets.Train, "")
	if err != nil {
		t.Fatal(err)
	}
	cfg, _ := Preset(preset)
	cfg.Seed = 1
	acfg := cfg
	acfg.Input.Center = CenterAttend
	score := func(name string, m *Model, clean, frag *datasets.Set) {
		t.Logf("%s %s: clean %.2f fragments %.2f", ds, name, 100*devAcc(m, clean), 100*devAcc(m, frag))
	}
	if os.Getenv("STRIATE_ATTEND_SCALE") == "test" {
		test, err := load(datasets.Test, "")
		if err != nil {
			t.Fatal(err)
		}
		frag, err := test.Fragmented(datasets.ClutterConfig{Seed: datasets.SuiteSeed})
		if err != nil {
			t.Fatal(err)
		}
		base := fitCached(t, dir, ds+"-full-base", cfg, train)
		score("base", base, test, frag)
		score("base+attend (no refit)", withInput(t, base, acfg.Input), test, frag)
		if os.Getenv("STRIATE_ATTEND_REFIT") != "0" {
			score("attend (refit)", fitCached(t, dir, ds+"-full-attend", acfg, train), test, frag)
		}
		if aug := os.Getenv("STRIATE_ATTEND_AUG"); aug != "" {
			am := fitCached(t, dir, ds+"-full-aug-"+aug, cfg, augmented(t, train, aug))
			score("base, fragments in training ("+aug+")", am, test, frag)
			score("attend (no refit), fragments in training ("+aug+")", withInput(t, am, acfg.Input), test, frag)
		}
		return
	}
	idx := make([]int, 2000)
	for i := range idx {
		idx[i] = 50000 + i
	}
	val := train.Subset(idx)
	frag, err := val.Fragmented(datasets.ClutterConfig{Seed: datasets.SuiteSeed})
	if err != nil {
		t.Fatal(err)
	}
	base := fitCached(t, dir, ds+"-base", cfg, train.First(10000))
	score("base", base, val, frag)
	for _, spec := range strings.Split(os.Getenv("STRIATE_ATTEND_PARAMS"), ";") {
		restore := attendParams(t, spec)
		score(fmt.Sprintf("attend %d/%g/%d", attendGap, attendKeepFrac, attendFringe), withInput(t, base, acfg.Input), val, frag)
		restore()
	}
	if aug := os.Getenv("STRIATE_ATTEND_AUG"); aug != "" {
		am := fitCached(t, dir, ds+"-base-aug-"+aug, cfg, augmented(t, train.First(10000), aug))
		score("base, fragments in training ("+aug+")", am, val, frag)
		score("attend (no refit), fragments in training ("+aug+")", withInput(t, am, acfg.Input), val, frag)
	}
}
