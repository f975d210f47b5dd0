package datasets

import (
	"bytes"
	"errors"
	"image"
	"image/png"
	"io/fs"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// idxFolder writes both splits of a tiny MNIST-named IDX folder (file names
// as published by LeCun, Cortes & Burges): n images of h×w per split, the
// training images bright, the test images dark, so the split read is visible.
func idxFolder(t *testing.T, n, h, w int) string {
	t.Helper()
	dir := t.TempDir()
	for _, split := range []Split{Train, Test} {
		s := &Set{N: n, H: h, W: w, Pix: make([]uint8, n*h*w), Labels: make([]int, n), Classes: MNISTClasses}
		for i := range s.Pix {
			s.Pix[i] = map[Split]uint8{Train: 200, Test: 20}[split]
		}
		for i := range s.Labels {
			s.Labels[i] = i % 10
		}
		in, ln := idxNames(split)
		if err := WriteIDXSet(filepath.Join(dir, in), filepath.Join(dir, ln), s); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// TestOpenIDXFolder: PATH is the test split, PATH:train the training split,
// and IDX data of another size is a SpecError of kind ErrSpecSize.
func TestOpenIDXFolder(t *testing.T) {
	dir := idxFolder(t, 12, 28, 28)
	for spec, want := range map[string]uint8{dir: 20, dir + ":test": 20, dir + ":train": 200} {
		s, rep, err := Open(spec, OpenConfig{})
		if err != nil || rep != nil || s.N != 12 || s.Pix[0] != want {
			t.Errorf("Open(%q) = %v, %v, %v; want 12 images of value %d", spec, s, rep, err, want)
		}
	}
	_, _, err := Open(dir, OpenConfig{H: 32, W: 32})
	var se *SpecError
	if !errors.As(err, &se) || !errors.Is(err, ErrSpecSize) || !strings.Contains(err.Error(), "28×28") || se.Spec != dir {
		t.Errorf("size mismatch: %v", err)
	}
	if tr, te := SpecSplits(dir); tr != dir+":train" || te != dir+":test" {
		t.Errorf("SpecSplits(idx folder) = %q, %q", tr, te)
	}
}

// TestOpenClassFolder: a folder of class sub-folders is resized to the size
// asked for and comes with its FolderReport; it has no test split.
func TestOpenClassFolder(t *testing.T) {
	root := t.TempDir()
	for _, c := range []string{"coat", "shirt"} {
		os.MkdirAll(filepath.Join(root, c), 0o755)
		var b bytes.Buffer
		png.Encode(&b, image.NewGray(image.Rect(0, 0, 10, 10)))
		os.WriteFile(filepath.Join(root, c, "a.png"), b.Bytes(), 0o644)
	}
	os.WriteFile(filepath.Join(root, "coat", "tag.txt"), nil, 0o644)
	s, rep, err := Open(root, OpenConfig{H: 16, W: 16})
	if err != nil || s.N != 2 || s.H != 16 || rep == nil || len(rep.Skipped) != 1 {
		t.Fatalf("Open(class folder) = %v, %v, %v", s, rep, err)
	}
	if tr, te := SpecSplits(root); tr != root || te != "" {
		t.Errorf("SpecSplits(class folder) = %q, %q", tr, te)
	}
	// A path containing ':' that exists is taken whole.
	colon := filepath.Join(t.TempDir(), "bin:7")
	if err := os.Rename(root, colon); err != nil {
		t.Fatal(err)
	}
	if s, _, err := Open(colon, OpenConfig{H: 16, W: 16}); err != nil || s.N != 2 {
		t.Errorf("path with a colon: %v", err)
	}
}

// TestOpenBadSpecs: each bad spec is a *SpecError naming the spec and the
// fix; a missing path wraps fs.ErrNotExist, the others are ErrBadSpec.
func TestOpenBadSpecs(t *testing.T) {
	file := filepath.Join(t.TempDir(), "list.csv")
	os.WriteFile(file, nil, 0o644)
	missing := filepath.Join(t.TempDir(), "no-such-folder")
	for _, c := range []struct {
		spec string
		kind error
		fix  string
	}{
		{"", ErrBadSpec, "mnist or fashion"},
		{"mnist:validation", ErrBadSpec, "NAME:train or NAME:test"},
		{file, ErrBadSpec, "a folder"},
		{missing, fs.ErrNotExist, "mnist or fashion"},
	} {
		_, _, err := Open(c.spec, OpenConfig{})
		var se *SpecError
		if !errors.As(err, &se) || !errors.Is(err, c.kind) || se.Spec != c.spec || !strings.Contains(err.Error(), c.fix) {
			t.Errorf("Open(%q): %v; want a SpecError of kind %v mentioning %q", c.spec, err, c.kind, c.fix)
		}
	}
	if _, _, err := Open("mnist", OpenConfig{MNISTDir: t.TempDir()}); err == nil || !strings.Contains(err.Error(), "not found") {
		t.Errorf("mnist in an empty folder: %v", err)
	}
}
