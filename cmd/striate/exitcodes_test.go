package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// copyTree copies the class folders of the fixture's test folder into dir,
// leaving the class folders named in empty without files.
func copyTree(t *testing.T, dir string, empty ...string) {
	t.Helper()
	for _, class := range []string{"blob", "horizontal", "vertical"} {
		if err := os.MkdirAll(filepath.Join(dir, class), 0o755); err != nil {
			t.Fatal(err)
		}
		if strings.Contains(strings.Join(empty, ","), class) {
			continue
		}
		for _, n := range []string{"item0.png", "item1.png", "item2.png", "item3.png"} {
			b, err := os.ReadFile(filepath.Join(cliTest, class, n))
			if err != nil {
				t.Fatal(err)
			}
			os.WriteFile(filepath.Join(dir, class, n), b, 0o644)
		}
	}
}

// TestCLIExitCodes: for every command, a failure of the work (data, files,
// folders) exits 1 and bad usage (arguments, flag values) exits 2, each with
// a message naming what is wrong.
func TestCLIExitCodes(t *testing.T) {
	cliFixture(t)
	dir := t.TempDir()
	noImages := filepath.Join(dir, "no-images")
	os.MkdirAll(noImages, 0o755)
	os.WriteFile(filepath.Join(noImages, "notes.txt"), []byte("rail 3"), 0o644)
	emptyClass := filepath.Join(dir, "depot")
	copyTree(t, emptyClass, "vertical")
	badConfig := filepath.Join(dir, "mine.json")
	os.WriteFile(badConfig, []byte(`{"colour": "red"}`), 0o644)
	aFile := filepath.Join(dir, "a-file")
	os.WriteFile(aFile, nil, 0o644)
	missing := filepath.Join(dir, "missing")
	for _, tc := range []struct {
		args []string
		code int
		want string
	}{
		{[]string{"train", "--data", emptyClass, "--out", filepath.Join(dir, "m.striate"), "--quiet"}, 1, `class "vertical" has no images (its folder ` + filepath.Join(emptyClass, "vertical")},
		{[]string{"train", "--data", missing, "--out", filepath.Join(dir, "m.striate"), "--quiet"}, 1, "missing"},
		{[]string{"train", "--data", emptyClass, "--config", badConfig, "--out", filepath.Join(dir, "m.striate"), "--quiet"}, 1, "colour"},
		{[]string{"train", "--data", emptyClass, "--out", filepath.Join(missing, "m.striate"), "--quiet"}, 1, "cannot write"},
		{[]string{"learn", "--out", aFile, "--quiet"}, 1, "a-file"},
		{[]string{"demo", "--data-only", "--mnist", missing}, 1, "missing"},
		{[]string{"predict", "--model", cliModelA, noImages}, 1, "holds no images"},
		{[]string{"predict", "--model", cliModelA, missing}, 1, "missing"},
		{[]string{"extract", "--merge", "--out", dir}, 1, "no features shards"},
		{[]string{"inspect", missing}, 1, "missing"},
		{[]string{"bench", "--ref", missing, "--quiet"}, 1, "missing"},
		{[]string{}, 2, "Commands:"},
		{[]string{"sort"}, 2, `unknown command "sort"`},
		{[]string{"train", "extra"}, 2, `unexpected argument "extra"`},
		{[]string{"learn", "--whiten", "pca"}, 2, `--whiten "pca"`},
		{[]string{"demo", "extra"}, 2, "demo takes no arguments"},
		{[]string{"bench", "extra"}, 2, "bench takes no arguments"},
		{[]string{"inspect"}, 2, "inspect takes one model file"},
		{[]string{"compare", cliModelA}, 2, "compare takes two model files"},
		{[]string{"predict", "--model", cliModelA}, 2, "at least one image"},
		{[]string{"predict", "--model", cliModelA, "--top", "9", cliTest}, 2, "--top 9"},
		{[]string{"extract", "--model", cliModelA, "--data", cliTest, "--batch", "0"}, 2, "--batch 0"},
		{[]string{"evaluate", "--model", cliModelA, "--data", "mnist:validation"}, 2, "--data"},
		{[]string{"evaluate", "--model", cliModelA, "--data", cliTest, "--workers", "two"}, 2, "invalid value"},
	} {
		r := runCLI(t, tc.args...)
		if r.code != tc.code || !strings.Contains(r.stderr+r.stdout, tc.want) {
			t.Errorf("striate %s: exit %d, stderr %q; want exit %d and a message with %q", strings.Join(tc.args, " "), r.code, r.stderr, tc.code, tc.want)
		}
	}
}

// TestCLIEmptyClassAndLinks: an empty class folder in test data is a
// warning naming the folder (the class keeps its label, so the folder still
// matches the model) and the evaluation runs; predict follows a linked
// folder, reports a link that loops back, and predicts each image once.
func TestCLIEmptyClassAndLinks(t *testing.T) {
	cliFixture(t)
	dir := t.TempDir()
	depot := filepath.Join(dir, "depot")
	copyTree(t, depot, "vertical")
	r := mustRun(t, 0, "evaluate", "--model", cliModelA, "--data", depot, "--quiet")
	if want := filepath.Join(depot, "vertical") + ": class folder without any loaded image"; !strings.Contains(r.stderr, want) {
		t.Errorf("evaluate did not warn of the empty class folder:\n%s", r.stderr)
	}
	if !strings.Contains(r.stdout, "accuracy") {
		t.Errorf("evaluate printed no scores:\n%s", r.stdout)
	}
	bin := filepath.Join(dir, "bin")
	os.MkdirAll(bin, 0o755)
	if err := os.Symlink(filepath.Join(depot, "blob"), filepath.Join(bin, "blob")); err != nil {
		t.Skipf("no symbolic links here: %v", err)
	}
	os.Symlink(".", filepath.Join(depot, "blob", "back")) // a loop
	r = mustRun(t, 0, "predict", "--model", cliModelA, "--quiet", bin)
	if n := strings.Count(r.stdout, "\n"); n != 4 || !strings.Contains(r.stdout, filepath.Join(bin, "blob", "item0.png")+"\t") {
		t.Errorf("predict through a linked folder gave %d lines; want blob's 4 images:\n%s", n, r.stdout)
	}
	if !strings.Contains(r.stderr, filepath.Join(bin, "blob", "back")+": symbolic link loop") {
		t.Errorf("predict did not report the loop:\n%s", r.stderr)
	}
}
