package main

import (
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"testing"
)

var npyDir = filepath.Join("..", "..", "testdata", "eval", "npy")

// TestNPYMatchesNumPy compares striate's NPY bytes with files np.save wrote
// (NumPy 1.24.2, testdata/eval/npy/gen_npy.py): header, padding and data
// must be identical.
func TestNPYMatchesNumPy(t *testing.T) {
	f := make([]float32, 12)
	for i := range f {
		f[i] = (float32(i)*0.5 - 1) / 3
	}
	cases := []struct {
		file  string
		write func(*bytes.Buffer) error
	}{
		{"float32_3x4.npy", func(b *bytes.Buffer) error { return writeNPYFloat32(b, f, 3, 4) }},
		{"int32_5.npy", func(b *bytes.Buffer) error { return writeNPYInt32(b, []int{0, 1, 2, 9, -7}) }},
		{"float32_0x7.npy", func(b *bytes.Buffer) error { return writeNPYFloat32(b, nil, 0, 7) }},
		{"float32_1x1x1x1x1x1x1x1x1x1x1x1x2.npy", func(b *bytes.Buffer) error {
			return writeNPYFloat32(b, []float32{1.5, -2.25}, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 2)
		}},
	}
	for _, c := range cases {
		want, err := os.ReadFile(filepath.Join(npyDir, c.file))
		if err != nil {
			t.Fatal(err)
		}
		var got bytes.Buffer
		if err := c.write(&got); err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(got.Bytes(), want) {
			t.Errorf("%s: striate wrote\n%q\nNumPy wrote\n%q", c.file, got.Bytes(), want)
		}
		a, err := readNPY(filepath.Join(npyDir, c.file))
		if err != nil {
			t.Errorf("%s: %v", c.file, err)
			continue
		}
		if c.file == "float32_3x4.npy" {
			for i := range f {
				if a.F32[i] != f[i] {
					t.Errorf("read back [%d] = %g; want %g", i, a.F32[i], f[i])
				}
			}
		}
		if c.file == "int32_5.npy" && (len(a.I32) != 5 || a.I32[4] != -7) {
			t.Errorf("int32 read back %v", a.I32)
		}
	}
}

func TestReadNPYRejectsDamage(t *testing.T) {
	good, err := os.ReadFile(filepath.Join(npyDir, "float32_3x4.npy"))
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	for name, b := range map[string][]byte{
		"truncated":    good[:len(good)-3],
		"trailing":     append(append([]byte{}, good...), 0),
		"magic":        append([]byte("XNUMPY"), good[6:]...),
		"version":      append(append([]byte{}, good[:6]...), append([]byte{3, 0}, good[8:]...)...),
		"short":        good[:5],
		"dtype":        bytes.Replace(good, []byte("<f4"), []byte("<f8"), 1),
		"fortran":      bytes.Replace(good, []byte("False"), []byte("True "), 1),
		"badshape":     bytes.Replace(good, []byte("(3, 4)"), []byte("(3x 4)"), 1),
		"sizemismatch": bytes.Replace(good, []byte("(3, 4)"), []byte("(3, 5)"), 1),
		"shapenotuple": bytes.Replace(good, []byte("'shape': (3, 4)"), []byte("'shape':  3, 4)"), 1),
		"hugeshape":    bytes.Replace(good, []byte("'shape': (3, 4), }"), []byte("'shape': (99999,99999),}"), 1),
	} {
		p := filepath.Join(dir, name+".npy")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		_, err := readNPY(p)
		var ne *npyError
		if !errors.As(err, &ne) {
			t.Errorf("%s: err %v; want *npyError", name, err)
		}
	}
}

// FuzzReadNPY feeds damaged and random headers to the reader: it must
// return an array whose size matches its shape, or an error, never panic.
func FuzzReadNPY(f *testing.F) {
	for _, name := range []string{"float32_3x4.npy", "int32_5.npy", "float32_0x7.npy"} {
		b, err := os.ReadFile(filepath.Join(npyDir, name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, b []byte) {
		p := filepath.Join(dir, "x.npy")
		if err := os.WriteFile(p, b, 0o644); err != nil {
			t.Fatal(err)
		}
		a, err := readNPY(p)
		if err != nil {
			return
		}
		if n := shapeLen(a.Shape); n != len(a.F32)+len(a.I32) {
			t.Fatalf("shape %v but %d values", a.Shape, len(a.F32)+len(a.I32))
		}
	})
}
