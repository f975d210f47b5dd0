package main

// NPY files (NumPy's format, version 1.0, as specified in numpy/lib/format.py
// and the NumPy Enhancement Proposal 1): the 6-byte magic "\x93NUMPY", the
// version bytes 1 and 0, a little-endian uint16 header length, then an ASCII
// Python dict literal
//
//	{'descr': '<f4', 'fortran_order': False, 'shape': (N, D), }
//
// padded with spaces and ended by '\n' so that the data starts at a multiple
// of 64 bytes, then the array in C (row-major) order, little-endian. NumPy
// (np.load), and most tools that read NumPy arrays, open these files
// directly. striate writes float32 ('<f4') features and probabilities and
// int32 ('<i4') labels.

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
)

const (
	npyMagic = "\x93NUMPY"
	npyAlign = 64 // NumPy ≥ 1.14 aligns the data to 64 bytes
	// npyMaxHeader bounds the header a reader accepts: a v1.0 header length
	// is a uint16, and striate's own headers are under 128 bytes.
	npyMaxHeader = 4096
	// npyMaxElems bounds what a reader allocates (2³¹ elements = 8 GiB of
	// float32), so a hostile shape cannot ask for more.
	npyMaxElems = 1 << 31
)

// npyHeader returns the complete header block (magic through '\n') for an
// array of the given dtype descr and shape.
func npyHeader(descr string, shape []int) []byte {
	dims := make([]string, len(shape))
	for i, d := range shape {
		dims[i] = strconv.Itoa(d)
	}
	sh := strings.Join(dims, ", ")
	if len(shape) == 1 {
		sh += ","
	}
	dict := fmt.Sprintf("{'descr': '%s', 'fortran_order': False, 'shape': (%s), }", descr, sh)
	total := len(npyMagic) + 2 + 2 + len(dict) + 1
	pad := (npyAlign - total%npyAlign) % npyAlign
	h := make([]byte, 0, total+pad)
	h = append(h, npyMagic...)
	h = append(h, 1, 0)
	h = binary.LittleEndian.AppendUint16(h, uint16(len(dict)+pad+1))
	h = append(h, dict...)
	for range pad {
		h = append(h, ' ')
	}
	return append(h, '\n')
}

// writeNPYFloat32 writes a rows×cols float32 array (row-major in data) to w.
func writeNPYFloat32(w io.Writer, data []float32, shape ...int) error {
	if n := shapeLen(shape); n != len(data) {
		return fmt.Errorf("npy: shape %v holds %d values, data has %d", shape, n, len(data))
	}
	bw := bufio.NewWriter(w)
	bw.Write(npyHeader("<f4", shape))
	var b [4]byte
	for _, v := range data {
		binary.LittleEndian.PutUint32(b[:], math.Float32bits(v))
		bw.Write(b[:])
	}
	return bw.Flush()
}

// writeNPYInt32 writes a 1-D int32 array.
func writeNPYInt32(w io.Writer, data []int) error {
	bw := bufio.NewWriter(w)
	bw.Write(npyHeader("<i4", []int{len(data)}))
	var b [4]byte
	for _, v := range data {
		if v < math.MinInt32 || v > math.MaxInt32 {
			return fmt.Errorf("npy: value %d does not fit int32", v)
		}
		binary.LittleEndian.PutUint32(b[:], uint32(int32(v)))
		bw.Write(b[:])
	}
	return bw.Flush()
}

func shapeLen(shape []int) int {
	n := 1
	for _, d := range shape {
		n *= d
	}
	return n
}

// npyArray is an array read back from an NPY file: float32 data or int32
// data depending on Descr.
type npyArray struct {
	Descr string
	Shape []int
	F32   []float32
	I32   []int32
}

// npyError reports a malformed NPY file.
type npyError struct {
	File   string
	Offset int64
	Msg    string
}

func (e *npyError) Error() string {
	return fmt.Sprintf("npy: %s at byte %d: %s", e.File, e.Offset, e.Msg)
}

// readNPY reads an NPY v1.0 file written in striate's subset of the format
// ('<f4' or '<i4', C order). It checks the header and the data size against
// the shape before allocating.
func readNPY(path string) (*npyArray, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, err
	}
	bad := func(off int64, format string, a ...any) error {
		return &npyError{path, off, fmt.Sprintf(format, a...)}
	}
	r := bufio.NewReader(f)
	var pre [10]byte
	if _, err := io.ReadFull(r, pre[:]); err != nil {
		return nil, bad(0, "file too short for an NPY header (%d bytes)", st.Size())
	}
	if string(pre[:6]) != npyMagic {
		return nil, bad(0, "magic %q; want \\x93NUMPY (is this an NPY file?)", pre[:6])
	}
	if pre[6] != 1 || pre[7] != 0 {
		return nil, bad(6, "format version %d.%d; striate reads version 1.0", pre[6], pre[7])
	}
	hl := int(binary.LittleEndian.Uint16(pre[8:]))
	if hl > npyMaxHeader || int64(10+hl) > st.Size() {
		return nil, bad(8, "header length %d exceeds the file or the %d-byte limit", hl, npyMaxHeader)
	}
	hb := make([]byte, hl)
	if _, err := io.ReadFull(r, hb); err != nil {
		return nil, bad(10, "truncated header")
	}
	h := strings.TrimRight(string(hb), " \n")
	a := &npyArray{}
	for _, field := range []string{"descr", "fortran_order", "shape"} {
		if !strings.Contains(h, "'"+field+"':") {
			return nil, bad(10, "header %q lacks %q", h, field)
		}
	}
	switch {
	case strings.Contains(h, "'descr': '<f4'"):
		a.Descr = "<f4"
	case strings.Contains(h, "'descr': '<i4'"):
		a.Descr = "<i4"
	default:
		return nil, bad(10, "header %q: dtype not supported; want '<f4' or '<i4'", h)
	}
	if !strings.Contains(h, "'fortran_order': False") {
		return nil, bad(10, "header %q: Fortran order not supported", h)
	}
	i := strings.Index(h, "'shape': (")
	if i < 0 {
		return nil, bad(10, "header %q: malformed shape", h)
	}
	j := strings.Index(h[i:], ")")
	if j < 0 {
		return nil, bad(10, "header %q: malformed shape", h)
	}
	n := 1
	for _, d := range strings.Split(h[i+len("'shape': ("):i+j], ",") {
		d = strings.TrimSpace(d)
		if d == "" {
			continue
		}
		v, err := strconv.Atoi(d)
		if err != nil || v < 0 || v > npyMaxElems {
			return nil, bad(10, "header %q: bad dimension %q", h, d)
		}
		a.Shape = append(a.Shape, v)
		n *= v
		if n > npyMaxElems {
			return nil, bad(10, "array of more than %d elements", int64(npyMaxElems))
		}
	}
	if want := int64(10+hl) + 4*int64(n); st.Size() != want {
		return nil, bad(int64(10+hl), "file holds %d bytes; shape %v needs %d", st.Size(), a.Shape, want)
	}
	raw := make([]byte, 4*n)
	if _, err := io.ReadFull(r, raw); err != nil {
		return nil, bad(int64(10+hl), "truncated data: %v", err)
	}
	if a.Descr == "<f4" {
		a.F32 = make([]float32, n)
		for k := range a.F32 {
			a.F32[k] = math.Float32frombits(binary.LittleEndian.Uint32(raw[4*k:]))
		}
	} else {
		a.I32 = make([]int32, n)
		for k := range a.I32 {
			a.I32[k] = int32(binary.LittleEndian.Uint32(raw[4*k:]))
		}
	}
	return a, nil
}

// writeFileAtomic writes through fill into a temporary file beside path and
// renames it into place, so a killed job never leaves a half-written shard
// that looks complete.
func writeFileAtomic(path string, fill func(io.Writer) error) (err error) {
	tmp, err := os.CreateTemp(dirOf(path), ".tmp-*")
	if err != nil {
		return err
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
		}
	}()
	if err = fill(tmp); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	return os.Rename(tmp.Name(), path)
}

func dirOf(path string) string {
	if i := strings.LastIndexAny(path, `/\`); i >= 0 {
		return path[:i+1]
	}
	return "."
}
