package main

import (
	"bufio"
	"encoding/json"
	"image"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/striate/striate/datasets"
)

// sceneFolder writes n frames of 96×96 built from the fixture's test
// images (datasets.SceneBuilder, up to three items, some empty frames) as
// a scene folder and returns it.
func sceneFolder(t *testing.T, n int) string {
	t.Helper()
	cliFixture(t)
	b, err := datasets.NewSceneBuilder(cliTestSet, datasets.SceneConfig{W: 96, H: 96, MaxItems: 3, EmptyFrac: 0.25, Seed: 4})
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "belt")
	if err := datasets.WriteSceneFolder(dir, cliTestSet.Classes, b.Scenes(0, n)); err != nil {
		t.Fatal(err)
	}
	return dir
}

func TestCLIScanSceneFolder(t *testing.T) {
	dir := sceneFolder(t, 6)
	out := filepath.Join(t.TempDir(), "rep")
	r := mustRun(t, 0, "scan", "--model", cliModelA, "--out", out, "--workers", "2", dir)
	if got := strings.Count(r.stdout, filepath.Join(dir, "frame-")); got != 6 {
		t.Errorf("stdout names %d frames; want 6:\n%s", got, r.stdout)
	}
	for _, want := range []string{"mAP", "class", "mean (mAP)", "report: " + out} {
		if !strings.Contains(r.stdout, want) {
			t.Errorf("stdout lacks %q:\n%s", want, r.stdout)
		}
	}
	md, err := os.ReadFile(filepath.Join(out, "report.md"))
	if err != nil || !strings.Contains(string(md), "| class | items | found | matched | AP (%) |") {
		t.Errorf("report.md (%v) has no AP table:\n%s", err, md)
	}
	pngs, _ := filepath.Glob(filepath.Join(out, "frames", "*.png"))
	if len(pngs) != 6 {
		t.Errorf("%d annotated frames; want 6", len(pngs))
	}
	for _, f := range []string{"report.html", "results.json", "items.jsonl", "figures/hits-and-misses-belt.png"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("missing %s: %v", f, err)
		}
	}

	// --json: stdout is JSON lines only, one per frame; the scores go to
	// stderr.
	r = mustRun(t, 0, "scan", "--model", cliModelA, "--json", "--quiet", dir)
	sc := bufio.NewScanner(strings.NewReader(r.stdout))
	lines := 0
	for sc.Scan() {
		var v struct {
			File          string
			Width, Height int
			Items         []struct {
				Class string
				Score float64
				Box   [4]int
			}
		}
		if err := json.Unmarshal(sc.Bytes(), &v); err != nil || v.Width != 96 || v.Items == nil {
			t.Errorf("line %q: %v; want a frame of width 96 with an items list", sc.Text(), err)
		}
		lines++
	}
	if lines != 6 || !strings.Contains(r.stderr, "mAP") {
		t.Errorf("%d JSON lines (want 6); stderr:\n%s", lines, r.stderr)
	}

	// evaluate on a scene folder scores the scanner the same way.
	out2 := filepath.Join(t.TempDir(), "rep2")
	r = mustRun(t, 0, "evaluate", "--model", cliModelA, "--data", dir, "--out", out2)
	if !strings.Contains(r.stdout, "mAP") {
		t.Errorf("evaluate on a scene folder printed:\n%s", r.stdout)
	}
	if _, err := os.Stat(filepath.Join(out2, "report.md")); err != nil {
		t.Error(err)
	}
	r = mustRun(t, 2, "evaluate", "--model", cliModelA, "--data", dir, "--robust", "quick")
	if !strings.Contains(r.stderr, "scene folder") {
		t.Errorf("evaluate --robust on a scene folder: %s", r.stderr)
	}
}

// Bad input: the exit code is 2 for bad usage and 1 for failed work; bad
// files are named with the fix while the good ones are still scanned; a
// flat frame has no items; a broken scene folder fails before anything is
// written, so the earlier report stays.
func TestCLIScanBadInput(t *testing.T) {
	cliFixture(t)
	plain := t.TempDir()
	flat := image.NewGray(image.Rect(0, 0, 80, 64))
	for i := range flat.Pix {
		flat.Pix[i] = 90
	}
	for name, img := range map[string]image.Image{"a-flat.png": flat, "b-small.png": image.NewGray(image.Rect(0, 0, 28, 28))} {
		f, err := os.Create(filepath.Join(plain, name))
		if err != nil {
			t.Fatal(err)
		}
		png.Encode(f, img)
		f.Close()
	}
	os.WriteFile(filepath.Join(plain, "c-label.png"), []byte("rail 3, size M"), 0o644)
	os.WriteFile(filepath.Join(plain, "d-huge.png"), pngIHDR(100000, 100000), 0o644)

	mustRun(t, 2, "scan", "--model", cliModelA)
	mustRun(t, 2, "scan", plain)
	r := mustRun(t, 2, "scan", "--model", cliModelA, "--threshold", "2", plain)
	if !strings.Contains(r.stderr, "Threshold") {
		t.Errorf("--threshold 2: %s", r.stderr)
	}
	r = mustRun(t, 1, "scan", "--model", cliModelA, plain)
	if !strings.Contains(r.stdout, "a-flat.png (80×64): no items") {
		t.Errorf("the flat frame:\n%s", r.stdout)
	}
	for n, why := range map[string]string{"b-small.png": "smaller than", "c-label.png": "not a PNG", "d-huge.png": "side limit"} {
		if !strings.Contains(r.stderr, n) || !strings.Contains(r.stderr, why) {
			t.Errorf("stderr does not report %s as %q:\n%s", n, why, r.stderr)
		}
	}
	if !strings.Contains(r.stderr, "3 of 4 files could not be scanned") || strings.Contains(r.stderr, "panic") {
		t.Errorf("stderr:\n%s", r.stderr)
	}

	r = mustRun(t, 1, "scan", "--model", cliModelA, "--truth", plain)
	if !strings.Contains(r.stderr, filepath.Join(plain, "scenes.json")) || !strings.Contains(r.stderr, "needs its index") {
		t.Errorf("--truth on a plain folder:\n%s", r.stderr)
	}
	dir := sceneFolder(t, 2)
	out := t.TempDir()
	earlier := []byte("# an earlier report\n")
	os.WriteFile(filepath.Join(out, "report.md"), earlier, 0o644)
	os.WriteFile(filepath.Join(dir, "scenes.json"), []byte(`{"layout": "striate scene folder", "version": 1, "frames": [`), 0o644)
	r = mustRun(t, 1, "scan", "--model", cliModelA, "--out", out, dir)
	if !strings.Contains(r.stderr, filepath.Join(dir, "scenes.json")) || !strings.Contains(r.stderr, "malformed") {
		t.Errorf("a malformed index:\n%s", r.stderr)
	}
	if got, _ := os.ReadFile(filepath.Join(out, "report.md")); string(got) != string(earlier) {
		t.Errorf("the earlier report became %q", got)
	}
}
