package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/striate/striate/pipeline"
)

// TestCLITrainFolder trains on a folder of class subfolders as a user
// would, then checks the written model: it loads (version, checksum and
// sizes checked), has the folder's classes, and scores at least 0.9 on the
// held-out shapes — three classes (horizontal stripes, vertical stripes,
// blobs) that an orientation-selective front end separates easily, so 0.9
// is far above chance (1/3) without being a threshold that cannot fail.
func TestCLITrainFolder(t *testing.T) {
	cliFixture(t)
	out := filepath.Join(t.TempDir(), "shapes.striate")
	r := mustRun(t, 0, "train", "--data", filepath.Join(cliDir, "train"), "--out", out, "--workers", "2", "--quiet", "--seed", "3")
	if !strings.Contains(r.stdout, "model written to "+out) || !strings.Contains(r.stdout, "no test split") {
		t.Errorf("train printed:\n%s", r.stdout)
	}
	m, err := pipeline.LoadFile(out)
	if err != nil {
		t.Fatalf("the trained model does not load: %v", err)
	}
	if got, want := m.Classes(), cliTestSet.Classes; strings.Join(got, ",") != strings.Join(want, ",") {
		t.Fatalf("model classes %v, want the folder's %v", got, want)
	}
	acc, err := pipeline.Accuracy(m, cliTestSet, nil, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if acc < 0.9 {
		t.Errorf("accuracy %.3f on the held-out shapes, want ≥ 0.9", acc)
	}
	if _, err := os.Stat(out); err != nil {
		t.Fatal(err)
	}
}

// TestCLITrainErrors: bad --data, --labels and --preset fail with the flag named.
func TestCLITrainErrors(t *testing.T) {
	cliFixture(t)
	missing := filepath.Join(t.TempDir(), "nowhere")
	r := runCLI(t, "train", "--data", missing, "--out", filepath.Join(t.TempDir(), "x.striate"), "--quiet")
	if r.code == 0 || !strings.Contains(r.stderr, "--data") || !strings.Contains(r.stderr, "nowhere") {
		t.Errorf("train on a missing folder: exit %d, stderr:\n%s", r.code, r.stderr)
	}
	r = runCLI(t, "train", "--labels", "-3", "--quiet")
	if r.code != 2 || !strings.Contains(r.stderr, "--labels -3") {
		t.Errorf("train --labels -3: exit %d, stderr:\n%s", r.code, r.stderr)
	}
	r = runCLI(t, "train", "--preset", "socks", "--quiet")
	if r.code != 2 || !strings.Contains(r.stderr, "--preset") || !strings.Contains(r.stderr, "garments") {
		t.Errorf("train --preset socks: exit %d, stderr:\n%s", r.code, r.stderr)
	}
}

// TestCLITrainMirror: --mirror sets the model's Config.Mirror, and the
// model still separates the fixture's classes (horizontal and vertical
// stripes and blobs look the same mirrored, so mirror averaging must not
// cost accuracy; same 0.9 floor as TestCLITrainFolder).
func TestCLITrainMirror(t *testing.T) {
	if m := trainFixture(t, "--mirror"); !m.Config().Mirror {
		t.Fatal("train --mirror wrote a model without Config.Mirror")
	}
}

// TestCLITrainInt8: --int8 writes an int8 model (format version 3) that
// loads, is an int8 model, and separates the fixture's classes (same 0.9
// floor as TestCLITrainFolder).
func TestCLITrainInt8(t *testing.T) {
	if m := trainFixture(t, "--int8"); !m.Int8() {
		t.Fatal("train --int8 wrote a float model")
	}
}

// trainFixture trains on the fixture's folder with the extra flag, loads
// the model and checks that it scores at least 0.9 on the held-out shapes.
func trainFixture(t *testing.T, flag string) *pipeline.Model {
	t.Helper()
	cliFixture(t)
	out := filepath.Join(t.TempDir(), "shapes"+flag+".striate")
	mustRun(t, 0, "train", "--data", filepath.Join(cliDir, "train"), flag, "--out", out, "--workers", "2", "--quiet", "--seed", "3")
	m, err := pipeline.LoadFile(out)
	if err != nil {
		t.Fatalf("train %s: the model does not load: %v", flag, err)
	}
	acc, err := pipeline.Accuracy(m, cliTestSet, nil, 2, nil)
	if err != nil {
		t.Fatal(err)
	}
	if acc < 0.9 {
		t.Errorf("train %s: accuracy %.3f on the held-out shapes, want ≥ 0.9", flag, acc)
	}
	return m
}

// TestCLITrainScenes: --scenes reaches the train job, and a --scenes that
// is no scene folder fails before any training, naming the folder and the
// index it lacks (the job itself is tested in eval's TestTrainScenes).
func TestCLITrainScenes(t *testing.T) {
	cliFixture(t)
	missing := filepath.Join(t.TempDir(), "no-scenes")
	r := runCLI(t, "train", "--data", filepath.Join(cliDir, "train"), "--scenes", missing, "--out", filepath.Join(t.TempDir(), "x.striate"), "--quiet")
	if r.code != 1 || !strings.Contains(r.stderr, missing) || !strings.Contains(r.stderr, "scenes.json") || strings.Contains(r.stdout, "model written") {
		t.Errorf("train --scenes on a missing folder: exit %d, stdout:\n%s\nstderr:\n%s", r.code, r.stdout, r.stderr)
	}
	r = runCLI(t, "train", "--data", filepath.Join(cliDir, "train"), "--scenes", "auto:0", "--out", filepath.Join(t.TempDir(), "x.striate"), "--quiet")
	if r.code != 1 || !strings.Contains(r.stderr, "auto:N") {
		t.Errorf("train --scenes auto:0: exit %d, stderr:\n%s", r.code, r.stderr)
	}
}
