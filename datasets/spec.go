package datasets

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// SpecHelp describes the data specs Open reads, for flag help and error
// messages.
const SpecHelp = "mnist or fashion (test split; mnist:train for the training split), " +
	"a folder of MNIST-named IDX files (PATH or PATH:train; a classes.txt beside them names the classes, one per line in label order, UTF-8, blank and # lines ignored; without it they are the digits 0-9), or a folder of images in one sub-folder per class"

// Kinds of SpecError, for errors.Is. A SpecError for a spec naming a path
// that does not exist wraps the os error instead (errors.Is(err,
// fs.ErrNotExist)).
var (
	// ErrBadSpec: the spec cannot name data (empty, an unknown split, a
	// plain file).
	ErrBadSpec = errors.New("malformed data spec")
	// ErrSpecSize: the data's images are not the size asked for.
	ErrSpecSize = errors.New("data of another image size")
)

// SpecError reports a data spec that Open cannot read: the spec, the kind
// (ErrBadSpec, ErrSpecSize or the os error for a missing path), what is wrong
// and how to fix it.
type SpecError struct {
	Spec string
	Kind error
	Msg  string
	Fix  string
}

func (e *SpecError) Error() string {
	return fmt.Sprintf("datasets: data %q: %s; %s", e.Spec, e.Msg, e.Fix)
}

func (e *SpecError) Unwrap() error { return e.Kind }

// OpenConfig configures Open. The zero value reads images at 28×28 and finds
// MNIST and Fashion-MNIST where LoadMNIST and LoadFashionMNIST look.
type OpenConfig struct {
	// H, W is the image size wanted; zero means 28×28. Image folders are
	// resized to it (smaller images enlarged); IDX data must already have it.
	H, W int
	// MNISTDir and FashionDir are passed to LoadMNIST and
	// LoadFashionMNIST for the specs mnist and fashion; empty means their
	// defaults.
	MNISTDir, FashionDir string
}

// Open loads the data a spec names (the --data flag of the command):
//
//	mnist, fashion           the published test split (LoadMNIST, LoadFashionMNIST)
//	mnist:train, fashion:test  an explicit split
//	PATH, PATH:train         a folder of MNIST-named IDX files (train-images-idx3-ubyte[.gz] ...)
//	PATH                     a folder of class sub-folders of images (LoadFolder)
//
// A path that exists is taken whole even if it contains ':'. For an image
// folder the FolderReport lists the files left out (nil for other specs).
// A spec that cannot be read gives a *SpecError; damaged or missing data
// files give the loaders' own errors.
func Open(spec string, cfg OpenConfig) (*Set, *FolderReport, error) {
	h, w := cfg.H, cfg.W
	if h == 0 && w == 0 {
		h, w = 28, 28
	}
	name, split, err := parseSpec(spec)
	if err != nil {
		return nil, nil, err
	}
	var s *Set
	var rep *FolderReport
	switch name {
	case "mnist":
		s, err = LoadMNIST(split, cfg.MNISTDir)
	case "fashion":
		s, err = LoadFashionMNIST(split, cfg.FashionDir)
	default:
		st, serr := os.Stat(name)
		if serr != nil {
			return nil, nil, &SpecError{Spec: spec, Kind: serr, Msg: serr.Error(), Fix: "want " + SpecHelp}
		}
		if !st.IsDir() {
			return nil, nil, &SpecError{Spec: spec, Kind: ErrBadSpec, Msg: "is a file", Fix: "want " + SpecHelp}
		}
		if isIDXFolder(name) {
			s, err = LoadIDXFolder(name, split)
		} else {
			s, rep, err = LoadFolder(name, FolderConfig{H: h, W: w, AllowUpscale: true})
		}
	}
	if err != nil {
		return nil, rep, err
	}
	if s.H != h || s.W != w {
		return nil, rep, &SpecError{Spec: spec, Kind: ErrSpecSize, Msg: fmt.Sprintf("holds %d×%d images; %d×%d are wanted", s.H, s.W, h, w),
			Fix: "use data of that size or a model made for these images"}
	}
	return s, rep, nil
}

// parseSpec splits spec into a name and a split.
func parseSpec(spec string) (string, Split, error) {
	if spec == "" {
		return "", Test, &SpecError{Spec: spec, Kind: ErrBadSpec, Msg: "empty", Fix: "want " + SpecHelp}
	}
	i := strings.LastIndexByte(spec, ':')
	if i <= 0 {
		return spec, Test, nil
	}
	if _, err := os.Stat(spec); err == nil { // a path may contain ':'
		return spec, Test, nil
	}
	switch spec[i+1:] {
	case "train":
		return spec[:i], Train, nil
	case "test":
		return spec[:i], Test, nil
	}
	return "", Test, &SpecError{Spec: spec, Kind: ErrBadSpec, Msg: fmt.Sprintf("split %q is neither train nor test", spec[i+1:]),
		Fix: "write NAME:train or NAME:test"}
}

// SpecSplits returns the specs of the training and the test split of the
// data named by spec: mnist, fashion and IDX folders have both (NAME:train,
// NAME:test); a folder of class sub-folders is training data only (test is
// empty).
func SpecSplits(spec string) (train, test string) {
	if spec == "mnist" || spec == "fashion" || isIDXFolder(spec) {
		return spec + ":train", spec + ":test"
	}
	return spec, ""
}

// isIDXFolder reports whether dir holds MNIST-named IDX files.
func isIDXFolder(dir string) bool {
	m, _ := filepath.Glob(filepath.Join(dir, "*-idx?-ubyte*"))
	return len(m) > 0
}
