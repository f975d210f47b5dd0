package datasets

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	_ "image/gif"  // decoders registered for DecodeImage
	_ "image/jpeg" //
	_ "image/png"  //
	"io"
	"os"
	"path/filepath"
	"slices"
	"strings"

	_ "golang.org/x/image/bmp"  //
	_ "golang.org/x/image/tiff" //
	_ "golang.org/x/image/webp" //
)

// FolderExtensions are the file name extensions (lower case) that LoadFolder
// and ListImages pick up. The format is told from the file's content, not
// its name.
var FolderExtensions = []string{".png", ".jpg", ".jpeg", ".gif", ".bmp", ".tif", ".tiff", ".webp"}

// MaxImagePixels bounds the declared size of one image that DecodeImage
// accepts (64 megapixels: beyond any camera photo a user would sort by
// class, and 512 MiB as 64-bit RGBA, which the decoders may allocate).
const MaxImagePixels = 64 << 20

// MaxFolderPixels is the former name of MaxImagePixels.
//
// Deprecated: use MaxImagePixels.
const MaxFolderPixels = MaxImagePixels

// Kinds of ImageError, for errors.Is.
var (
	ErrNotImage      = errors.New("not a PNG, JPEG, GIF, BMP, TIFF or WebP file")
	ErrDamagedImage  = errors.New("damaged image")
	ErrEmptyImage    = errors.New("empty image (no pixels)")
	ErrImageTooLarge = errors.New("declared image size above MaxImagePixels")
)

// ImageError reports an image file that DecodeImage refused: Kind is one of
// ErrNotImage, ErrDamagedImage, ErrEmptyImage or ErrImageTooLarge; Width and
// Height are the declared size when the header could be read; Err is the
// decoder's own error, if any.
type ImageError struct {
	File          string // empty for a stream
	Kind          error
	Width, Height int
	Err           error
}

// Reason is the message without the file name.
func (e *ImageError) Reason() string {
	switch e.Kind {
	case ErrImageTooLarge:
		return fmt.Sprintf("declared size %d×%d is above MaxImagePixels (%d); shrink the image first", e.Width, e.Height, MaxImagePixels)
	case ErrEmptyImage:
		return fmt.Sprintf("empty image (%d×%d)", e.Width, e.Height)
	case ErrDamagedImage:
		return fmt.Sprintf("damaged image (%v)", e.Err)
	}
	return e.Kind.Error()
}

func (e *ImageError) Error() string {
	f := e.File
	if f == "" {
		f = "stream"
	}
	return "datasets: image " + f + ": " + e.Reason()
}

// Unwrap gives the kind and the decoder's error.
func (e *ImageError) Unwrap() []error {
	if e.Err != nil {
		return []error{e.Kind, e.Err}
	}
	return []error{e.Kind}
}

// DecodeImage decodes one PNG, JPEG, GIF (first frame), BMP, TIFF or WebP
// image from r, guarded against hostile files: it reads the declared size
// with image.DecodeConfig first and refuses an empty image or one above
// MaxImagePixels before the decoder allocates anything, and checks the
// decoded image is not empty (so ToGray never sees one). The header bytes
// DecodeConfig consumed are replayed to the decoder, so r need not seek.
// A refused image gives an *ImageError.
func DecodeImage(r io.Reader) (image.Image, error) { return decodeImage(r, "") }

// DecodeImageFile is DecodeImage of the named file; an *ImageError names it.
func DecodeImageFile(path string) (image.Image, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("datasets: %w", err)
	}
	defer f.Close()
	return decodeImage(f, path)
}

func decodeImage(r io.Reader, file string) (image.Image, error) {
	var head bytes.Buffer
	cfg, _, err := image.DecodeConfig(io.TeeReader(r, &head))
	if err != nil {
		return nil, decodeErr(file, err)
	}
	e := &ImageError{File: file, Width: cfg.Width, Height: cfg.Height}
	if cfg.Width <= 0 || cfg.Height <= 0 {
		e.Kind = ErrEmptyImage
		return nil, e
	}
	if int64(cfg.Width)*int64(cfg.Height) > MaxImagePixels {
		e.Kind = ErrImageTooLarge
		return nil, e
	}
	img, _, err := image.Decode(io.MultiReader(&head, r))
	if err != nil {
		return nil, decodeErr(file, err)
	}
	if img.Bounds().Empty() {
		e.Kind = ErrEmptyImage
		e.Width, e.Height = img.Bounds().Dx(), img.Bounds().Dy()
		return nil, e
	}
	return img, nil
}

func decodeErr(file string, err error) error {
	if errors.Is(err, image.ErrFormat) {
		return &ImageError{File: file, Kind: ErrNotImage}
	}
	return &ImageError{File: file, Kind: ErrDamagedImage, Err: err}
}

// ListImages expands paths into image files: a file is taken as given
// (whatever its extension), a folder is walked recursively for files whose
// extension is in FolderExtensions, which are returned in sorted order.
// Symbolic links are followed, with the loop guard of LoadFolder: a link
// back to a folder that holds it, or a second path to a folder already
// read, is returned in skipped with the reason (its images are listed once),
// as is a device, socket or pipe. A folder without any image, or one that
// cannot be read, is an error naming it.
func ListImages(paths ...string) (files []string, skipped []Skipped, err error) {
	for _, a := range paths {
		st, err := os.Stat(a)
		if err != nil {
			return nil, nil, fmt.Errorf("datasets: %w", err)
		}
		if !st.IsDir() {
			files = append(files, a)
			continue
		}
		var found []string
		tree := newWalker(func(p string) {
			if slices.Contains(FolderExtensions, strings.ToLower(filepath.Ext(p))) {
				found = append(found, p)
			}
		}, func(p, reason string) { skipped = append(skipped, Skipped{p, reason}) },
			func(p string, err error) error { return fmt.Errorf("datasets: folder %s cannot be read: %w", p, err) })
		if err := tree.dir(a); err != nil {
			return nil, nil, err
		}
		if len(found) == 0 {
			return nil, nil, fmt.Errorf("datasets: folder %s holds no images (%s)", a, strings.Join(FolderExtensions, " "))
		}
		slices.Sort(found)
		files = append(files, found...)
	}
	return files, skipped, nil
}
