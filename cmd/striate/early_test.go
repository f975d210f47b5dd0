package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/striate/striate/datasets"
)

// TestCLITrainChecksFirst: a bad --out (a missing folder, a folder that is
// a file) and an IDX folder without its test split are refused before any
// training starts: no progress, no "trained on", no model file (before,
// the whole fit ran and its result was lost).
func TestCLITrainChecksFirst(t *testing.T) {
	cliFixture(t)
	dir := t.TempDir()
	idx := filepath.Join(dir, "idx-train-only")
	os.Mkdir(idx, 0o755)
	n := 400
	s := &datasets.Set{Name: "belt", N: n, H: 28, W: 28, Pix: make([]uint8, n*28*28), Labels: make([]int, n), Classes: []string{"0", "1"}}
	for i := range s.Labels {
		s.Labels[i] = i % 2
		for j := 0; j < 28; j++ {
			s.Pix[i*28*28+j*28+(i%2)*14] = 255
		}
	}
	if err := datasets.WriteIDXSet(filepath.Join(idx, "train-images-idx3-ubyte"), filepath.Join(idx, "train-labels-idx1-ubyte"), s); err != nil {
		t.Fatal(err)
	}
	good := filepath.Join(cliDir, "train")
	notDir := filepath.Join(dir, "plain-file")
	os.WriteFile(notDir, []byte("x"), 0o644)
	for _, c := range []struct {
		name, data, out, want string
	}{
		{"missing --out folder", good, filepath.Join(dir, "no", "such", "m.striate"), "no/such/m.striate"},
		{"--out under a file", good, filepath.Join(notDir, "m.striate"), "plain-file/m.striate"},
		{"IDX folder without a test split", idx, filepath.Join(dir, "m.striate"), "holds no t10k-images-idx3-ubyte"},
	} {
		start := time.Now()
		r := runCLI(t, "train", "--data", c.data, "--out", c.out, "--quiet", "--workers", "1")
		took := time.Since(start)
		t.Logf("%s: exit %d after %v", c.name, r.code, took.Round(time.Millisecond))
		if r.code == 0 || !strings.Contains(r.stderr, c.want) {
			t.Errorf("%s: exit %d; want an error naming %q:\n%s", c.name, r.code, c.want, r.stderr)
		}
		if strings.Contains(r.stdout, "trained on") || strings.Contains(r.stderr, "features") {
			t.Errorf("%s: training ran before the refusal:\n%s\n%s", c.name, r.stdout, r.stderr)
		}
		if _, err := os.Stat(c.out); err == nil {
			t.Errorf("%s: %s was written", c.name, c.out)
		}
	}
}
