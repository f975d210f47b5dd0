package datasets

import (
	"bytes"
	"encoding/binary"
	"errors"
	"hash/crc32"
	"image"
	"image/color"
	"image/gif"
	"image/jpeg"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"testing"

	"golang.org/x/image/bmp"
)

// pngHeader returns a PNG signature and IHDR chunk declaring w×h 8-bit grey
// (PNG specification, ISO/IEC 15948 §11.2.2: width, height, bit depth,
// colour type, compression, filter, interlace; CRC-32 over type and data),
// with no image data after it.
func pngHeader(w, h uint32) []byte {
	ihdr := []byte("IHDR")
	ihdr = binary.BigEndian.AppendUint32(ihdr, w)
	ihdr = binary.BigEndian.AppendUint32(ihdr, h)
	ihdr = append(ihdr, 8, 0, 0, 0, 0)
	b := append([]byte("\x89PNG\r\n\x1a\n"), 0, 0, 0, 13)
	b = append(b, ihdr...)
	return binary.BigEndian.AppendUint32(b, crc32.ChecksumIEEE(ihdr))
}

// emptyImages are 0×0 images that the standard encoders (and x/image's BMP
// encoder) write and their decoders accept without complaint.
func emptyImages(t *testing.T) map[string][]byte {
	t.Helper()
	img := image.NewGray(image.Rect(0, 0, 0, 0))
	out := map[string][]byte{}
	for name, enc := range map[string]func(io.Writer) error{
		"gif":  func(w io.Writer) error { return gif.Encode(w, img, nil) },
		"jpeg": func(w io.Writer) error { return jpeg.Encode(w, img, nil) },
		"bmp":  func(w io.Writer) error { return bmp.Encode(w, img) },
	} {
		var b bytes.Buffer
		if err := enc(&b); err != nil {
			t.Fatalf("%s encoder: %v", name, err)
		}
		out[name] = b.Bytes()
	}
	return out
}

func wantKind(t *testing.T, what string, err, kind error) *ImageError {
	t.Helper()
	var ie *ImageError
	if !errors.As(err, &ie) || !errors.Is(err, kind) {
		t.Fatalf("%s: err %v; want an *ImageError of kind %v", what, err, kind)
	}
	return ie
}

// TestDecodeImageEmpty: a 0×0 GIF, JPEG or BMP decodes without error in the
// standard decoders; DecodeImage refuses it with ErrEmptyImage (before, it
// reached ToGray, which panics on an empty image).
func TestDecodeImageEmpty(t *testing.T) {
	for name, b := range emptyImages(t) {
		if img, _, err := image.Decode(bytes.NewReader(b)); err != nil || !img.Bounds().Empty() {
			t.Fatalf("%s: the standard decoder gave %v, %v; the fixture should be a valid empty image", name, err, img)
		}
		_, err := DecodeImage(bytes.NewReader(b))
		wantKind(t, name, err, ErrEmptyImage)
	}
	// A PNG may not declare a zero size (ISO/IEC 15948 §11.2.2); Go's
	// decoder calls it damaged.
	_, err := DecodeImage(bytes.NewReader(pngHeader(0, 0)))
	wantKind(t, "0×0 png", err, ErrDamagedImage)
}

// TestDecodeImageBomb: a 33-byte PNG header declaring 100000×100000 pixels
// is refused from its declared size, without the decoder allocating.
func TestDecodeImageBomb(t *testing.T) {
	b := pngHeader(100000, 100000)
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err := DecodeImage(bytes.NewReader(b))
	runtime.ReadMemStats(&after)
	ie := wantKind(t, "100000×100000 png", err, ErrImageTooLarge)
	if ie.Width != 100000 || ie.Height != 100000 {
		t.Errorf("declared size %d×%d; want 100000×100000", ie.Width, ie.Height)
	}
	// 1 MiB: the header buffer and the decoder's small state; the image
	// itself would be 10 GB.
	if got := after.TotalAlloc - before.TotalAlloc; got > 1<<20 {
		t.Errorf("refusing the bomb allocated %d bytes; want under 1 MiB", got)
	}
}

// TestDecodeImageNotImage: text and a torn PNG give ErrNotImage and
// ErrDamagedImage, with the file named.
func TestDecodeImageNotImage(t *testing.T) {
	dir := t.TempDir()
	txt := filepath.Join(dir, "notes.png")
	os.WriteFile(txt, []byte("shelf 4: coats"), 0o644)
	_, err := DecodeImageFile(txt)
	if ie := wantKind(t, "text", err, ErrNotImage); ie.File != txt {
		t.Errorf("error names %q; want %q", ie.File, txt)
	}
	torn := append(pngHeader(4, 4), "IDAT"...)
	_, err = DecodeImage(bytes.NewReader(torn))
	wantKind(t, "torn png", err, ErrDamagedImage)
	if _, err := DecodeImageFile(filepath.Join(dir, "absent.png")); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
}

// TestDecodeImageStream: decoding from a reader that cannot seek gives the
// same pixels as the standard library's image.Decode of the whole file (the
// header bytes DecodeConfig read are replayed).
func TestDecodeImageStream(t *testing.T) {
	src := image.NewRGBA(image.Rect(0, 0, 7, 5))
	for i := range src.Pix {
		src.Pix[i] = uint8(i * 37)
	}
	var b bytes.Buffer
	if err := png.Encode(&b, src); err != nil {
		t.Fatal(err)
	}
	want, _, err := image.Decode(bytes.NewReader(b.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	got, err := DecodeImage(io.MultiReader(bytes.NewReader(b.Bytes()))) // hides Seek
	if err != nil {
		t.Fatal(err)
	}
	if got.Bounds() != want.Bounds() {
		t.Fatalf("bounds %v; want %v", got.Bounds(), want.Bounds())
	}
	for y := range 5 {
		for x := range 7 {
			if color.RGBAModel.Convert(got.At(x, y)) != color.RGBAModel.Convert(want.At(x, y)) {
				t.Fatalf("pixel (%d,%d) %v; want %v", x, y, got.At(x, y), want.At(x, y))
			}
		}
	}
}

// TestListImages: folders are walked for image extensions in sorted order;
// files are kept as given; a folder without images is an error.
func TestListImages(t *testing.T) {
	dir := t.TempDir()
	os.MkdirAll(filepath.Join(dir, "bin", "sub"), 0o755)
	for _, f := range []string{"bin/b.png", "bin/a.JPG", "bin/sub/c.webp", "bin/notes.txt", "loose.dat"} {
		os.WriteFile(filepath.Join(dir, f), nil, 0o644)
	}
	got, _, err := ListImages(filepath.Join(dir, "loose.dat"), filepath.Join(dir, "bin"))
	want := []string{filepath.Join(dir, "loose.dat"), filepath.Join(dir, "bin", "a.JPG"), filepath.Join(dir, "bin", "b.png"), filepath.Join(dir, "bin", "sub", "c.webp")}
	if err != nil || !slices.Equal(got, want) {
		t.Errorf("ListImages = %v, %v; want %v", got, err, want)
	}
	if _, _, err := ListImages(filepath.Join(dir, "bin", "sub", "..", "..", "bin", "sub", "c.webp"), t.TempDir()); err == nil {
		t.Error("a folder without images was accepted")
	}
}

// TestFolderSkipsHostileImages: LoadFolder reports the empty, oversized and
// non-image files by name and loads the good one.
func TestFolderSkipsHostileImages(t *testing.T) {
	root := t.TempDir()
	c := filepath.Join(root, "coat")
	os.MkdirAll(c, 0o755)
	var good bytes.Buffer
	png.Encode(&good, image.NewGray(image.Rect(0, 0, 28, 28)))
	files := map[string][]byte{"good.png": good.Bytes(), "zero.png": pngHeader(0, 0), "bomb.png": pngHeader(100000, 100000),
		"text.png": []byte("not an image"), "empty.gif": emptyImages(t)["gif"]}
	for n, b := range files {
		os.WriteFile(filepath.Join(c, n), b, 0o644)
	}
	s, rep, err := LoadFolder(root, FolderConfig{})
	if err != nil || s.N != 1 || len(rep.Skipped) != len(files)-1 {
		t.Fatalf("LoadFolder: %v, report %s", err, rep)
	}
}
