package datasets

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// npyDir holds NPY files written by NumPy 1.24.2 (testdata/datasets/npy/gen_npy.py).
var npyDir = filepath.Join("..", "testdata", "datasets", "npy")

// npy3x4 is the array of float32_3x4*.npy, computed as the script does:
// (arange(12)·0.5 − 1)/3 in float32.
func npy3x4() []float32 {
	f := make([]float32, 12)
	for i := range f {
		f[i] = (float32(i)*0.5 - 1) / 3
	}
	return f
}

// TestNPYMatchesNumPy compares the writer's bytes with files np.save wrote
// (NumPy 1.24.2): header, padding and data must be identical, and the reader
// must give back the values.
func TestNPYMatchesNumPy(t *testing.T) {
	f := npy3x4()
	cases := []struct {
		file  string
		write func(*bytes.Buffer) error
		shape []int
		f32   []float32
		i32   []int32
	}{
		{"float32_3x4.npy", func(b *bytes.Buffer) error { return WriteNPYFloat32(b, f, 3, 4) }, []int{3, 4}, f, nil},
		{"int32_5.npy", func(b *bytes.Buffer) error { return WriteNPYInt32(b, []int{0, 1, 2, 9, -7}, 5) }, []int{5}, nil, []int32{0, 1, 2, 9, -7}},
		{"float32_0x7.npy", func(b *bytes.Buffer) error { return WriteNPYFloat32(b, nil, 0, 7) }, []int{0, 7}, []float32{}, nil},
		{"float32_1x1x1x1x1x1x1x1x1x1x1x1x2.npy", func(b *bytes.Buffer) error {
			return WriteNPYFloat32(b, []float32{1.5, -2.25}, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 2)
		}, []int{1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 2}, []float32{1.5, -2.25}, nil},
		{"float32_scalar.npy", func(b *bytes.Buffer) error { return WriteNPYFloat32(b, []float32{-0.125}) }, []int{}, []float32{-0.125}, nil},
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
			t.Errorf("%s: WriteNPY wrote\n%q\nNumPy wrote\n%q", c.file, got.Bytes(), want)
		}
		a, err := ReadNPYFile(filepath.Join(npyDir, c.file))
		if err != nil {
			t.Errorf("%s: %v", c.file, err)
			continue
		}
		if !slices.Equal(a.Shape, c.shape) || (c.f32 != nil && !slices.Equal(a.F32, c.f32)) || (c.i32 != nil && !slices.Equal(a.I32, c.i32)) {
			t.Errorf("%s: read shape %v, %v %v; want %v, %v %v", c.file, a.Shape, a.F32, a.I32, c.shape, c.f32, c.i32)
		}
	}
}

// TestReadNPYVersions: the reader takes the format versions 2.0 (uint32
// header length) and 3.0 (UTF-8 header) that NumPy writes for the same array.
func TestReadNPYVersions(t *testing.T) {
	for _, name := range []string{"float32_3x4_v2.npy", "float32_3x4_v3.npy"} {
		b, err := os.ReadFile(filepath.Join(npyDir, name))
		if err != nil {
			t.Fatal(err)
		}
		if b[6] != name[len(name)-5]-'0' {
			t.Fatalf("%s: version byte %d; the fixture is not what its name says", name, b[6])
		}
		a, err := ReadNPY(bytes.NewReader(b))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if !slices.Equal(a.Shape, []int{3, 4}) || !slices.Equal(a.F32, npy3x4()) {
			t.Errorf("%s: shape %v values %v", name, a.Shape, a.F32)
		}
	}
}

// TestReadNPYRejects: unsupported arrays NumPy writes, and damaged files,
// each give an *NPYError naming the field at fault.
func TestReadNPYRejects(t *testing.T) {
	for name, field := range map[string]string{"reject_fortran.npy": "fortran_order", "reject_float64.npy": "descr", "reject_bigendian.npy": "descr"} {
		_, err := ReadNPYFile(filepath.Join(npyDir, name))
		var ne *NPYError
		if !errors.As(err, &ne) || ne.Field != field {
			t.Errorf("%s: err %v; want an *NPYError on %s", name, err, field)
		}
	}
	good, err := os.ReadFile(filepath.Join(npyDir, "float32_3x4.npy"))
	if err != nil {
		t.Fatal(err)
	}
	rep := func(old, new string) []byte { return bytes.Replace(good, []byte(old), []byte(new), 1) }
	for name, c := range map[string]struct {
		b     []byte
		field string
	}{
		"truncated":    {good[:len(good)-3], "data"},
		"trailing":     {append(append([]byte{}, good...), 0), "data"},
		"magic":        {append([]byte("XNUMPY"), good[6:]...), "magic"},
		"version":      {append(append([]byte{}, good[:6]...), append([]byte{4, 0}, good[8:]...)...), "version"},
		"short":        {good[:5], "magic"},
		"headerlen":    {append(append([]byte{}, good[:8]...), 0xff, 0xff), "header"},
		"dtype":        {rep("<f4", "<f8"), "descr"},
		"fortran":      {rep("False", "True "), "fortran_order"},
		"badshape":     {rep("(3, 4)", "(3x 4)"), "shape"},
		"sizemismatch": {rep("(3, 4)", "(3, 5)"), "data"},
		"shapenotuple": {rep("'shape': (3, 4)", "'shape':  3, 4)"), "shape"},
		"notatuple":    {rep("(3, 4)", "(12)  "), "shape"},
		"negative":     {rep("(3, 4)", "(-3,4)"), "shape"},
		"hugeshape":    {rep("'shape': (3, 4), }", "'shape': (99999,99999),}"), "shape"},
		"extrakey":     {rep("'shape'", "'shapf'"), "header"},
		"twice":        {rep("'fortran_order': False", "'descr': '<f4', False"), "header"},
		"nonascii":     {rep("'descr'", "'d\xe9scr'"), "header"},
	} {
		for _, sized := range []bool{true, false} {
			var err error
			if sized {
				p := filepath.Join(t.TempDir(), name+".npy")
				if err := os.WriteFile(p, c.b, 0o644); err != nil {
					t.Fatal(err)
				}
				_, err = ReadNPYFile(p)
			} else {
				_, err = ReadNPY(bytes.NewReader(c.b))
			}
			var ne *NPYError
			if !errors.As(err, &ne) {
				t.Errorf("%s (file %v): err %v; want *NPYError", name, sized, err)
				continue
			}
			// A stream cannot check the length before the header, so a
			// wrong size shows as truncation or trailing bytes there.
			if ne.Field != c.field && !(name == "sizemismatch" && !sized) && !(name == "headerlen" && !sized) {
				t.Errorf("%s (file %v): field %q (%v); want %q", name, sized, ne.Field, err, c.field)
			}
		}
	}
}

// TestWriteNPYChecks: a shape that does not match the data, or a label
// outside int32, is an error before anything is written.
func TestWriteNPYChecks(t *testing.T) {
	var b bytes.Buffer
	if err := WriteNPYFloat32(&b, make([]float32, 6), 4, 2); err == nil || b.Len() != 0 {
		t.Errorf("shape 4×2 for 6 values: err %v, %d bytes written", err, b.Len())
	}
	if err := WriteNPYInt32(&b, []int{1, math.MaxInt32 + 1}, 2); err == nil || b.Len() != 0 {
		t.Errorf("value above int32: err %v, %d bytes written", err, b.Len())
	}
}

// FuzzReadNPY feeds damaged and random files to the reader: it returns an
// error, or an array whose length matches its shape and which writes and
// reads back identically; it never panics. Seeded from testdata/datasets/npy.
func FuzzReadNPY(f *testing.F) {
	seeds, err := filepath.Glob(filepath.Join(npyDir, "*.npy"))
	if err != nil || len(seeds) == 0 {
		f.Fatalf("no seeds in %s (%v)", npyDir, err)
	}
	for _, p := range seeds {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		a, err := ReadNPY(bytes.NewReader(b))
		if err != nil {
			return
		}
		if n := a.Len(); n != len(a.F32)+len(a.I32) {
			t.Fatalf("shape %v but %d values", a.Shape, len(a.F32)+len(a.I32))
		}
		var w bytes.Buffer
		if a.Descr == NPYFloat32 {
			err = WriteNPYFloat32(&w, a.F32, a.Shape...)
		} else {
			ints := make([]int, len(a.I32))
			for i, v := range a.I32 {
				ints[i] = int(v)
			}
			err = WriteNPYInt32(&w, ints, a.Shape...)
		}
		if err != nil {
			t.Fatal(err)
		}
		c, err := ReadNPY(&w)
		if err != nil {
			t.Fatal(err)
		}
		if !slices.Equal(c.Shape, a.Shape) || c.Descr != a.Descr || !slices.Equal(c.I32, a.I32) ||
			!slices.EqualFunc(c.F32, a.F32, func(x, y float32) bool { return math.Float32bits(x) == math.Float32bits(y) }) {
			t.Fatalf("round trip changed the array: %v %v", a.Shape, c.Shape)
		}
	})
}
