package datasets

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/gif"
	"image/jpeg"
	"image/png"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/striate/striate/internal/hostiletest"
	"golang.org/x/image/bmp"
	"golang.org/x/image/tiff"
)

func isImageError(err error) bool { var e *ImageError; return errors.As(err, &e) }
func isIDXError(err error) bool   { var e *IDXError; return errors.As(err, &e) }
func isNPYError(err error) bool   { var e *NPYError; return errors.As(err, &e) }

// TestHostileImages: truncations and byte edits of a small PNG, GIF, JPEG,
// BMP and TIFF, plus headers declaring 65535×65535 or 100000×100000 pixels
// in each container, all through DecodeImage: no panic, every refusal an
// *ImageError, no input allocating more than the bound.
func TestHostileImages(t *testing.T) {
	img := image.NewGray(image.Rect(0, 0, 12, 9))
	for i := range img.Pix {
		img.Pix[i] = uint8(i * 13)
	}
	pal := image.NewPaletted(img.Bounds(), []color.Color{color.Black, color.White})
	var inputs [][]byte
	for _, enc := range []func(*bytes.Buffer) error{
		func(b *bytes.Buffer) error { return png.Encode(b, img) },
		func(b *bytes.Buffer) error { return gif.Encode(b, pal, nil) },
		func(b *bytes.Buffer) error { return jpeg.Encode(b, img, nil) },
		func(b *bytes.Buffer) error { return bmp.Encode(b, img) },
		func(b *bytes.Buffer) error { return tiff.Encode(b, img, nil) },
	} {
		var b bytes.Buffer
		if err := enc(&b); err != nil {
			t.Fatal(err)
		}
		inputs = append(inputs, hostiletest.Mutants(b.Bytes(), 4096, nil)...)
	}
	inputs = append(inputs, pngHeader(100000, 100000), pngHeader(0, 0), pngHeader(1<<31-1, 1))
	// GIF logical screen and image descriptor of 65535×65535 (GIF89a spec §18, §20).
	g := []byte("GIF89a\xff\xff\xff\xff\x00\x00\x00,\x00\x00\x00\x00\xff\xff\xff\xff\x00\x08")
	inputs = append(inputs, g)
	// BMP BITMAPINFOHEADER declaring 100000×100000 at 24 bits.
	bm := make([]byte, 54)
	copy(bm, "BM")
	binary.LittleEndian.PutUint32(bm[10:], 54)
	binary.LittleEndian.PutUint32(bm[14:], 40)
	binary.LittleEndian.PutUint32(bm[18:], 100000)
	binary.LittleEndian.PutUint32(bm[22:], 100000)
	binary.LittleEndian.PutUint16(bm[26:], 1)
	binary.LittleEndian.PutUint16(bm[28:], 24)
	inputs = append(inputs, bm)
	// JPEG SOF0 declaring 65535×65535, one component (ITU T.81 §B.2.2).
	inputs = append(inputs, []byte("\xff\xd8\xff\xc0\x00\x0b\x08\xff\xff\xff\xff\x01\x01\x11\x00\xff\xd9"))
	refused := hostiletest.Sweep(t, "images", inputs, func(b []byte) error {
		m, err := DecodeImage(bytes.NewReader(b))
		if err == nil && m.Bounds().Empty() {
			return fmt.Errorf("decoded an empty image")
		}
		return err
	}, isImageError)
	if refused < len(inputs)/4 {
		t.Errorf("only %d of %d hostile images refused", refused, len(inputs))
	}
}

// TestHostileIDX: truncations and byte edits of a plain and a gzip IDX
// file through ReadIDX, plus headers claiming 1 GiB with 100 bytes
// present: no panic, every refusal an *IDXError.
func TestHostileIDX(t *testing.T) {
	x := &IDX{Type: IDXUint8, Dims: []int{5, 6, 7}, Data: make([]byte, 210)}
	for i := range x.Data {
		x.Data[i] = byte(i)
	}
	var plain bytes.Buffer
	if err := WriteIDX(&plain, x); err != nil {
		t.Fatal(err)
	}
	inputs := append(hostiletest.Mutants(plain.Bytes(), 4096, nil), hostiletest.Mutants(gz(plain.Bytes()), 4096, nil)...)
	claim := append(idxHeader(IDXUint8, 1<<10, 1<<10, 1<<10), make([]byte, 100)...)
	inputs = append(inputs, claim, gz(claim), idxHeader(IDXFloat64, 1<<14, 1<<14), []byte{0, 0, 0x08, 0xFF})
	hostiletest.Sweep(t, "IDX", inputs, func(b []byte) error {
		_, err := ReadIDX(bytes.NewReader(b), "hostile.idx")
		return err
	}, isIDXError)
}

// TestHostileNPY: truncations and byte edits of an NPY file through
// ReadNPY: no panic, every refusal an *NPYError.
func TestHostileNPY(t *testing.T) {
	var b bytes.Buffer
	if err := WriteNPYFloat32(&b, npy3x4(), 3, 4); err != nil {
		t.Fatal(err)
	}
	hostiletest.Sweep(t, "NPY", hostiletest.Mutants(b.Bytes(), 4096, nil), func(b []byte) error {
		_, err := ReadNPY(bytes.NewReader(b))
		return err
	}, isNPYError)
}

// TestHostileSceneFolders: scene indexes that are cut, edited byte by
// byte, or hand-written to be hostile (paths out of the folder, huge or
// negative sizes, boxes outside, unknown classes, deep nesting, a frame
// file that is a decompression bomb) through ReadSceneFolder and Frame: no
// panic, every refusal a *SceneFolderError.
func TestHostileSceneFolders(t *testing.T) {
	dir, _, _ := writeTestFolder(t)
	good, err := os.ReadFile(filepath.Join(dir, SceneIndex))
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "bomb.png"), pngHeader(100000, 100000), 0o644); err != nil {
		t.Fatal(err)
	}
	hdr := `{"layout":"striate scene folder","version":1,"classes":["a","b"],"frames":[`
	inputs := hostiletest.Mutants(good, 4096, nil)
	for _, fr := range []string{
		`{"file":"../../etc/passwd","width":8,"height":8,"items":[]}`,
		`{"file":"/etc/passwd","width":8,"height":8,"items":[]}`,
		`{"file":"bomb.png","width":100000,"height":100000,"items":[]}`,
		`{"file":"bomb.png","width":-1,"height":8,"items":[]}`,
		`{"file":"frame-000000.png","width":90,"height":70,"items":[{"class":"c","box":[0,0,1,1]}]}`,
		`{"file":"frame-000000.png","width":90,"height":70,"items":[{"class":"a","box":[5,5,4,4]}]}`,
		`{"file":"frame-000000.png","width":90,"height":70,"items":[{"class":"a","box":[0,0,91,70]}]}`,
		`{"file":"frame-000000.png","width":90,"height":70,"items":[{"class":"a","box":[0,0,1]}]}`,
		`{"file":"frame-000000.png","width":1e99,"height":70,"items":[]}`,
		`{"file":"frame-000000.png","width":90,"height":70,"items":` + deep(10000) + `}`,
	} {
		inputs = append(inputs, []byte(hdr+fr+"]}"))
	}
	inputs = append(inputs, []byte("\xEF\xBB\xBF"+hdr+"]}"), []byte("null"), []byte(hdr+"]} {}"))
	idx := filepath.Join(dir, SceneIndex)
	hostiletest.Sweep(t, "scene folders", inputs, func(b []byte) error {
		if err := os.WriteFile(idx, b, 0o644); err != nil {
			t.Fatal(err)
		}
		f, err := ReadSceneFolder(dir)
		if err != nil {
			return err
		}
		var s Scene
		for i := range f.Frames {
			if _, err := f.Frame(&s, i); err != nil {
				return err
			}
		}
		return nil
	}, func(err error) bool { var e *SceneFolderError; return errors.As(err, &e) })
}

// deep is n nested JSON arrays.
func deep(n int) string {
	return string(bytes.Repeat([]byte("["), n)) + string(bytes.Repeat([]byte("]"), n))
}

// TestIDXGzipTooSmallForHeader: a gzip IDX file whose header declares 1 GiB
// but whose 64 MiB of zeros compress to about 64 KB cannot hold what it
// declares (DEFLATE expands at most 1032:1) and is refused from its header,
// before anything is inflated (before, the payload buffer grew with the 64
// MiB inflated before the file was found truncated).
func TestIDXGzipTooSmallForHeader(t *testing.T) {
	var raw bytes.Buffer
	raw.Write(idxHeader(IDXUint8, 1<<10, 1<<10, 1<<10))
	raw.Write(make([]byte, 64<<20))
	path := filepath.Join(t.TempDir(), "train-images-idx3-ubyte.gz")
	if err := os.WriteFile(path, gz(raw.Bytes()), 0o644); err != nil {
		t.Fatal(err)
	}
	var err error
	var m0, m1 runtime.MemStats
	runtime.ReadMemStats(&m0)
	_, err = ReadIDXFile(path)
	runtime.ReadMemStats(&m1)
	if e := asIDXError(t, err); e.Field != "file size" || !strings.Contains(err.Error(), "1032:1") {
		t.Fatalf("ReadIDXFile: %v", err)
	}
	if d := m1.TotalAlloc - m0.TotalAlloc; d > 1<<20 {
		t.Errorf("refusing it allocated %d bytes; want under 1 MiB (nothing inflated)", d)
	}
	// A good gzip file still reads.
	x := &IDX{Type: IDXUint8, Dims: []int{3, 4}, Data: make([]byte, 12)}
	good := filepath.Join(t.TempDir(), "x.idx.gz")
	if err := WriteIDXFile(good, x); err != nil {
		t.Fatal(err)
	}
	if _, err := ReadIDXFile(good); err != nil {
		t.Errorf("good gzip file: %v", err)
	}
}
