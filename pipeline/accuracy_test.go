package pipeline_test

import (
	"fmt"
	"os"
	"runtime"
	"strings"
	"testing"
	"time"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/pipeline"
)

// The accuracy runs. They come at two scales, chosen by STRIATE_LONG:
//
//	STRIATE_LONG=1        full: 60,000 training and 10,000 test images, every
//	                      condition; the README's figures come from this run
//	                      (GOEXPERIMENT=simd go test -v -timeout 3h -run 'Accuracy|Label' ./pipeline)
//	STRIATE_LONG=reduced  CI's run: the first 10,000 training and the first
//	                      2,000 test images, fewer conditions, floors measured
//	                      at that scale (a few minutes on 2 cores)
//
// STRIATE_ACC=mnist,fashion,learned,labels (any subset; default all) picks the
// runs, and STRIATE_ACC_CONFIG=file.json replaces the preset, for tuning.
//
// Every figure is printed (t.Log, visible with -v and on failure), targets
// are reported as met or missed, and floors are asserted. Models are trained
// on clean training images only; the perturbations are those of
// datasets.Perturbation, applied to the test images: shifts in direction
// i mod 8 for test image i, rotations alternately counter-clockwise and
// clockwise.

// runScale is the scale of one accuracy run.
type runScale struct {
	full        bool
	train, test int // images taken from the front of each split; 0 = all
}

func longRuns(t *testing.T, which string) runScale {
	t.Helper()
	var sc runScale
	switch os.Getenv("STRIATE_LONG") {
	case "1":
		sc = runScale{full: true}
	case "reduced":
		sc = runScale{train: 10000, test: 2000}
	default:
		t.Skip("accuracy run: set STRIATE_LONG=1 (full, about an hour on 2 cores) or STRIATE_LONG=reduced (CI scale)")
	}
	if sel := os.Getenv("STRIATE_ACC"); sel != "" && !strings.Contains(sel, which) {
		t.Skipf("STRIATE_ACC=%s does not select %s", sel, which)
	}
	return sc
}

// pick returns the full figure or the reduced one.
func (sc runScale) pick(full, reduced float64) float64 {
	if sc.full {
		return full
	}
	return reduced
}

// accConfig is the preset for the dataset: "garments" for Fashion-MNIST,
// "digits" for MNIST (see pipeline.Preset).
func accConfig(t *testing.T, sc runScale, fashion bool) pipeline.Config {
	t.Helper()
	if p := os.Getenv("STRIATE_ACC_CONFIG"); p != "" {
		c, err := pipeline.LoadConfig(p)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("config from %s", p)
		return c
	}
	name := "digits"
	if fashion {
		name = "garments"
	}
	c, err := pipeline.Preset(name)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("preset %q: %s", name, pipeline.PresetAbout(name))
	if !sc.full {
		// The reduced runs train the head for half the preset's least
		// number of steps, which halves CI's longest step; the floors are
		// measured with this setting.
		c.HeadMinSteps = reducedHeadMinSteps
	}
	return c
}

// reducedHeadMinSteps is Config.HeadMinSteps in the reduced runs.
const reducedHeadMinSteps = 1500

// condition is one robustness test condition with the figure the project
// aims at on it: the LeNet-5 peer of the reference work (PyTorch 1.13,
// protocol of internal/benchwork's peers, trained on clean data on these
// machines) where one was measured, or the project's own target (0 = none).
type condition struct {
	name    string
	perturb pipeline.Perturb
	mnist   float64
	fashion float64
}

func fixed(p datasets.Perturbation) pipeline.Perturb {
	return func(i int) (datasets.Perturbation, uint64) { return p, uint64(i) + 1 }
}

func shift(l float64) pipeline.Perturb {
	return func(i int) (datasets.Perturbation, uint64) {
		return datasets.Perturbation{Kind: datasets.Shift, Level: l, Dir: i % 8}, 0
	}
}

func rot(deg float64) pipeline.Perturb {
	return func(i int) (datasets.Perturbation, uint64) {
		d := deg
		if i%2 == 1 {
			d = -d
		}
		return datasets.Perturbation{Kind: datasets.Rotate, Level: d}, 0
	}
}

var conditions = []condition{
	{"clean", nil, 0.990, 0.896},
	{"noise-0.1", fixed(datasets.Perturbation{Kind: datasets.Noise, Level: 0.1}), 0, 0},
	{"noise-0.2", fixed(datasets.Perturbation{Kind: datasets.Noise, Level: 0.2}), 0, 0},
	{"noise-0.3", fixed(datasets.Perturbation{Kind: datasets.Noise, Level: 0.3}), 0, 0.69},
	{"noise-0.5", fixed(datasets.Perturbation{Kind: datasets.Noise, Level: 0.5}), 0.84, 0},
	{"shift-2", shift(2), 0.92, 0},
	{"shift-4", shift(4), 0.80, 0.60}, // the project's own targets (the LeNet-5 peer measured 47%, 37%)
	{"rot-15", rot(15), 0, 0},
	{"rot-30", rot(30), 0.84, 0.27},
	{"contrast-0.5", fixed(datasets.Perturbation{Kind: datasets.Contrast, Level: 0.5}), 0, 0},
	{"contrast-0.25", fixed(datasets.Perturbation{Kind: datasets.Contrast, Level: 0.25}), 0.97, 0.48},
	{"blur-1", fixed(datasets.Perturbation{Kind: datasets.Blur, Level: 1}), 0, 0},
}

func workers() int { return runtime.GOMAXPROCS(0) }

type progressLog struct{}

func (progressLog) Step(int, int, string) {}

// fitAndScore fits cfg on train, prints the timings and the accuracy under
// every condition, and returns the accuracies by condition name.
func fitAndScore(t *testing.T, name string, cfg pipeline.Config, train, test *datasets.Set, opts pipeline.FitOptions, conds []condition) map[string]float64 {
	t.Helper()
	opts.Workers = workers()
	m, rep, err := pipeline.FitReported(cfg, train, opts)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("%s: fitted on %d images in %v (unsupervised %v, features %v, head %v, %d epochs, %d features)",
		name, train.N, rep.Total.Round(time.Second), rep.Unsupervised.Round(time.Second), rep.Features.Round(time.Second),
		rep.HeadTime.Round(time.Second), rep.Head.Epochs, rep.FeatureLen)
	out := map[string]float64{}
	var line strings.Builder
	for _, c := range conds {
		acc, err := pipeline.Accuracy(m, test, c.perturb, workers(), nil)
		if err != nil {
			t.Fatal(err)
		}
		out[c.name] = acc
		fmt.Fprintf(&line, " %s %.2f%%", c.name, 100*acc)
	}
	t.Logf("%s:%s", name, line.String())
	return out
}

func loadPair(t *testing.T, fashion bool, sc runScale) (train, test *datasets.Set) {
	t.Helper()
	load := datasets.LoadMNIST
	if fashion {
		load = datasets.LoadFashionMNIST
	}
	train, err := load(datasets.Train, "")
	if err != nil {
		t.Fatal(err)
	}
	test, err = load(datasets.Test, "")
	if err != nil {
		t.Fatal(err)
	}
	return train.First(sc.train), test.First(sc.test)
}

// Targets and floors. A target is a full-scale figure the project aims at;
// whether it is met is printed for every full run (t.Log; "TARGET MISSED"
// marks a miss) so the log carries the honest comparison. A floor is a
// regression guard the test asserts: at full scale it sits at a published
// external figure where one is known (noted beside it) and below what the
// presets reached when they were committed; at the reduced scale it sits a
// few standard errors (2,000 test images: about 0.3 points at 99%, 1 point
// at 70%) below what the presets reached in measured reduced runs, so a real
// regression fails CI while run-to-run noise does not.
func checkTargets(t *testing.T, sc runScale, name string, got map[string]float64, conds []condition, fashion bool, cleanTarget, cleanFloor float64) {
	t.Helper()
	if sc.full {
		target(t, name+" clean", got["clean"], cleanTarget)
		for _, c := range conds[1:] {
			want := c.mnist
			if fashion {
				want = c.fashion
			}
			if want > 0 {
				target(t, name+" "+c.name, got[c.name], want)
			}
		}
	}
	floor(t, name+" clean", got["clean"], cleanFloor)
	// Shift-4 is where invariant pooling and input centring must hold.
	if fashion {
		floor(t, name+" shift-4", got["shift-4"], sc.pick(0.60, reducedFloors["fashion shift-4"]))
	} else {
		floor(t, name+" shift-4", got["shift-4"], sc.pick(0.80, reducedFloors["mnist shift-4"]))
	}
	// Heavy noise is where the input stage's adaptive median filter and its
	// grey-level coring must hold: with both the presets reached 85.2%
	// (MNIST noise 0.5) and 68.8-70% (Fashion noise 0.3); without the filter
	// the default pipeline had 47.3% and 47.5%, without the coring 77.3% and
	// 65.7%. The MNIST floor catches either going missing, the Fashion floor
	// the filter.
	if fashion {
		floor(t, name+" noise-0.3", got["noise-0.3"], sc.pick(0.64, reducedFloors["fashion noise-0.3"]))
	} else {
		floor(t, name+" noise-0.5", got["noise-0.5"], sc.pick(0.80, reducedFloors["mnist noise-0.5"]))
	}
	// Rotation on Fashion-MNIST is where the garments preset's upright
	// turning must hold: 70.5% with it, 26.2% without.
	if fashion {
		floor(t, name+" rot-30", got["rot-30"], sc.pick(0.50, reducedFloors["fashion rot-30"]))
	}
}

// reducedFloors are the floors of the reduced (CI) runs: measured figures
// of the presets at that scale (in the comment: the measured values, SIMD
// build, 2-core machine) less a margin of about three standard errors.
var reducedFloors = map[string]float64{
	// Measured 3 December 2026 (SIMD build, heavily shared 2-core machine);
	// standard errors at 2,000 images in brackets.
	"mnist clean":       0.975, // 98.50% (0.27)
	"mnist shift-4":     0.975, // 98.65% (0.26)
	"mnist noise-0.5":   0.760, // 79.45% (0.90)
	"fashion clean":     0.880, // 90.05% (0.67)
	"fashion shift-4":   0.795, // 82.30% (0.85)
	"fashion noise-0.3": 0.655, // 68.85% (1.04)
	"fashion rot-30":    0.670, // 70.40% (1.02)
	"mnist learned":     0.970, // 98.35% (0.28)
	"fashion learned":   0.880, // 90.55% (0.65)
	"mnist 10 labels":   0.870, // 91.50% (0.62; the 100 labelled images add more)
	"mnist 100 labels":  0.955, // 97.45% (0.35)
}

// target prints whether got reaches the target.
func target(t *testing.T, what string, got, want float64) {
	t.Helper()
	if got >= want {
		t.Logf("target met: %s %.2f%% ≥ %.1f%%", what, 100*got, 100*want)
	} else {
		t.Logf("TARGET MISSED: %s %.2f%% < %.1f%%", what, 100*got, 100*want)
	}
}

// floor asserts a regression guard.
func floor(t *testing.T, what string, got, min float64) {
	t.Helper()
	if got < min {
		t.Errorf("%s: %.2f%% is below the regression floor %.2f%%", what, 100*got, 100*min)
	}
}

// handClean records the hand-set clean accuracies of this run, so that the
// learned front end's figures can be printed beside them.
var handClean = map[string]float64{}

func TestAccuracyMNIST(t *testing.T) {
	sc := longRuns(t, "mnist")
	train, test := loadPair(t, false, sc)
	got := fitAndScore(t, "mnist hand-set", accConfig(t, sc, false), train, test, pipeline.FitOptions{}, conditions)
	handClean["mnist"] = got["clean"]
	// Target ≥ 99.4% on the 10,000 test digits. Full-scale floor 99.0%: the
	// LeNet-5-like CNN of ../shared/bench's protocol measured on these
	// machines (99.03%).
	checkTargets(t, sc, "mnist hand-set", got, conditions, false, 0.994, sc.pick(0.990, reducedFloors["mnist clean"]))
}

// fashionConditions are the conditions with a CNN baseline on
// Fashion-MNIST (the full sweep runs on MNIST; this keeps the runs lean).
var fashionConditions = func() []condition {
	var out []condition
	for _, c := range conditions {
		if c.name == "clean" || c.fashion > 0 {
			out = append(out, c)
		}
	}
	return out
}()

func TestAccuracyFashion(t *testing.T) {
	sc := longRuns(t, "fashion")
	train, test := loadPair(t, true, sc)
	got := fitAndScore(t, "fashion hand-set", accConfig(t, sc, true), train, test, pipeline.FitOptions{}, fashionConditions)
	handClean["fashion"] = got["clean"]
	// Target ≥ 92.0% (HOG + SVM in the dataset's README: 92.6%). Full-scale
	// floor 89.7%: the best scikit-learn classifier of Xiao et al. 2017.
	checkTargets(t, sc, "fashion hand-set", got, fashionConditions, true, 0.920, sc.pick(0.897, reducedFloors["fashion clean"]))
}

// TestAccuracyLearned fits the same pipeline with the simple-cell bank
// learned from the shipped photos (Config.LearnBank) and prints its clean
// accuracy beside the hand-set one. Floors: the learned bank must stay
// within learnedSlack of the hand-set figure of the same run, and above a
// fixed floor (full scale: MNIST 98.0%, one point under the CNN's 99.03%;
// Fashion 89.7%, the best scikit-learn classifier of Xiao et al. 2017).
func TestAccuracyLearned(t *testing.T) {
	sc := longRuns(t, "learned")
	// learnedSlack: a learned bank of 24 atoms is not tuned like the
	// hand-set one; two points of accuracy are the most we accept to lose
	// (the quick demo runs measured differences of −1.8 to +1.5 points).
	const learnedSlack = 0.02
	floors := map[string]float64{
		"mnist":   sc.pick(0.980, reducedFloors["mnist learned"]),
		"fashion": sc.pick(0.897, reducedFloors["fashion learned"]),
	}
	for _, name := range []string{"mnist", "fashion"} {
		train, test := loadPair(t, name == "fashion", sc)
		cfg := accConfig(t, sc, name == "fashion")
		if cfg.LearnBank == nil {
			cfg.LearnBank = &pipeline.LearnBankConfig{}
		}
		got := fitAndScore(t, name+" learned", cfg, train, test, pipeline.FitOptions{}, conditions[:1])
		floor := floors[name]
		if h, ok := handClean[name]; ok {
			t.Logf("%s: hand-set %.2f%%, learned %.2f%%", name, 100*h, 100*got["clean"])
			floor = max(floor, h-learnedSlack)
		}
		if got["clean"] < floor {
			t.Errorf("%s learned front end: %.2f%%; want ≥ %.2f%%", name, 100*got["clean"], 100*floor)
		}
	}
}

// TestLabelEfficiency fits the unsupervised stages on all the training
// images of the run without labels, and the head on seeded subsets of 10,
// 100 and (full scale only) 1,000 labelled images per class.
func TestLabelEfficiency(t *testing.T) {
	sc := longRuns(t, "labels")
	train, test := loadPair(t, false, sc)
	cfg := accConfig(t, sc, false)
	// Targets (the CNN from scratch: 80%, 94%, 98%). Full-scale floors:
	// regression guards a few points under the CNN's figures.
	targets := map[int]float64{10: 0.88, 100: 0.97, 1000: 0.990}
	floors := map[int]float64{
		10:   sc.pick(0.70, reducedFloors["mnist 10 labels"]),
		100:  sc.pick(0.92, reducedFloors["mnist 100 labels"]),
		1000: 0.975,
	}
	pers := []int{10, 100, 1000}
	if !sc.full {
		pers = pers[:2]
	}
	for _, per := range pers {
		sub := train.Subset(datasets.PerClass(train.Labels, per, 1))
		got := fitAndScore(t, fmt.Sprintf("mnist %d labels/class", per), cfg, sub, test,
			pipeline.FitOptions{Unlabeled: train}, conditions[:1])
		what := fmt.Sprintf("mnist %d labels per class", per)
		if sc.full {
			target(t, what, got["clean"], targets[per])
		}
		floor(t, what, got["clean"], floors[per])
	}
}
