package datasets

import (
	"errors"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
)

// FolderConfig configures LoadFolder. The zero value loads 28×28 images,
// leaves out (and reports) images smaller than that, and names the set after
// the root folder.
type FolderConfig struct {
	// H, W is the size every image is resized to; zero means 28×28.
	H, W int
	// AllowUpscale accepts images smaller than H×W and enlarges them. When
	// false, such images are listed in the report as undersized.
	AllowUpscale bool
	// Name names the Set; empty means the base name of the root folder.
	Name string
}

// Skipped is one file that LoadFolder did not load, and why.
type Skipped struct {
	Path   string
	Reason string
}

// FolderReport accounts for every file under the root: each is either loaded
// or listed in Skipped. Skipped also lists the folders not read: links that
// loop back, second links to a folder already read, unreadable folders.
type FolderReport struct {
	Root    string
	Classes []string // sorted class folder names, the label order
	Files   int      // files seen under the root
	Loaded  int
	Skipped []Skipped
	// Empty lists the class folders from which no image was loaded. Their
	// classes keep their labels (so a test folder still carries a model's
	// classes), but a model cannot learn a class without images.
	Empty []string
}

// HasNotes reports whether the report says more than its counts: a file or
// folder was left out, or a class folder gave no image.
func (r *FolderReport) HasNotes() bool { return len(r.Skipped) > 0 || len(r.Empty) > 0 }

// String summarises the report: counts, then one line per skipped file and
// per empty class folder.
func (r *FolderReport) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %d classes, %d files, %d loaded, %d skipped", r.Root, len(r.Classes), r.Files, r.Loaded, len(r.Skipped))
	for _, s := range r.Skipped {
		fmt.Fprintf(&b, "\n  %s: %s", s.Path, s.Reason)
	}
	for _, e := range r.Empty {
		fmt.Fprintf(&b, "\n  %s: class folder without any loaded image; add images of the class or remove the folder", e)
	}
	return b.String()
}

// LoadFolder loads the user's own labelled images laid out as
// root/<class>/<any sub-folders>/<file>, one class per top-level folder, with
// class labels in sorted folder-name order (so the same tree always gives
// the same labels). Files whose extension is in FolderExtensions are decoded
// (PNG, JPEG, GIF from the standard library; BMP, TIFF, WebP from
// golang.org/x/image), turned to grey by BT.601 luma and resized to H×W with
// ToGray, then stored as bytes (round(255·luma)). Images are in sorted path
// order within each class.
//
// Symbolic links are followed, to class folders, to folders inside them and
// to files; a link that loops back to a folder holding it, or a second link
// to a folder already read, is listed in the report and not read again.
//
// Nothing is dropped silently: every file that is not loaded (other
// extensions, undecodable, undersized, files directly under root) is listed
// in the report with its reason, and a class folder without any loaded
// image in the report's Empty. The error is non-nil when root cannot be
// read, holds no class folder, or no image could be loaded; the report is
// returned even then when it was started.
func LoadFolder(root string, cfg FolderConfig) (*Set, *FolderReport, error) {
	h, w := cfg.H, cfg.W
	if h == 0 && w == 0 {
		h, w = 28, 28
	}
	if h <= 0 || w <= 0 || h > MaxIDXDim || w > MaxIDXDim {
		return nil, nil, fmt.Errorf("datasets: folder image size %d×%d invalid; H and W must both be positive (or both zero for 28×28)", cfg.H, cfg.W)
	}
	name := cfg.Name
	if name == "" {
		name = filepath.Base(filepath.Clean(root))
	}
	entries, err := os.ReadDir(root)
	if err != nil {
		return nil, nil, fmt.Errorf("datasets: image folder: %w", err)
	}
	rep := &FolderReport{Root: root}
	var paths []string
	tree := newWalker(func(p string) { paths = append(paths, p) },
		func(p, reason string) { rep.Skipped = append(rep.Skipped, Skipped{p, reason}) },
		func(p string, err error) error {
			rep.Skipped = append(rep.Skipped, Skipped{p, "cannot read: " + err.Error()})
			return nil
		})
	leave, err := tree.enter(root)
	if err != nil {
		return nil, nil, fmt.Errorf("datasets: image folder: %w", err)
	}
	defer leave()
	for _, e := range entries {
		p := filepath.Join(root, e.Name())
		switch _, err := os.Stat(p); {
		case isDirEntry(p, e):
			rep.Classes = append(rep.Classes, e.Name())
		case err != nil:
			rep.Files++
			rep.Skipped = append(rep.Skipped, Skipped{p, "broken symbolic link: " + err.Error()})
		default:
			rep.Files++
			rep.Skipped = append(rep.Skipped, Skipped{p, "not inside a class folder"})
		}
	}
	slices.Sort(rep.Classes)
	if len(rep.Classes) == 0 {
		return nil, rep, fmt.Errorf("datasets: image folder %s has no class sub-folders; lay images out as %s/<class>/<file>", root, root)
	}
	set := &Set{Name: name, H: h, W: w, Classes: append([]string(nil), rep.Classes...), Source: root}
	var buf []float32
	for label, class := range rep.Classes {
		paths = paths[:0]
		_ = tree.dir(filepath.Join(root, class)) // fail never stops the walk
		before := set.N
		slices.Sort(paths)
		for _, p := range paths {
			rep.Files++
			if !slices.Contains(FolderExtensions, strings.ToLower(filepath.Ext(p))) {
				rep.Skipped = append(rep.Skipped, Skipped{p, "extension not one of " + strings.Join(FolderExtensions, " ")})
				continue
			}
			img, reason := decodeFile(p)
			if reason != "" {
				rep.Skipped = append(rep.Skipped, Skipped{p, reason})
				continue
			}
			if b := img.Bounds(); !cfg.AllowUpscale && (b.Dx() < w || b.Dy() < h) {
				rep.Skipped = append(rep.Skipped, Skipped{p, fmt.Sprintf("undersized: %d×%d is smaller than %d×%d (set AllowUpscale to enlarge)", b.Dx(), b.Dy(), w, h)})
				continue
			}
			buf = ToGray(buf, img, h, w)
			for _, v := range buf {
				set.Pix = append(set.Pix, uint8(math.Round(float64(v)*255)))
			}
			set.Labels = append(set.Labels, label)
			set.N++
			rep.Loaded++
		}
		if set.N == before {
			rep.Empty = append(rep.Empty, filepath.Join(root, class))
		}
	}
	if set.N == 0 {
		return nil, rep, fmt.Errorf("datasets: image folder %s: no image could be loaded (%d files skipped; see the report)", root, len(rep.Skipped))
	}
	return set, rep, nil
}

// decodeFile decodes one image file with the guarded decoder, returning a
// reason when it cannot.
func decodeFile(p string) (img image.Image, reason string) {
	img, err := DecodeImageFile(p)
	var ie *ImageError
	switch {
	case errors.As(err, &ie):
		return nil, "cannot decode: " + ie.Reason()
	case err != nil:
		return nil, "cannot open: " + strings.TrimPrefix(err.Error(), "datasets: ")
	}
	return img, ""
}
