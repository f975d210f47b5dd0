package main

import (
	"bytes"
	"encoding/binary"
	"hash/crc32"
	"image"
	"image/gif"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// pngIHDR is a PNG signature and IHDR chunk declaring w×h 8-bit grey and no
// image data (PNG specification, ISO/IEC 15948 §11.2.2).
func pngIHDR(w, h uint32) []byte {
	ihdr := binary.BigEndian.AppendUint32([]byte("IHDR"), w)
	ihdr = binary.BigEndian.AppendUint32(ihdr, h)
	ihdr = append(ihdr, 8, 0, 0, 0, 0)
	b := append([]byte("\x89PNG\r\n\x1a\n"), 0, 0, 0, 13)
	b = append(b, ihdr...)
	return binary.BigEndian.AppendUint32(b, crc32.ChecksumIEEE(ihdr))
}

// TestCLIPredictHostileFolder: a folder of good images with a 0×0 PNG, a
// 0×0 GIF (which the standard decoder accepts, and which used to panic in
// ToGray), a PNG declaring 100000×100000 pixels (which used to exhaust
// memory) and a text file named .png. Each bad file is reported by name and
// skipped; every good image is still predicted; the exit code is 1.
func TestCLIPredictHostileFolder(t *testing.T) {
	cliFixture(t)
	dir := t.TempDir()
	goods := []string{"item0.png", "item1.png", "item2.png"}
	for _, n := range goods {
		b, err := os.ReadFile(filepath.Join(cliTest, "vertical", n))
		if err != nil {
			t.Fatal(err)
		}
		os.WriteFile(filepath.Join(dir, n), b, 0o644)
	}
	var empty bytes.Buffer
	if err := gif.Encode(&empty, image.NewGray(image.Rect(0, 0, 0, 0)), nil); err != nil {
		t.Fatal(err)
	}
	bad := map[string][]byte{
		"a-zero.png":  pngIHDR(0, 0),
		"b-zero.gif":  empty.Bytes(),
		"c-bomb.png":  pngIHDR(100000, 100000),
		"d-label.png": []byte("rail 3, size M"),
	}
	for n, b := range bad {
		os.WriteFile(filepath.Join(dir, n), b, 0o644)
	}
	r := mustRun(t, 1, "predict", "--model", cliModelA, "--batch", "2", dir)
	for _, n := range goods {
		if !strings.Contains(r.stdout, filepath.Join(dir, n)+"\t") {
			t.Errorf("no prediction for good image %s:\n%s", n, r.stdout)
		}
	}
	for n, why := range map[string]string{"a-zero.png": "damaged", "b-zero.gif": "empty image", "c-bomb.png": "MaxImagePixels", "d-label.png": "not a PNG"} {
		found := false
		for _, l := range strings.Split(r.stderr, "\n") {
			found = found || (strings.Contains(l, n+": ") && strings.Contains(l, why))
		}
		if !found {
			t.Errorf("stderr does not report %s as %q:\n%s", n, why, r.stderr)
		}
	}
	if strings.Contains(r.stderr, "panic") || strings.Contains(r.stderr, "fatal error") || !strings.Contains(r.stderr, "4 of 7 files") {
		t.Errorf("stderr:\n%s", r.stderr)
	}
}
