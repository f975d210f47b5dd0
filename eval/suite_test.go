package eval

import (
	"fmt"
	"math"
	"reflect"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// markOp copies the image and writes Code/255 into pixel 0, so a predictor
// can tell which condition an image went through.
type markOp struct {
	Code int
	Name string
}

func (m markOp) Apply(dst, src []float32, h, w int, seed uint64) {
	copy(dst, src)
	dst[0] = float32(m.Code) / 255
}

func (m markOp) String() string { return m.Name }

// subsetPredictor is right on the first Right[code] images of a condition
// and wrong on the rest: it reads the condition code from pixel 0 and the
// image index from pixel 1 (both stored as bytes, so exact), and knows the
// label of image i is i mod classes.
type subsetPredictor struct {
	Classes int
	Right   map[int]int
}

func (s subsetPredictor) NumClasses() int { return s.Classes }

func (s subsetPredictor) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	out := make([][]float32, len(imgs))
	for j, im := range imgs {
		code := int(math.Round(255 * float64(im[0])))
		i := int(math.Round(255 * float64(im[1])))
		k, ok := s.Right[code]
		if !ok {
			return nil, fmt.Errorf("fake: no count for condition code %d", code)
		}
		c := i % s.Classes
		if i >= k {
			c = (c + 1) % s.Classes
		}
		p := make([]float32, s.Classes)
		p[c] = 1
		out[j] = p
	}
	return out, nil
}

// indexedSet returns n h×w images of classes i mod k whose pixel 1 holds the
// image index (n ≤ 256).
func indexedSet(n, h, w, k int) *datasets.Set {
	s := &datasets.Set{Name: "indexed-test", N: n, H: h, W: w, Pix: make([]uint8, n*h*w), Labels: make([]int, n)}
	for c := range k {
		s.Classes = append(s.Classes, fmt.Sprint("class", c))
	}
	for i := range n {
		s.Pix[i*h*w+1] = uint8(i)
		for j := 2; j < h*w; j++ {
			s.Pix[i*h*w+j] = uint8(37 * (i + j) % 256)
		}
		s.Labels[i] = i % k
	}
	return s
}

// knownSuite lists MNIST-C-group kinds "alpha" (3 severities) and "beta"
// (2), and grid kinds "noise" (2 levels) and "scale" (2 levels, either side
// of the identity 1), with the number of the n = 40 images the subset
// predictor gets right under each (code 0 is the clean set).
func knownSuite() ([]datasets.SuiteCondition, map[int]int) {
	type row struct {
		group, kind string
		level       float64
		right       int
	}
	rows := []row{
		{datasets.GroupMNISTC, "alpha", 1, 38}, {datasets.GroupMNISTC, "alpha", 2, 30}, {datasets.GroupMNISTC, "alpha", 3, 16},
		{datasets.GroupMNISTC, "beta", 1, 34}, {datasets.GroupMNISTC, "beta", 2, 20},
		{datasets.GroupGrid, "noise", 0.1, 36}, {datasets.GroupGrid, "noise", 0.2, 12},
		{datasets.GroupGrid, "scale", 1.2, 22}, {datasets.GroupGrid, "scale", 0.8, 26},
	}
	right := map[int]int{0: 39}
	var suite []datasets.SuiteCondition
	for i, r := range rows {
		name := fmt.Sprintf("%s-%g", r.kind, r.level)
		suite = append(suite, datasets.SuiteCondition{Name: name, Group: r.group, Kind: r.kind, Unit: "u", Level: r.level,
			Op: markOp{Code: i + 1, Name: name}})
		right[i+1] = r.right
	}
	return suite, right
}

// A predictor right on a known subset of each condition's images gets
// exactly those accuracies, Wilson intervals (checked against SciPy in
// wilson_test.go) and the hand-worked per-kind means, mean and worst kind.
func TestScoreSuiteKnownSubset(t *testing.T) {
	const n = 40
	suite, right := knownSuite()
	test := indexedSet(n, 4, 4, 4)
	r, err := ScoreSuite("subset", subsetPredictor{4, right}, test, suite, SuiteConfig{Run: RunOptions{Batch: 7}})
	if err != nil {
		t.Fatal(err)
	}
	if r.Clean.Correct != 39 || r.Clean.Accuracy != 39.0/n || r.Seed != datasets.SuiteSeed {
		t.Errorf("clean %d correct (%v), seed %d; want 39 (0.975), seed %d", r.Clean.Correct, r.Clean.Accuracy, r.Seed, datasets.SuiteSeed)
	}
	if len(r.Points) != len(suite) {
		t.Fatalf("%d points for %d conditions", len(r.Points), len(suite))
	}
	for i, p := range r.Points {
		k := right[i+1]
		if p.Name != suite[i].Name || p.N != n || p.Correct != k || p.Accuracy != float64(k)/n || p.CI != Wilson(k, n, 0.95) {
			t.Errorf("point %d = %+v; want %s with %d/%d correct", i, p, suite[i].Name, k, n)
		}
		for j, c := range p.Pred {
			if want := j%4 == c; want != (j < k) {
				t.Errorf("%s: image %d predicted %d", p.Name, j, c)
				break
			}
		}
	}
	// Hand-worked: alpha (38+30+16)/3/40 = 0.7, beta (34+20)/2/40 = 0.675,
	// noise (36+12)/2/40 = 0.6, scale (22+26)/2/40 = 0.6; the MNIST-C mean
	// (0.7+0.675)/2 = 0.6875 and the worst kind is beta.
	want := []KindScore{{"alpha", datasets.GroupMNISTC, 3, 0.7}, {"beta", datasets.GroupMNISTC, 2, 0.675},
		{"noise", datasets.GroupGrid, 2, 0.6}, {"scale", datasets.GroupGrid, 2, 0.6}}
	if len(r.Kinds) != len(want) {
		t.Fatalf("kinds %+v; want %+v", r.Kinds, want)
	}
	for i, k := range r.Kinds {
		if k.Kind != want[i].Kind || k.Group != want[i].Group || k.Conditions != want[i].Conditions || math.Abs(k.Accuracy-want[i].Accuracy) > 1e-15 {
			t.Errorf("kind %d = %+v; want %+v", i, k, want[i])
		}
	}
	if r.CorruptionKinds != 2 || math.Abs(r.MeanCorruption-0.6875) > 1e-15 || r.Worst == nil || r.Worst.Kind != "beta" {
		t.Errorf("mean corruption %v over %d kinds, worst %+v; want 0.6875 over 2, beta", r.MeanCorruption, r.CorruptionKinds, r.Worst)
	}
	// The scale curve passes through the clean point at its identity 1.
	curve := r.GridCurve("scale")
	var levels []float64
	var correct []int
	for _, p := range curve {
		levels = append(levels, p.Level)
		correct = append(correct, p.Correct)
	}
	if !reflect.DeepEqual(levels, []float64{0.8, 1, 1.2}) || !reflect.DeepEqual(correct, []int{26, 39, 22}) {
		t.Errorf("scale curve levels %v correct %v; want [0.8 1 1.2] [26 39 22]", levels, correct)
	}
	if c := r.GridCurve("noise"); len(c) != 3 || c[0].Level != 0 || c[0].Correct != 39 {
		t.Errorf("noise curve %+v; want the clean point first at level 0", c)
	}
	if got := r.GridKinds(); !reflect.DeepEqual(got, []string{"noise", "scale"}) {
		t.Errorf("grid kinds %v", got)
	}
}

// The summary against hand-worked values, with a tie for the worst kind
// (the first in suite order wins) and grid kinds kept out of the mean.
func TestSummarise(t *testing.T) {
	m, g := datasets.GroupMNISTC, datasets.GroupGrid
	groups := []string{m, m, m, g, g, m, m, m}
	kinds := []string{"a", "a", "a", "n", "n", "b", "b", "c"}
	acc := []float64{0.9, 0.8, 0.7, 0.3, 0.1, 0.6, 0.5, 0.55}
	s := summarise(groups, kinds, acc)
	// a: 2.4/3 = 0.8; n: 0.2; b: 0.55; c: 0.55; mean (0.8+0.55+0.55)/3 = 0.6333…
	wantAcc := []float64{0.8, 0.2, 0.55, 0.55}
	for i, k := range s.Kinds {
		if math.Abs(k.Accuracy-wantAcc[i]) > 1e-15 {
			t.Errorf("kind %s = %v; want %v", k.Kind, k.Accuracy, wantAcc[i])
		}
	}
	if s.CorruptionKinds != 3 || math.Abs(s.MeanCorruption-1.9/3) > 1e-15 || s.Worst.Kind != "b" {
		t.Errorf("mean %v over %d, worst %+v; want %v over 3, b", s.MeanCorruption, s.CorruptionKinds, s.Worst, 1.9/3)
	}
	if k, ok := s.Kind(g, "n"); !ok || k.Conditions != 2 {
		t.Errorf("Kind(grid, n) = %+v, %v", k, ok)
	}
	if e := summarise([]string{g}, []string{"n"}, []float64{0.5}); e.CorruptionKinds != 0 || e.MeanCorruption != 0 || e.Worst != nil {
		t.Errorf("grid-only summary %+v; want no corruption mean or worst kind", e)
	}
}

// quadrantPredictor is a deterministic pixel-dependent recognizer: the
// class is the brightest of four image quadrants.
type quadrantPredictor struct{}

func (quadrantPredictor) NumClasses() int { return 4 }

func (quadrantPredictor) PredictBatch(imgs [][]float32, h, w, workers int) ([][]float32, error) {
	out := make([][]float32, len(imgs))
	for j, im := range imgs {
		var q [4]float64
		for y := range h {
			for x := range w {
				q[2*(2*y/h)+2*x/w] += float64(im[y*w+x])
			}
		}
		p := make([]float32, 4)
		p[argmax4(q)] = 1
		out[j] = p
	}
	return out, nil
}

func argmax4(q [4]float64) int {
	b := 0
	for i, v := range q {
		if v > q[b] {
			b = i
		}
	}
	return b
}

// quadrantSet returns n 28×28 images of class i mod 4 with a bright blob in
// quadrant (class) over a seeded grey background.
func quadrantSet(n int) *datasets.Set {
	const h, w = 28, 28
	s := &datasets.Set{Name: "quadrants-test", N: n, H: h, W: w, Pix: make([]uint8, n*h*w), Labels: make([]int, n),
		Classes: []string{"top-left", "top-right", "bottom-left", "bottom-right"}}
	for i := range n {
		c := i % 4
		cy, cx := 7+14*(c/2)+(i%3)-1, 7+14*(c%2)+(i%5)-2
		for y := range h {
			for x := range w {
				v := 30 + (i*7+y*3+x*5)%40
				if d := (y-cy)*(y-cy) + (x-cx)*(x-cx); d < 20+i%9 {
					v = 200 + (i+y)%50
				}
				s.Pix[(i*h+y)*w+x] = uint8(v)
			}
		}
		s.Labels[i] = c
	}
	return s
}

// The same suite scored with 1 and 3 workers gives identical results, on
// the real corruptions and grid perturbations, and they are not all equal to
// the clean accuracy (the images were altered).
func TestScoreSuiteDeterministic(t *testing.T) {
	suite, err := datasets.MNISTCSuite(4)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range datasets.GridSuite() {
		if c.Kind == "noise" || c.Kind == "shift" {
			suite = append(suite, c)
		}
	}
	test := quadrantSet(48)
	var res [2]*SuiteResult
	for i, workers := range []int{1, 3} {
		r, err := ScoreSuite("quadrants", quadrantPredictor{}, test, suite, SuiteConfig{Run: RunOptions{Workers: workers, Batch: 5}})
		if err != nil {
			t.Fatal(err)
		}
		res[i] = r
	}
	if !reflect.DeepEqual(res[0], res[1]) {
		t.Error("results differ between 1 and 3 workers")
	}
	changed := 0
	for _, p := range res[0].Points {
		if p.Correct != res[0].Clean.Correct {
			changed++
		}
	}
	if res[0].Clean.Correct != 48 || changed < 5 {
		t.Errorf("clean %d/48 correct, %d of %d conditions changed the accuracy; want 48 and at least 5", res[0].Clean.Correct, changed, len(res[0].Points))
	}
	if res[0].CorruptionKinds != 15 || len(res[0].Kinds) != 17 {
		t.Errorf("%d corruption kinds, %d kinds; want 15 and 17", res[0].CorruptionKinds, len(res[0].Kinds))
	}
}

func TestScoreSuiteRejects(t *testing.T) {
	suite, right := knownSuite()
	test := indexedSet(40, 4, 4, 4)
	p := subsetPredictor{4, right}
	dup := append([]datasets.SuiteCondition(nil), suite...)
	dup[1].Name = dup[0].Name
	noOp := append([]datasets.SuiteCondition(nil), suite...)
	noOp[2].Op = nil
	clean := append([]datasets.SuiteCondition(nil), suite...)
	clean[0].Name = "clean"
	for _, tc := range []struct {
		name  string
		p     Predictor
		suite []datasets.SuiteCondition
		cfg   SuiteConfig
		want  string
	}{
		{"empty", p, nil, SuiteConfig{}, "no conditions"},
		{"duplicate", p, dup, SuiteConfig{}, "taken"},
		{"clean name", p, clean, SuiteConfig{}, "taken"},
		{"no op", p, noOp, SuiteConfig{}, "no Op"},
		{"classes", subsetPredictor{3, right}, suite, SuiteConfig{}, "predicts 3 classes"},
		{"confidence", p, suite, SuiteConfig{Confidence: 1.5}, "confidence"},
		{"bad op", p, []datasets.SuiteCondition{{Name: "x", Op: datasets.Corruption{Kind: datasets.CorruptionKinds()[0], Severity: 9}}}, SuiteConfig{}, "severity"},
	} {
		_, err := ScoreSuite("m", tc.p, test, tc.suite, tc.cfg)
		if err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v; want one mentioning %q", tc.name, err, tc.want)
		}
	}
}

// peerJSON builds a file in the layout testdata/peer/lenet5.py writes, with
// two seeds per condition: seed accuracies right/n − 0.03 and right/n +
// 0.01 for the subset predictor's counts (mean right/n − 0.01).
func peerJSON(suite []datasets.SuiteCondition, right map[int]int, n int, seed uint64) string {
	var b strings.Builder
	fmt.Fprintf(&b, `{"generator": "test", "dataset": "indexed", "suite_seed": %d, "seeds": [0, 1], "epochs": 10, "train_cpu_seconds": [1, 2], "mean_mnist_c_accuracy": 0, "conditions": [`, seed)
	cond := func(name, group, kind string, level float64, code int) {
		a := float64(right[code]) / float64(n)
		fmt.Fprintf(&b, `{"name": %q, "group": %q, "kind": %q, "unit": "u", "level": %g, "file": "x.idx.gz", "accuracy": [%v, %v], "mean": %v}`,
			name, group, kind, level, a-0.03, a+0.01, ((a-0.03)+(a+0.01))/2)
	}
	cond("clean", "clean", "", 0, 0)
	for i, c := range suite {
		b.WriteString(", ")
		cond(c.Name, c.Group, c.Kind, c.Level, i+1)
	}
	b.WriteString("]}")
	return b.String()
}

func TestPeer(t *testing.T) {
	const n = 40
	suite, right := knownSuite()
	r, err := ScoreSuite("subset", subsetPredictor{4, right}, indexedSet(n, 4, 4, 4), suite, SuiteConfig{})
	if err != nil {
		t.Fatal(err)
	}
	p, err := ParsePeer([]byte(peerJSON(suite, right, n, datasets.SuiteSeed)), "peer.json", "")
	if err != nil {
		t.Fatal(err)
	}
	if err := r.SetPeer(p); err != nil {
		t.Fatal(err)
	}
	s := r.Peer
	if s.Name != "LeNet-5" || s.Seeds != 2 || math.Abs(s.Clean-(39.0/n-0.01)) > 1e-12 || len(s.Points) != len(r.Points) {
		t.Fatalf("peer summary %+v", s)
	}
	for i, v := range s.Points {
		if math.Abs(v-(r.Points[i].Accuracy-0.01)) > 1e-12 {
			t.Errorf("peer point %s = %v; want %v", r.Points[i].Name, v, r.Points[i].Accuracy-0.01)
		}
	}
	// Every accuracy is the subset predictor's − 0.01, so the summary is too.
	if math.Abs(s.MeanCorruption-(0.6875-0.01)) > 1e-12 || s.Worst.Kind != "beta" || len(s.Kinds) != 4 {
		t.Errorf("peer mean %v worst %+v; want 0.6775 and beta", s.MeanCorruption, s.Worst)
	}

	if _, err := ParsePeer([]byte(peerJSON(suite, right, n, 99)), "p", ""); err != nil {
		t.Fatal(err)
	}
	other, _ := ParsePeer([]byte(peerJSON(suite, right, n, 99)), "p", "")
	if err := r.SetPeer(other); err == nil || !strings.Contains(err.Error(), "seed 99") {
		t.Errorf("peer of another seed: %v", err)
	}
	short, _ := ParsePeer([]byte(peerJSON(suite[:3], right, n, datasets.SuiteSeed)), "p", "")
	if err := r.SetPeer(short); err == nil || !strings.Contains(err.Error(), suite[3].Name) {
		t.Errorf("peer without %s: %v", suite[3].Name, err)
	}
	good := peerJSON(suite, right, n, datasets.SuiteSeed)
	for _, tc := range []struct{ name, from, to, want string }{
		{"mean", `"mean": 0.965`, `"mean": 0.5`, "average"},
		{"range", `[0.945, 0.985]`, `[0.945, 1.5]`, "[0,1]"},
		{"seeds", `[0.945, 0.985], "mean": 0.965`, `[0.965], "mean": 0.965`, "one per seed"},
		{"name", `"name": "alpha-2"`, `"name": "alpha-1"`, "repeated"},
		{"json", `{"generator"`, `{generator`, "lenet5.py"},
	} {
		bad := strings.Replace(good, tc.from, tc.to, 1)
		if bad == good {
			t.Fatalf("%s: %q not in the sample", tc.name, tc.from)
		}
		if _, err := ParsePeer([]byte(bad), "p", ""); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v; want one mentioning %q", tc.name, err, tc.want)
		}
	}
}
