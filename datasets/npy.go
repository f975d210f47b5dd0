package datasets

// NPY files, NumPy's array format as documented in numpy.lib.format (the
// "NPY format" page of the NumPy reference, NEP 1): the 6-byte magic
// "\x93NUMPY", a major and a minor version byte, the header length (a
// little-endian uint16 in version 1.0, a uint32 in versions 2.0 and 3.0),
// then the header, an ASCII (3.0: UTF-8) Python dict literal
//
//	{'descr': '<f4', 'fortran_order': False, 'shape': (N, D), }
//
// padded with spaces and ended by '\n' so that the data starts at a multiple
// of 64 bytes, then the array's elements in C (row-major) order. np.load and
// most tools that read NumPy arrays open these files directly.

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

// NPY element types striate reads and writes (NumPy dtype descr strings):
// little-endian float32 for features and probabilities, little-endian int32
// for labels.
const (
	NPYFloat32 = "<f4"
	NPYInt32   = "<i4"
)

const (
	npyMagic = "\x93NUMPY"
	// npyAlign: NumPy ≥ 1.14 pads the header so the data starts at a
	// multiple of 64 bytes (numpy.lib.format.ARRAY_ALIGN).
	npyAlign = 64
	// MaxNPYHeader bounds the header a reader accepts, the default
	// max_header_size of np.load (10000 bytes; NumPy ≥ 1.24, from memory).
	// striate's own headers are under 128 bytes.
	MaxNPYHeader = 10000
	// MaxNPYElems bounds the elements a reader accepts (2³⁰, 4 GiB of
	// float32), so a hostile shape cannot ask for more; it also fits the int
	// of 32-bit boards.
	MaxNPYElems = 1 << 30
)

// NPYArray is an array read from an NPY file: Descr is NPYFloat32 (data in
// F32) or NPYInt32 (data in I32), Shape its dimensions in C order (empty for
// a 0-d array, which holds one element).
type NPYArray struct {
	Descr string
	Shape []int
	F32   []float32
	I32   []int32
}

// Len is the number of elements the shape holds.
func (a *NPYArray) Len() int { return shapeLen(a.Shape) }

// NPYError reports a malformed or unsupported NPY file: the file (empty when
// reading a stream), the byte offset, the field and what is wrong.
type NPYError struct {
	File   string
	Offset int64
	Field  string // "magic", "version", "header", "descr", "fortran_order", "shape" or "data"
	Msg    string
}

func (e *NPYError) Error() string {
	f := e.File
	if f == "" {
		f = "stream"
	}
	return fmt.Sprintf("datasets: NPY %s at byte %d (%s): %s", f, e.Offset, e.Field, e.Msg)
}

// npyHeader returns the complete header block (magic through '\n') for an
// array of the given dtype descr and shape, exactly as np.save (version 1.0)
// writes it.
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

func checkShape(shape []int, n int) error {
	for _, d := range shape {
		if d < 0 {
			return fmt.Errorf("datasets: NPY shape %v has a negative dimension", shape)
		}
	}
	if m := shapeLen(shape); m != n {
		return fmt.Errorf("datasets: NPY shape %v holds %d values, data has %d", shape, m, n)
	}
	return nil
}

// WriteNPYFloat32 writes data as a float32 array of the given shape (C
// order; the product of shape must be len(data)) in NPY format 1.0, byte
// for byte what np.save writes for the same array.
func WriteNPYFloat32(w io.Writer, data []float32, shape ...int) error {
	if err := checkShape(shape, len(data)); err != nil {
		return err
	}
	bw := bufio.NewWriter(w)
	bw.Write(npyHeader(NPYFloat32, shape))
	var b [4]byte
	for _, v := range data {
		binary.LittleEndian.PutUint32(b[:], math.Float32bits(v))
		bw.Write(b[:])
	}
	return bw.Flush()
}

// WriteNPYInt32 writes data as an int32 array of the given shape, like
// WriteNPYFloat32. A value outside the int32 range is an error.
func WriteNPYInt32(w io.Writer, data []int, shape ...int) error {
	if err := checkShape(shape, len(data)); err != nil {
		return err
	}
	for i, v := range data {
		if v < math.MinInt32 || v > math.MaxInt32 {
			return fmt.Errorf("datasets: NPY value %d at index %d does not fit int32", v, i)
		}
	}
	bw := bufio.NewWriter(w)
	bw.Write(npyHeader(NPYInt32, shape))
	var b [4]byte
	for _, v := range data {
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

// ReadNPYFile reads an NPY file with ReadNPY, first checking that the file's
// length is exactly what its header declares; errors name the file.
func ReadNPYFile(path string) (*NPYArray, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("datasets: %w", err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("datasets: %w", err)
	}
	a, err := readNPY(bufio.NewReader(f), path, st.Size())
	return a, err
}

// ReadNPY reads an NPY array of format version 1.0, 2.0 or 3.0 whose dtype
// is NPYFloat32 or NPYInt32 in C order, the subset striate writes (convert
// other arrays with a.astype('<f4') or a.astype('<i4') and
// np.ascontiguousarray). The header is parsed as the Python literal the
// format specifies, with exactly the keys descr, fortran_order and shape.
// Sizes are checked against MaxNPYHeader and MaxNPYElems before allocating,
// and the data is read in pieces, so a short stream with a large declared
// shape costs no more memory than its length. Bytes after the data are an
// error. Bad input gives an *NPYError.
func ReadNPY(r io.Reader) (*NPYArray, error) { return readNPY(r, "", -1) }

// readNPY reads from r; size is the stream's length, or -1 when unknown.
func readNPY(r io.Reader, file string, size int64) (*NPYArray, error) {
	bad := func(off int64, field, format string, a ...any) error {
		return &NPYError{File: file, Offset: off, Field: field, Msg: fmt.Sprintf(format, a...)}
	}
	var pre [12]byte
	if n, err := io.ReadFull(r, pre[:8]); err != nil {
		return nil, bad(int64(n), "magic", "only %d bytes; an NPY file starts with 10 or more", n)
	}
	if string(pre[:6]) != npyMagic {
		return nil, bad(0, "magic", "%q; want \\x93NUMPY (is this an NPY file?)", pre[:6])
	}
	major, minor := pre[6], pre[7]
	var hl, start int64
	switch {
	case major == 1 && minor == 0:
		if _, err := io.ReadFull(r, pre[8:10]); err != nil {
			return nil, bad(8, "header", "truncated header length")
		}
		hl, start = int64(binary.LittleEndian.Uint16(pre[8:10])), 10
	case (major == 2 || major == 3) && minor == 0:
		if _, err := io.ReadFull(r, pre[8:12]); err != nil {
			return nil, bad(8, "header", "truncated header length")
		}
		hl, start = int64(binary.LittleEndian.Uint32(pre[8:12])), 12
	default:
		return nil, bad(6, "version", "format version %d.%d; striate reads 1.0, 2.0 and 3.0", major, minor)
	}
	if hl > MaxNPYHeader || (size >= 0 && start+hl > size) {
		return nil, bad(8, "header", "header length %d exceeds the file or the %d-byte limit", hl, MaxNPYHeader)
	}
	hb := make([]byte, hl)
	if _, err := io.ReadFull(r, hb); err != nil {
		return nil, bad(start, "header", "truncated header (%d bytes declared)", hl)
	}
	a, field, err := parseNPYHeader(string(hb), major == 3)
	if err != nil {
		return nil, bad(start, field, "%v in header %q", err, strings.TrimRight(string(hb), " \n"))
	}
	n := a.Len()
	data := start + hl
	if size >= 0 && size != data+4*int64(n) {
		return nil, bad(data, "data", "file holds %d bytes; shape %v of %s needs %d", size, a.Shape, a.Descr, data+4*int64(n))
	}
	// Read in pieces of at most 1 MiB so that memory follows the bytes
	// actually present, not the declared shape.
	const piece = 1 << 18
	var raw [4 * 1024]byte
	got := 0
	if a.Descr == NPYFloat32 {
		a.F32 = make([]float32, 0, min(n, piece))
	} else {
		a.I32 = make([]int32, 0, min(n, piece))
	}
	for got < n {
		k := min(n-got, len(raw)/4)
		if _, err := io.ReadFull(r, raw[:4*k]); err != nil {
			return nil, bad(data+4*int64(got), "data", "truncated data: %d of %d elements of shape %v present", got, n, a.Shape)
		}
		for j := range k {
			u := binary.LittleEndian.Uint32(raw[4*j:])
			if a.F32 != nil {
				a.F32 = append(a.F32, math.Float32frombits(u))
			} else {
				a.I32 = append(a.I32, int32(u))
			}
		}
		got += k
	}
	if size < 0 {
		if k, _ := io.ReadFull(r, raw[:1]); k > 0 {
			return nil, bad(data+4*int64(n), "data", "bytes after the %d elements of shape %v", n, a.Shape)
		}
	}
	return a, nil
}

// parseNPYHeader parses the header dict literal. It returns the field at
// fault with an error.
func parseNPYHeader(h string, utf8 bool) (*NPYArray, string, error) {
	if !utf8 {
		for i := 0; i < len(h); i++ {
			if h[i] >= 0x80 {
				return nil, "header", fmt.Errorf("non-ASCII byte 0x%02x at header byte %d (versions 1.0 and 2.0 are ASCII)", h[i], i)
			}
		}
	}
	p := &pyLit{s: h}
	if !p.eat('{') {
		return nil, "header", fmt.Errorf("not a dict literal")
	}
	a := &NPYArray{}
	seen := map[string]bool{}
	for !p.eat('}') {
		key, ok := p.str()
		if !ok || !p.eat(':') {
			return nil, "header", fmt.Errorf("malformed dict entry at header byte %d", p.i)
		}
		if seen[key] {
			return nil, key, fmt.Errorf("key %q twice", key)
		}
		seen[key] = true
		switch key {
		case "descr":
			d, ok := p.str()
			if !ok {
				return nil, key, fmt.Errorf("descr is not a string")
			}
			if d != NPYFloat32 && d != NPYInt32 {
				return nil, key, fmt.Errorf("dtype %q not supported; want %q or %q (convert with a.astype('<f4'))", d, NPYFloat32, NPYInt32)
			}
			a.Descr = d
		case "fortran_order":
			switch {
			case p.word("False"):
			case p.word("True"):
				return nil, key, fmt.Errorf("Fortran order not supported (write np.ascontiguousarray(a))")
			default:
				return nil, key, fmt.Errorf("fortran_order is not True or False")
			}
		case "shape":
			shape, err := p.tuple()
			if err != nil {
				return nil, key, err
			}
			a.Shape = shape
		default:
			return nil, "header", fmt.Errorf("unknown key %q; the format has descr, fortran_order and shape", key)
		}
		if !p.eat(',') && !p.peek('}') {
			return nil, "header", fmt.Errorf("missing ',' at header byte %d", p.i)
		}
	}
	p.space()
	if p.i != len(p.s) {
		return nil, "header", fmt.Errorf("text after the dict at header byte %d", p.i)
	}
	for _, k := range []string{"descr", "fortran_order", "shape"} {
		if !seen[k] {
			return nil, k, fmt.Errorf("key %q missing", k)
		}
	}
	return a, "", nil
}

// pyLit scans the small part of Python literal syntax an NPY header uses.
type pyLit struct {
	s string
	i int
}

func (p *pyLit) space() {
	for p.i < len(p.s) && (p.s[p.i] == ' ' || p.s[p.i] == '\n' || p.s[p.i] == '\t') {
		p.i++
	}
}

func (p *pyLit) peek(c byte) bool { p.space(); return p.i < len(p.s) && p.s[p.i] == c }

func (p *pyLit) eat(c byte) bool {
	if p.peek(c) {
		p.i++
		return true
	}
	return false
}

func (p *pyLit) word(w string) bool {
	p.space()
	if strings.HasPrefix(p.s[p.i:], w) {
		p.i += len(w)
		return true
	}
	return false
}

// str reads a quoted string without escapes ('…' or "…").
func (p *pyLit) str() (string, bool) {
	p.space()
	if p.i >= len(p.s) || (p.s[p.i] != '\'' && p.s[p.i] != '"') {
		return "", false
	}
	q := p.s[p.i]
	j := strings.IndexByte(p.s[p.i+1:], q)
	if j < 0 || strings.IndexByte(p.s[p.i+1:p.i+1+j], '\\') >= 0 {
		return "", false
	}
	v := p.s[p.i+1 : p.i+1+j]
	p.i += j + 2
	return v, true
}

// tuple reads a tuple of non-negative decimal integers: (), (3,), (3, 4).
func (p *pyLit) tuple() ([]int, error) {
	if !p.eat('(') {
		return nil, fmt.Errorf("shape is not a tuple")
	}
	shape := []int{}
	n := int64(1)
	for !p.eat(')') {
		p.space()
		j := p.i
		for j < len(p.s) && p.s[j] >= '0' && p.s[j] <= '9' {
			j++
		}
		v, err := strconv.Atoi(p.s[p.i:j])
		if err != nil || v > MaxNPYElems {
			return nil, fmt.Errorf("dimension %d of shape is not an integer in [0, %d]", len(shape), MaxNPYElems)
		}
		p.i = j
		shape = append(shape, v)
		if n *= int64(v); n > MaxNPYElems {
			return nil, fmt.Errorf("shape %v holds more than %d elements (MaxNPYElems)", shape, MaxNPYElems)
		}
		if !p.eat(',') {
			if !p.eat(')') {
				return nil, fmt.Errorf("malformed shape tuple")
			}
			if len(shape) == 1 {
				return nil, fmt.Errorf("shape (%d) is not a tuple; a 1-d shape is written (%d,)", v, v)
			}
			break
		}
	}
	return shape, nil
}
