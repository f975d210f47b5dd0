package datasets

import (
	"encoding/binary"
	"hash/crc32"
	"image"
	"image/color"
	"image/gif"
	"image/jpeg"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/image/bmp"
	"golang.org/x/image/tiff"
)

func writeImage(t *testing.T, p string, img image.Image, enc func(io.Writer, image.Image) error) {
	t.Helper()
	os.MkdirAll(filepath.Dir(p), 0o755)
	f, err := os.Create(p)
	if err != nil {
		t.Fatal(err)
	}
	if err := enc(f, img); err != nil {
		t.Fatal(err)
	}
	f.Close()
}

func TestLoadFolder(t *testing.T) {
	root := t.TempDir()
	grey := func(v uint8, w, h int) image.Image { return uniform(color.RGBA{v, v, v, 255}, w, h) }
	// Classes created in unsorted order; labels must follow sorted names.
	writeImage(t, filepath.Join(root, "trouser", "a.png"), grey(200, 40, 30), png.Encode)
	writeImage(t, filepath.Join(root, "trouser", "b.JPG"), grey(100, 28, 28), func(w io.Writer, m image.Image) error { return jpeg.Encode(w, m, &jpeg.Options{Quality: 95}) })
	writeImage(t, filepath.Join(root, "trouser", "deep", "c.gif"), grey(50, 30, 30), func(w io.Writer, m image.Image) error { return gif.Encode(w, m, nil) })
	writeImage(t, filepath.Join(root, "coat", "d.bmp"), grey(10, 28, 28), bmp.Encode)
	writeImage(t, filepath.Join(root, "coat", "e.tiff"), grey(20, 64, 64), func(w io.Writer, m image.Image) error { return tiff.Encode(w, m, nil) })
	writeImage(t, filepath.Join(root, "coat", "small.png"), grey(1, 10, 10), png.Encode)
	os.WriteFile(filepath.Join(root, "coat", "broken.png"), []byte("\x89PNG garbage"), 0o644)
	os.WriteFile(filepath.Join(root, "coat", "notes.txt"), []byte("hi"), 0o644)
	os.WriteFile(filepath.Join(root, "loose.png"), []byte("x"), 0o644)
	os.MkdirAll(filepath.Join(root, "empty"), 0o755)
	if x := xImageTestdata(t); x != "" {
		b, err := os.ReadFile(filepath.Join(x, "blue-purple-pink.lossless.webp"))
		if err == nil {
			os.WriteFile(filepath.Join(root, "coat", "f.webp"), b, 0o644)
		}
	}
	s, rep, err := LoadFolder(root, FolderConfig{})
	if err != nil {
		t.Fatal(err)
	}
	if !equalStrings(s.Classes, []string{"coat", "empty", "trouser"}) || s.H != 28 || s.W != 28 || s.Name != filepath.Base(root) {
		t.Fatalf("classes %v size %d×%d name %q", s.Classes, s.H, s.W, s.Name)
	}
	if s.N != 6 || !equalInts(s.Labels, []int{0, 0, 0, 2, 2, 2}) || s.Validate() != nil {
		t.Fatalf("N %d labels %v", s.N, s.Labels)
	}
	// Sorted path order within a class: coat/d.bmp, e.tiff, f.webp; trouser/a.png, b.JPG, deep/c.gif.
	wantGrey := []float64{10, 20, -1, 200, 100, 50}
	for i, g := range wantGrey {
		if g < 0 {
			continue
		}
		// JPEG at quality 95 of a flat grey is within a level or two.
		if v := float64(s.Image(i)[0]); math.Abs(v-g) > 2 {
			t.Errorf("image %d grey %v, want %v", i, v, g)
		}
	}
	if rep.Loaded != 6 || rep.Files != 10 || len(rep.Skipped) != 4 {
		t.Errorf("report: %s", rep)
	}
	reasons := map[string]string{}
	for _, sk := range rep.Skipped {
		reasons[filepath.Base(sk.Path)] = sk.Reason
	}
	for name, frag := range map[string]string{"small.png": "undersized", "broken.png": "cannot decode", "notes.txt": "extension", "loose.png": "class folder"} {
		if !strings.Contains(reasons[name], frag) {
			t.Errorf("%s: reason %q, want it to mention %q", name, reasons[name], frag)
		}
	}
	if !equalStrings(rep.Empty, []string{filepath.Join(root, "empty")}) || !rep.HasNotes() ||
		!strings.Contains(rep.String(), filepath.Join(root, "empty")+": class folder without any loaded image") {
		t.Errorf("empty class folder not reported: %v\n%s", rep.Empty, rep)
	}
	if !strings.Contains(rep.String(), "4 skipped") || !strings.Contains(rep.String(), "small.png") {
		t.Errorf("report text:\n%s", rep)
	}
	// Upscaling accepted on request; a fixed size and name are honoured.
	s2, rep2, err := LoadFolder(root, FolderConfig{H: 12, W: 16, AllowUpscale: true, Name: "depot"})
	if err != nil || s2.N != 7 || s2.H != 12 || s2.W != 16 || s2.Name != "depot" || rep2.Loaded != 7 {
		t.Errorf("AllowUpscale: %v N=%d %s", err, s2.N, rep2)
	}
	// Split keeps every class in proportion.
	tr, te := s.Split(1.0/3, 1)
	if tr.N != 4 || te.N != 2 || !equalInts(te.ClassCounts(), []int{1, 0, 1}) {
		t.Errorf("split: %d/%d %v", tr.N, te.N, te.ClassCounts())
	}
}

func equalStrings(a, b []string) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestLoadFolderErrors(t *testing.T) {
	if _, _, err := LoadFolder(filepath.Join(t.TempDir(), "none"), FolderConfig{}); err == nil {
		t.Error("missing root accepted")
	}
	flat := t.TempDir()
	os.WriteFile(filepath.Join(flat, "a.png"), []byte("x"), 0o644)
	if _, rep, err := LoadFolder(flat, FolderConfig{}); err == nil || !strings.Contains(err.Error(), "<class>") || len(rep.Skipped) != 1 {
		t.Errorf("no class folders: %v", err)
	}
	bad := t.TempDir()
	os.MkdirAll(filepath.Join(bad, "c"), 0o755)
	os.WriteFile(filepath.Join(bad, "c", "a.gif"), []byte("GIF89a"), 0o644)
	if _, rep, err := LoadFolder(bad, FolderConfig{}); err == nil || rep.Loaded != 0 || len(rep.Skipped) != 1 {
		t.Errorf("nothing loadable: %v", err)
	}
	if _, _, err := LoadFolder(bad, FolderConfig{H: -1, W: 5}); err == nil {
		t.Error("negative size accepted")
	}
	// A header declaring a gigantic image is refused before decoding.
	huge := t.TempDir()
	os.MkdirAll(filepath.Join(huge, "c"), 0o755)
	// PNG signature + IHDR of 20000×20000 8-bit grey, with its CRC-32.
	ihdr := []byte("IHDR\x00\x00\x4e\x20\x00\x00\x4e\x20\x08\x00\x00\x00\x00")
	hdr := append([]byte("\x89PNG\r\n\x1a\n\x00\x00\x00\x0d"), ihdr...)
	hdr = binary.BigEndian.AppendUint32(hdr, crc32.ChecksumIEEE(ihdr))
	os.WriteFile(filepath.Join(huge, "c", "h.png"), hdr, 0o644)
	if _, rep, _ := LoadFolder(huge, FolderConfig{}); len(rep.Skipped) != 1 || !strings.Contains(rep.Skipped[0].Reason, "MaxImagePixels") {
		t.Errorf("huge declared size: %s", rep)
	}
}
