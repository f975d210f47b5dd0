package main

import (
	"bytes"
	"encoding/json"
	"image"
	"image/color"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"

	"github.com/striate/striate/datasets"
	"github.com/striate/striate/eval"
	"github.com/striate/striate/pipeline"
)

// These tests build the striate binary and drive it as a user would, on a
// small folder of synthetic garment-sorting images (three classes of 28×28
// PNGs) and models fitted on it in-process.

var (
	cliOnce    sync.Once
	cliDir     string
	cliBin     string
	cliErr     error
	cliModelA  string
	cliModelB  string
	cliTest    string // image folder: test images
	cliTestSet *datasets.Set
)

// TestMain removes the shared CLI fixture folder after all tests. (This is
// the package's only TestMain; extend it rather than adding another.)
func TestMain(m *testing.M) {
	code := m.Run()
	if cliDir != "" {
		os.RemoveAll(cliDir)
	}
	os.Exit(code)
}

// cliFixture builds the binary, writes the image folders and fits two
// models (different seeds and pooling), once per test run.
func cliFixture(t *testing.T) {
	t.Helper()
	cliOnce.Do(func() {
		cliDir, cliErr = os.MkdirTemp("", "striate-cli-")
		if cliErr != nil {
			return
		}
		cliBin = filepath.Join(cliDir, "striate")
		out, err := exec.Command("go", "build", "-o", cliBin, ".").CombinedOutput()
		if err != nil {
			cliErr = &buildError{string(out)}
			return
		}
		train := filepath.Join(cliDir, "train")
		cliTest = filepath.Join(cliDir, "test")
		if cliErr = writeShapes(train, 40, 1); cliErr != nil {
			return
		}
		if cliErr = writeShapes(cliTest, 25, 2); cliErr != nil {
			return
		}
		set, _, err := datasets.LoadFolder(train, datasets.FolderConfig{})
		if err != nil {
			cliErr = err
			return
		}
		if cliTestSet, _, cliErr = datasets.LoadFolder(cliTest, datasets.FolderConfig{}); cliErr != nil {
			return
		}
		for i, path := range []*string{&cliModelA, &cliModelB} {
			cfg := pipeline.DefaultConfig()
			cfg.Seed = uint64(i + 1)
			if i == 1 {
				cfg.Pool.Size = 7
			}
			m, err := pipeline.Fit(cfg, set, pipeline.FitOptions{Workers: 2})
			if err != nil {
				cliErr = err
				return
			}
			*path = filepath.Join(cliDir, []string{"hand.striate", "coarse.striate"}[i])
			if cliErr = m.SaveFile(*path); cliErr != nil {
				return
			}
		}
	})
	if cliErr != nil {
		t.Fatal(cliErr)
	}
}

// readResults reads the results.json of the report in dir.
func readResults(t *testing.T, dir string) eval.Report {
	t.Helper()
	var res eval.Report
	b, err := os.ReadFile(filepath.Join(dir, "results.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &res); err != nil {
		t.Fatal(err)
	}
	return res
}

type buildError struct{ out string }

func (e *buildError) Error() string { return "go build: " + e.out }

// writeShapes writes n images per class under root/<class>/: horizontal
// stripes, vertical stripes and a centred blob, each with a random phase
// or size and pixel noise.
func writeShapes(root string, n int, seed uint64) error {
	r := rand.New(rand.NewPCG(seed, 99))
	for _, class := range []string{"blob", "horizontal", "vertical"} {
		dir := filepath.Join(root, class)
		if err := os.MkdirAll(dir, 0o755); err != nil {
			return err
		}
		for i := range n {
			img := image.NewGray(image.Rect(0, 0, 28, 28))
			ph := r.Float64() * 2 * math.Pi
			rad := 5 + 4*r.Float64()
			for y := range 28 {
				for x := range 28 {
					var v float64
					switch class {
					case "horizontal":
						v = 0.5 + 0.4*math.Cos(2*math.Pi*float64(y)/6+ph)
					case "vertical":
						v = 0.5 + 0.4*math.Cos(2*math.Pi*float64(x)/6+ph)
					default:
						d := math.Hypot(float64(x)-13.5, float64(y)-13.5)
						v = 0.1 + 0.8/(1+math.Exp((d-rad)*1.5))
					}
					v += 0.08 * r.NormFloat64()
					img.SetGray(x, y, color.Gray{uint8(255 * math.Min(1, math.Max(0, v)))})
				}
			}
			f, err := os.Create(filepath.Join(dir, "item"+strconv.Itoa(i)+".png"))
			if err != nil {
				return err
			}
			if err := png.Encode(f, img); err != nil {
				f.Close()
				return err
			}
			if err := f.Close(); err != nil {
				return err
			}
		}
	}
	return nil
}

type cliResult struct {
	code           int
	stdout, stderr string
}

func runCLI(t *testing.T, args ...string) cliResult {
	t.Helper()
	cmd := exec.Command(cliBin, args...)
	var o, e bytes.Buffer
	cmd.Stdout, cmd.Stderr = &o, &e
	err := cmd.Run()
	code := 0
	if err != nil {
		ee, ok := err.(*exec.ExitError)
		if !ok {
			t.Fatalf("striate %v: %v", args, err)
		}
		code = ee.ExitCode()
	}
	return cliResult{code, o.String(), e.String()}
}

func wantCode(t *testing.T, r cliResult, code int, args ...string) {
	t.Helper()
	if r.code != code {
		t.Fatalf("striate %s: exit %d, want %d\nstdout:\n%s\nstderr:\n%s", strings.Join(args, " "), r.code, code, r.stdout, r.stderr)
	}
}

func mustRun(t *testing.T, code int, args ...string) cliResult {
	t.Helper()
	r := runCLI(t, args...)
	wantCode(t, r, code, args...)
	return r
}

func TestCLIEvaluateReport(t *testing.T) {
	cliFixture(t)
	out := filepath.Join(t.TempDir(), "rep")
	r := mustRun(t, 0, "evaluate", "--model", cliModelA, "--data", cliTest, "--out", out, "--robust", "quick", "--workers", "2")
	if !strings.Contains(r.stdout, "accuracy") || !strings.Contains(r.stdout, "horizontal") {
		t.Errorf("evaluate printed:\n%s", r.stdout)
	}
	for _, f := range []string{"report.md", "report.html", "results.json", "predictions.npy", "labels.npy",
		"figures/filter-mosaics.png", "figures/robustness-test.png", "figures/invariance-hand.png", "figures/confusion-hand-test.png"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("missing %s: %v", f, err)
		}
	}
	res := readResults(t, out)
	// Stripes against a blob are easy for oriented filters; 90% is a floor
	// far below what the default front end reaches on them (common practice
	// for a smoke floor: it fails only when something is broken).
	if len(res.Models) != 1 || res.Models[0].Metrics.Accuracy < 0.9 {
		t.Fatalf("results.json models %+v; want one model with accuracy ≥ 0.9", res.Models)
	}
	if res.Models[0].Metrics.N != cliTestSet.N {
		t.Errorf("scored %d images; the test folder has %d", res.Models[0].Metrics.N, cliTestSet.N)
	}
	if len(res.Robustness) != 1 || len(res.Robustness[0].Kinds()) != 6 || len(res.Invariance) != 1 {
		t.Errorf("report lacks the robustness sweep over six kinds or the invariance probe")
	}
	// The predictions file agrees with the scores.
	p, err := datasets.ReadNPYFile(filepath.Join(out, "predictions.npy"))
	if err != nil {
		t.Fatal(err)
	}
	l, err := datasets.ReadNPYFile(filepath.Join(out, "labels.npy"))
	if err != nil {
		t.Fatal(err)
	}
	k := len(cliTestSet.Classes)
	correct := 0
	for i, lab := range l.I32 {
		if eval.Argmax(p.F32[i*k:(i+1)*k]) == int(lab) {
			correct++
		}
	}
	if correct != res.Models[0].Metrics.Correct {
		t.Errorf("predictions.npy gives %d correct; results.json says %d", correct, res.Models[0].Metrics.Correct)
	}
}

func TestCLIEvaluateShardsMerge(t *testing.T) {
	cliFixture(t)
	whole := filepath.Join(t.TempDir(), "whole")
	mustRun(t, 0, "evaluate", "--model", cliModelA, "--data", cliTest, "--out", whole)
	shards := filepath.Join(t.TempDir(), "shards")
	for i := range 3 {
		mustRun(t, 0, "evaluate", "--model", cliModelA, "--data", cliTest, "--out", shards, "--shard", strconv.Itoa(i)+"/3")
	}
	// Merging before every shard is there fails and says what is missing.
	partial := filepath.Join(t.TempDir(), "partial")
	mustRun(t, 0, "evaluate", "--model", cliModelA, "--data", cliTest, "--out", partial, "--shard", "1/3")
	r := mustRun(t, 1, "evaluate", "--merge", "--out", partial)
	if !strings.Contains(r.stderr, "found 1 of 3 shards") {
		t.Errorf("partial merge said: %s", r.stderr)
	}
	r = mustRun(t, 0, "evaluate", "--merge", "--out", shards)
	sameFiles(t, "3 shards", whole, shards, "predictions.npy", "labels.npy")
	if !strings.Contains(r.stdout, "accuracy") {
		t.Errorf("merge printed no scores:\n%s", r.stdout)
	}
}

func TestCLIExtractShardsMerge(t *testing.T) {
	cliFixture(t)
	whole := filepath.Join(t.TempDir(), "whole")
	mustRun(t, 0, "extract", "--model", cliModelA, "--data", cliTest, "--out", whole)
	shards := filepath.Join(t.TempDir(), "shards")
	for _, i := range []int{3, 0, 2, 1} { // any order
		mustRun(t, 0, "extract", "--model", cliModelA, "--data", cliTest, "--out", shards, "--shard", strconv.Itoa(i)+"/4", "--batch", "7")
	}
	mustRun(t, 0, "extract", "--merge", "--out", shards)
	sameFiles(t, "4 shards", whole, shards, "features.npy", "labels.npy")
	// The file holds what the library computes.
	m, err := pipeline.LoadFile(cliModelA)
	if err != nil {
		t.Fatal(err)
	}
	feat, err := datasets.ReadNPYFile(filepath.Join(whole, "features.npy"))
	if err != nil {
		t.Fatal(err)
	}
	d := m.FeatureLen()
	if len(feat.Shape) != 2 || feat.Shape[0] != cliTestSet.N || feat.Shape[1] != d {
		t.Fatalf("features.npy shape %v; want [%d %d]", feat.Shape, cliTestSet.N, d)
	}
	img := cliTestSet.Float(nil, 17)
	want, err := m.ExtractFloats([][]float32{img}, 28, 28, 1)
	if err != nil {
		t.Fatal(err)
	}
	for j, v := range want[0] {
		if feat.F32[17*d+j] != v {
			t.Fatalf("features.npy row 17 col %d = %g; ExtractFloats gives %g", j, feat.F32[17*d+j], v)
		}
	}
}

func TestCLICompare(t *testing.T) {
	cliFixture(t)
	out := filepath.Join(t.TempDir(), "cmp")
	r := mustRun(t, 0, "compare", "--data", cliTest, "--out", out, "--seed", "3", "--robust", "quick", cliModelA, cliModelB)
	if !strings.Contains(r.stdout, "exact McNemar p =") || !strings.Contains(r.stdout, "paired bootstrap") {
		t.Errorf("compare printed:\n%s", r.stdout)
	}
	res := readResults(t, out)
	// Clean images, then each perturbed condition of the quick sweep.
	if len(res.Comparisons) < 10 || len(res.Models) != 2 || res.Comparisons[0].Condition != "" || res.Comparisons[1].Condition == "" {
		t.Fatalf("results.json: %d comparisons, %d models; want clean + per-condition comparisons of 2 models", len(res.Comparisons), len(res.Models))
	}
	c := res.Comparisons[0]
	if c.N != cliTestSet.N || c.PValue < 0 || c.PValue > 1 || c.PValue != eval.McNemarExact(c.OnlyA, c.OnlyB) {
		t.Errorf("comparison %+v inconsistent", c)
	}
	if math.Abs(c.Diff-(res.Models[0].Metrics.Accuracy-res.Models[1].Metrics.Accuracy)) > 1e-12 {
		t.Errorf("diff %g vs accuracies %g − %g", c.Diff, res.Models[0].Metrics.Accuracy, res.Models[1].Metrics.Accuracy)
	}
	mustRun(t, 2, "compare", "--data", cliTest, cliModelA)
}

func TestCLIPredict(t *testing.T) {
	cliFixture(t)
	r := mustRun(t, 0, "predict", "--model", cliModelA, "--top", "2", cliTest)
	lines := strings.Split(strings.TrimSpace(r.stdout), "\n")
	if len(lines) != cliTestSet.N {
		t.Fatalf("%d lines for %d images", len(lines), cliTestSet.N)
	}
	right := 0
	for _, l := range lines {
		f := strings.Split(l, "\t")
		if len(f) != 5 {
			t.Fatalf("line %q: want path, 2 × (class, probability)", l)
		}
		p1, err1 := strconv.ParseFloat(f[2], 64)
		p2, err2 := strconv.ParseFloat(f[4], 64)
		if err1 != nil || err2 != nil || p1 < p2 || p1 > 1 || p2 < 0 {
			t.Fatalf("line %q: probabilities not in decreasing order in [0,1]", l)
		}
		if filepath.Base(filepath.Dir(f[0])) == f[1] {
			right++
		}
	}
	if float64(right) < 0.9*float64(len(lines)) {
		t.Errorf("predict put %d of %d images in their folder's class", right, len(lines))
	}
	// A damaged file is reported by name; the good ones are still printed.
	dir := t.TempDir()
	bad := filepath.Join(dir, "torn.png")
	if err := os.WriteFile(bad, []byte("\x89PNG\r\n\x1a\nnot really"), 0o644); err != nil {
		t.Fatal(err)
	}
	good := filepath.Join(cliTest, "blob", "item0.png")
	r = mustRun(t, 1, "predict", "--model", cliModelA, bad, good)
	if !strings.Contains(r.stderr, "torn.png") || !strings.Contains(r.stdout, "item0.png\tblob") {
		t.Errorf("damaged file: stdout %q stderr %q", r.stdout, r.stderr)
	}
	mustRun(t, 2, "predict", "--model", cliModelA)
	mustRun(t, 2, "predict", "--model", cliModelA, "--top", "9", good)

	// A tab and a newline in a file name are escaped, so the line keeps its
	// 1 + 2·top tab-separated fields (the text-format escapes; common practice).
	img, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	odd := filepath.Join(dir, "belt\tbin\nA.png")
	if err := os.WriteFile(odd, img, 0o644); err != nil {
		t.Fatal(err)
	}
	r = mustRun(t, 0, "predict", "--model", cliModelA, "--top", "2", odd)
	line := strings.TrimSuffix(r.stdout, "\n")
	if f := strings.Split(line, "\t"); len(f) != 5 || !strings.HasSuffix(f[0], `belt\tbin\nA.png`) || strings.Contains(line, "\n") {
		t.Errorf("predict of a file named with a tab and a newline printed %q; want the name escaped and 5 fields", r.stdout)
	}
}

func TestCLIInspect(t *testing.T) {
	cliFixture(t)
	r := mustRun(t, 0, "inspect", cliModelA)
	for _, want := range []string{"striate-model, version " + strconv.Itoa(pipeline.FormatVersion), "verified", "blob, horizontal, vertical", "tensors", "float32"} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("inspect output lacks %q:\n%s", want, r.stdout)
		}
	}
	r = mustRun(t, 0, "inspect", "--json", cliModelA)
	var h struct {
		Classes []string              `json:"classes"`
		Tensors []pipeline.TensorInfo `json:"tensors"`
	}
	if err := json.Unmarshal([]byte(r.stdout), &h); err != nil || len(h.Tensors) == 0 || len(h.Classes) != 3 {
		t.Errorf("inspect --json: %v, %d tensors, classes %v", err, len(h.Tensors), h.Classes)
	}
}

// TestCLIErrors: a missing file, a corrupt model and an unknown flag each
// give a clear message and the documented exit code (1 failed work, 2 bad
// usage).
func TestCLIErrors(t *testing.T) {
	cliFixture(t)
	dir := t.TempDir()
	missing := filepath.Join(dir, "nope.striate")
	b, err := os.ReadFile(cliModelA)
	if err != nil {
		t.Fatal(err)
	}
	corrupt := filepath.Join(dir, "corrupt.striate")
	c := append([]byte{}, b...)
	c[len(c)/2] ^= 0x40
	if err := os.WriteFile(corrupt, c, 0o644); err != nil {
		t.Fatal(err)
	}
	truncated := filepath.Join(dir, "truncated.striate")
	if err := os.WriteFile(truncated, b[:len(b)/3], 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"evaluate", "--model", missing, "--data", cliTest}, 1, "nope.striate"},
		{[]string{"evaluate", "--model", corrupt, "--data", cliTest}, 1, "checksum"},
		{[]string{"inspect", corrupt}, 1, "checksum"},
		{[]string{"inspect", truncated}, 1, "truncated"},
		{[]string{"predict", "--model", truncated, cliTest}, 1, "truncated"},
		{[]string{"extract", "--model", cliModelA, "--data", filepath.Join(dir, "no-such-folder")}, 1, "no-such-folder"},
		{[]string{"evaluate", "--model", cliModelA, "--data", cliTest, "--colour", "red"}, 2, "flag provided but not defined: -colour"},
		{[]string{"evaluate", "--model", cliModelA}, 2, "--data is required"},
		{[]string{"evaluate", "--data", cliTest}, 2, "--model is required"},
		{[]string{"evaluate", "--model", cliModelA, "--data", cliTest, "--out", dir, "--shard", "3/3"}, 2, "i from 0 to n-1"},
		{[]string{"evaluate", "--model", cliModelA, "--data", cliTest, "--robust", "extreme"}, 2, "none, quick or full"},
		{[]string{"evaluate", "--merge", "--out", dir}, 1, "no predictions shards"},
		{[]string{"compare", "--data", cliTest, cliModelA, missing}, 1, "nope.striate"},
		{[]string{"extract", "--merge", "--out", dir, "--model", cliModelA}, 2, "drop --model"},
	} {
		r := runCLI(t, tc.args...)
		if r.code != tc.code || !strings.Contains(r.stderr, tc.want) {
			t.Errorf("striate %s: exit %d, stderr %q; want exit %d and a message with %q", strings.Join(tc.args, " "), r.code, r.stderr, tc.code, tc.want)
		}
	}
}

func TestCLIHelpHasExamples(t *testing.T) {
	cliFixture(t)
	for _, c := range []string{"evaluate", "compare", "extract", "predict", "inspect"} {
		r := mustRun(t, 0, c, "-h")
		if !strings.Contains(r.stderr+r.stdout, "Examples:") || !strings.Contains(r.stderr+r.stdout, "striate "+c) {
			t.Errorf("%s -h lacks examples:\n%s%s", c, r.stdout, r.stderr)
		}
	}
}
