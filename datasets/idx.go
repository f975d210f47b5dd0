package datasets

import (
	"bufio"
	"compress/gzip"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"unicode/utf8"
)

// IDXType is the element-type byte of an IDX header (the third byte of the
// magic number).
type IDXType byte

// The element types of the IDX format as published with the MNIST database
// (LeCun, Cortes & Burges, "THE MNIST DATABASE of handwritten digits").
// Multi-byte elements are big-endian.
const (
	IDXUint8   IDXType = 0x08
	IDXInt8    IDXType = 0x09
	IDXInt16   IDXType = 0x0B
	IDXInt32   IDXType = 0x0C
	IDXFloat32 IDXType = 0x0D
	IDXFloat64 IDXType = 0x0E
)

// Size returns the size of one element in bytes, or 0 for an unknown type.
func (t IDXType) Size() int {
	switch t {
	case IDXUint8, IDXInt8:
		return 1
	case IDXInt16:
		return 2
	case IDXInt32, IDXFloat32:
		return 4
	case IDXFloat64:
		return 8
	}
	return 0
}

// String names the type as the format description does.
func (t IDXType) String() string {
	switch t {
	case IDXUint8:
		return "u8"
	case IDXInt8:
		return "i8"
	case IDXInt16:
		return "i16"
	case IDXInt32:
		return "i32"
	case IDXFloat32:
		return "f32"
	case IDXFloat64:
		return "f64"
	}
	return fmt.Sprintf("0x%02X", byte(t))
}

// Hard limits checked against every IDX header before anything is allocated.
const (
	// MaxIDXRank is the largest rank accepted. The format allows 255, but
	// every MNIST-style file has rank 1 (labels) or 3 (images); 4 leaves room
	// for colour stacks.
	MaxIDXRank = 4
	// MaxIDXDim is the largest single dimension accepted (16,777,216): 280
	// times the 60,000 images of the largest standard split.
	MaxIDXDim = 1 << 24
	// MaxIDXBytes is the largest payload accepted (1 GiB): about 20 times the
	// 47 MB of the MNIST training images, and small enough to hold in memory
	// on the 24 GiB machines this project targets.
	MaxIDXBytes = 1 << 30
)

// IDXError reports bad IDX data: the file, the byte offset in the decoded
// (decompressed) stream, the header field or region, what was expected and
// what was found. Err, when set, is the underlying I/O or gzip error.
type IDXError struct {
	File   string
	Offset int64
	Field  string
	Want   string
	Got    string
	Err    error
}

func (e *IDXError) Error() string {
	s := fmt.Sprintf("datasets: IDX file %q, offset %d, %s: want %s, got %s", e.File, e.Offset, e.Field, e.Want, e.Got)
	if e.Err != nil {
		s += ": " + e.Err.Error()
	}
	return s
}

func (e *IDXError) Unwrap() error { return e.Err }

// IDX is one decoded IDX array: its element type, its dimensions (outermost
// first) and the raw elements, big-endian, exactly as stored:
//
//	element (i0, i1, ..., ik) starts at Data[((i0*Dims[1]+i1)*...+ik)*Type.Size()]
//
// For IDXUint8, Data is the pixel or label bytes themselves.
type IDX struct {
	Type IDXType
	Dims []int
	Data []byte
}

// Len returns the number of elements, the product of Dims.
func (x *IDX) Len() int {
	n := 1
	for _, d := range x.Dims {
		n *= d
	}
	return n
}

// Float64s decodes every element to float64 (exactly: every IDX type fits)
// into dst, reusing it when it is long enough, and returns it.
func (x *IDX) Float64s(dst []float64) []float64 {
	n := x.Len()
	if cap(dst) < n {
		dst = make([]float64, n)
	}
	dst = dst[:n]
	b := x.Data
	for i := range dst {
		switch x.Type {
		case IDXUint8:
			dst[i] = float64(b[i])
		case IDXInt8:
			dst[i] = float64(int8(b[i]))
		case IDXInt16:
			dst[i] = float64(int16(binary.BigEndian.Uint16(b[2*i:])))
		case IDXInt32:
			dst[i] = float64(int32(binary.BigEndian.Uint32(b[4*i:])))
		case IDXFloat32:
			dst[i] = float64(math.Float32frombits(binary.BigEndian.Uint32(b[4*i:])))
		case IDXFloat64:
			dst[i] = math.Float64frombits(binary.BigEndian.Uint64(b[8*i:]))
		}
	}
	return dst
}

// header is a checked IDX header.
type header struct {
	typ   IDXType
	dims  []int
	bytes int64 // payload size
	size  int64 // header size
}

// readHeader reads and validates the magic number and the dimensions.
func readHeader(r io.Reader, name string) (header, error) {
	var h header
	var m [4]byte
	n, err := io.ReadFull(r, m[:])
	if n == 0 && (err == io.EOF || err == io.ErrUnexpectedEOF) {
		return h, &IDXError{File: name, Field: "magic number", Want: "4 bytes 00 00 <type> <rank>", Got: "an empty file"}
	}
	if err != nil {
		return h, &IDXError{File: name, Offset: int64(n), Field: "magic number", Want: "4 bytes", Got: fmt.Sprintf("%d bytes (truncated)", n), Err: ioErr(err)}
	}
	if m[0] != 0 || m[1] != 0 {
		return h, &IDXError{File: name, Field: "magic number", Want: "first two bytes 00 00", Got: fmt.Sprintf("% X (not an IDX file)", m[:2])}
	}
	h.typ = IDXType(m[2])
	if h.typ.Size() == 0 {
		return h, &IDXError{File: name, Offset: 2, Field: "element type", Want: "one of 08 (u8), 09 (i8), 0B (i16), 0C (i32), 0D (f32), 0E (f64)", Got: fmt.Sprintf("%02X", m[2])}
	}
	rank := int(m[3])
	if rank < 1 || rank > MaxIDXRank {
		return h, &IDXError{File: name, Offset: 3, Field: "rank", Want: fmt.Sprintf("1..%d (MaxIDXRank)", MaxIDXRank), Got: fmt.Sprint(rank)}
	}
	var db [4 * MaxIDXRank]byte
	n, err = io.ReadFull(r, db[:4*rank])
	if err != nil {
		return h, &IDXError{File: name, Offset: 4 + int64(n), Field: "dimensions", Want: fmt.Sprintf("%d bytes for %d dimensions", 4*rank, rank), Got: fmt.Sprintf("%d bytes (truncated)", n), Err: ioErr(err)}
	}
	h.dims = make([]int, rank)
	elems := int64(1)
	for i := range h.dims {
		d := int64(binary.BigEndian.Uint32(db[4*i:]))
		off := int64(4 + 4*i)
		if d > MaxIDXDim {
			return h, &IDXError{File: name, Offset: off, Field: fmt.Sprintf("dimension %d", i), Want: fmt.Sprintf("at most %d (MaxIDXDim)", MaxIDXDim), Got: fmt.Sprint(d)}
		}
		h.dims[i] = int(d)
		elems *= d // at most MaxIDXBytes * MaxIDXDim < 2^63 by the check below
		if elems*int64(h.typ.Size()) > MaxIDXBytes {
			return h, &IDXError{File: name, Offset: off, Field: "dimension product", Want: fmt.Sprintf("at most %d bytes of data (MaxIDXBytes)", MaxIDXBytes), Got: fmt.Sprintf("dimensions %v of %s overflow it", dimsSoFar(db[:4*rank], i+1), h.typ)}
		}
	}
	h.bytes = elems * int64(h.typ.Size())
	h.size = int64(4 + 4*rank)
	return h, nil
}

func dimsSoFar(b []byte, k int) []uint32 {
	d := make([]uint32, k)
	for i := range d {
		d[i] = binary.BigEndian.Uint32(b[4*i:])
	}
	return d
}

// ioErr keeps real I/O errors and drops the plain end-of-file markers, which
// the message already describes as truncation.
func ioErr(err error) error {
	if err == io.EOF || err == io.ErrUnexpectedEOF {
		return nil
	}
	return err
}

// readChunk is the first size of a payload buffer whose length is not known
// to be present; it then doubles as data arrives, so a header claiming more
// data than the stream holds costs at most about twice the bytes present.
const readChunk = 64 << 10

// readPayload reads exactly h.bytes bytes. When present is true (a plain file
// whose length was checked) the buffer is allocated at once; otherwise it
// grows as data arrives.
func readPayload(r io.Reader, name string, h header, present bool) ([]byte, error) {
	first := min(h.bytes, readChunk)
	if present {
		first = h.bytes
	}
	buf := make([]byte, 0, first)
	for int64(len(buf)) < h.bytes {
		next := min(h.bytes, max(int64(len(buf))*2, readChunk))
		if int64(cap(buf)) < next {
			nb := make([]byte, len(buf), next)
			copy(nb, buf)
			buf = nb
		}
		k, err := io.ReadFull(r, buf[len(buf):next])
		buf = buf[:len(buf)+k]
		if err != nil {
			return nil, &IDXError{File: name, Offset: h.size + int64(len(buf)), Field: "data",
				Want: fmt.Sprintf("%d bytes for dimensions %v of %s", h.bytes, h.dims, h.typ),
				Got:  fmt.Sprintf("%d bytes (truncated)", len(buf)), Err: ioErr(err)}
		}
	}
	return buf, nil
}

// maxDeflateRatio is the most DEFLATE can expand: a compressed stream of n
// bytes inflates to at most about 1032·n bytes (each 258-byte match costs at
// least 2 bits; zlib's technical notes give the 1032:1 limit; from memory).
// maxDeflateSlack allows for the gzip header and a tiny stream. A gzip file
// too small for the size its IDX header declares is refused before any of
// it is inflated.
const (
	maxDeflateRatio = 1032
	maxDeflateSlack = 1 << 10
)

// ReadIDX decodes one IDX array from r, plain or gzip-compressed (told apart
// by the gzip magic bytes 1F 8B). name is used in error messages only. The
// header is validated against MaxIDXRank, MaxIDXDim and MaxIDXBytes before any
// payload is allocated, and the payload buffer grows only as bytes arrive.
// Bytes after the payload are an error. All failures caused by the data are
// *IDXError values.
func ReadIDX(r io.Reader, name string) (*IDX, error) {
	return readIDX(r, name, -1)
}

// readIDX is ReadIDX with the size of a plain (uncompressed) input when known,
// or -1.
func readIDX(r io.Reader, name string, plainSize int64) (*IDX, error) {
	br := bufio.NewReader(r)
	var src io.Reader = br
	magic, _ := br.Peek(2)
	gzSize := int64(-1)
	if len(magic) == 2 && magic[0] == 0x1F && magic[1] == 0x8B {
		zr, err := gzip.NewReader(br)
		if err != nil {
			return nil, &IDXError{File: name, Field: "gzip header", Want: "a valid gzip stream", Got: "a damaged one", Err: err}
		}
		defer zr.Close()
		src = zr
		gzSize, plainSize = plainSize, -1
	}
	h, err := readHeader(src, name)
	if err != nil {
		return nil, err
	}
	if gzSize >= 0 && h.size+h.bytes > maxDeflateRatio*gzSize+maxDeflateSlack {
		return nil, &IDXError{File: name, Offset: h.size, Field: "file size",
			Want: fmt.Sprintf("at least %d compressed bytes for the %d bytes dimensions %v of %s declare (DEFLATE expands at most %d:1)", (h.size+h.bytes-maxDeflateSlack)/maxDeflateRatio, h.size+h.bytes, h.dims, h.typ, maxDeflateRatio),
			Got:  fmt.Sprintf("a %d-byte gzip file (truncated, or the header is wrong)", gzSize)}
	}
	if plainSize >= 0 && plainSize-h.size != h.bytes {
		return nil, &IDXError{File: name, Offset: plainSize, Field: "file size",
			Want: fmt.Sprintf("%d bytes of data for dimensions %v of %s (%d in all)", h.bytes, h.dims, h.typ, h.size+h.bytes),
			Got:  fmt.Sprintf("%d bytes of data (file is %s)", plainSize-h.size, sizeWord(plainSize-h.size < h.bytes))}
	}
	data, err := readPayload(src, name, h, plainSize >= 0)
	if err != nil {
		return nil, err
	}
	var one [1]byte
	if k, err := io.ReadFull(src, one[:]); k > 0 {
		return nil, &IDXError{File: name, Offset: h.size + h.bytes, Field: "end of data", Want: "end of file", Got: "trailing bytes"}
	} else if err != io.EOF {
		return nil, &IDXError{File: name, Offset: h.size + h.bytes, Field: "end of data", Want: "a clean end of the stream", Got: "a damaged or truncated stream", Err: err}
	}
	return &IDX{Type: h.typ, Dims: h.dims, Data: data}, nil
}

func sizeWord(short bool) string {
	if short {
		return "truncated"
	}
	return "too long"
}

// ReadIDXFile reads the IDX file at path, plain or gzip-compressed. For a
// plain file the size implied by the header is checked against the file's
// length before the payload is read; for a gzip file, against the most its
// length can inflate to (maxDeflateRatio), before anything is inflated.
func ReadIDXFile(path string) (*IDX, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("datasets: open IDX file: %w", err)
	}
	defer f.Close()
	size := int64(-1)
	if st, err := f.Stat(); err == nil && st.Mode().IsRegular() {
		size = st.Size()
	}
	return readIDX(f, path, size)
}

// check validates an array before it is written.
func (x *IDX) check() error {
	if x.Type.Size() == 0 {
		return fmt.Errorf("datasets: IDX element type %s is not one of u8, i8, i16, i32, f32, f64", x.Type)
	}
	if len(x.Dims) < 1 || len(x.Dims) > MaxIDXRank {
		return fmt.Errorf("datasets: IDX rank %d outside 1..%d (MaxIDXRank)", len(x.Dims), MaxIDXRank)
	}
	elems := int64(1)
	for i, d := range x.Dims {
		if d < 0 || d > MaxIDXDim {
			return fmt.Errorf("datasets: IDX dimension %d is %d, outside 0..%d (MaxIDXDim)", i, d, MaxIDXDim)
		}
		elems *= int64(d)
		if elems*int64(x.Type.Size()) > MaxIDXBytes {
			return fmt.Errorf("datasets: IDX dimensions %v exceed %d bytes (MaxIDXBytes)", x.Dims, MaxIDXBytes)
		}
	}
	if int64(len(x.Data)) != elems*int64(x.Type.Size()) {
		return fmt.Errorf("datasets: IDX data holds %d bytes; dimensions %v of %s need %d", len(x.Data), x.Dims, x.Type, elems*int64(x.Type.Size()))
	}
	return nil
}

// WriteIDX writes x to w as a plain (uncompressed) IDX stream. It returns an
// error, writing nothing, if x's type, rank, dimensions or data length are
// invalid.
func WriteIDX(w io.Writer, x *IDX) error {
	if err := x.check(); err != nil {
		return err
	}
	hdr := make([]byte, 4+4*len(x.Dims))
	hdr[2], hdr[3] = byte(x.Type), byte(len(x.Dims))
	for i, d := range x.Dims {
		binary.BigEndian.PutUint32(hdr[4+4*i:], uint32(d))
	}
	if _, err := w.Write(hdr); err != nil {
		return fmt.Errorf("datasets: write IDX header: %w", err)
	}
	if _, err := w.Write(x.Data); err != nil {
		return fmt.Errorf("datasets: write IDX data: %w", err)
	}
	return nil
}

// WriteIDXFile writes x to path, gzip-compressed when the name ends in ".gz".
func WriteIDXFile(path string, x *IDX) (err error) {
	if err := x.check(); err != nil {
		return err
	}
	f, err := os.OpenFile(path, os.O_WRONLY|os.O_CREATE|os.O_TRUNC, 0o644) // the mode of every file striate writes
	if err != nil {
		return fmt.Errorf("datasets: create IDX file: %w", err)
	}
	defer func() {
		if cerr := f.Close(); err == nil && cerr != nil {
			err = fmt.Errorf("datasets: close IDX file: %w", cerr)
		}
	}()
	bw := bufio.NewWriter(f)
	if strings.HasSuffix(path, ".gz") {
		zw := gzip.NewWriter(bw)
		if err := WriteIDX(zw, x); err != nil {
			return err
		}
		if err := zw.Close(); err != nil {
			return fmt.Errorf("datasets: compress IDX file: %w", err)
		}
	} else if err := WriteIDX(bw, x); err != nil {
		return err
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("datasets: write IDX file: %w", err)
	}
	return nil
}

// ReadIDXSet reads an image file (u8, rank 3: N×H×W) and a label file (u8,
// rank 1: N) and joins them into a Set named name. Labels must lie in
// [0, len(classes)); the counts of the two files must agree. Either file may
// be plain or gzip-compressed.
func ReadIDXSet(imagesPath, labelsPath, name string, classes []string) (*Set, error) {
	im, err := ReadIDXFile(imagesPath)
	if err != nil {
		return nil, err
	}
	lb, err := ReadIDXFile(labelsPath)
	if err != nil {
		return nil, err
	}
	return joinIDX(im, lb, imagesPath, labelsPath, name, classes)
}

func joinIDX(im, lb *IDX, imagesPath, labelsPath, name string, classes []string) (*Set, error) {
	if im.Type != IDXUint8 || len(im.Dims) != 3 {
		return nil, &IDXError{File: imagesPath, Offset: 2, Field: "image header", Want: "u8 elements of rank 3 (N×H×W)", Got: fmt.Sprintf("%s of rank %d", im.Type, len(im.Dims))}
	}
	if lb.Type != IDXUint8 || len(lb.Dims) != 1 {
		return nil, &IDXError{File: labelsPath, Offset: 2, Field: "label header", Want: "u8 elements of rank 1 (N)", Got: fmt.Sprintf("%s of rank %d", lb.Type, len(lb.Dims))}
	}
	if im.Dims[0] != lb.Dims[0] {
		return nil, &IDXError{File: labelsPath, Offset: 4, Field: "label count", Want: fmt.Sprintf("%d labels, one per image in %s", im.Dims[0], filepath.Base(imagesPath)), Got: fmt.Sprint(lb.Dims[0])}
	}
	labels := make([]int, len(lb.Data))
	for i, b := range lb.Data {
		if int(b) >= len(classes) {
			return nil, &IDXError{File: labelsPath, Offset: 8 + int64(i), Field: fmt.Sprintf("label %d", i), Want: fmt.Sprintf("a class in 0..%d", len(classes)-1), Got: fmt.Sprint(b)}
		}
		labels[i] = int(b)
	}
	return &Set{Name: name, N: im.Dims[0], H: im.Dims[1], W: im.Dims[2], Pix: im.Data, Labels: labels,
		Classes: append([]string(nil), classes...), Source: imagesPath + " + " + labelsPath}, nil
}

// WriteIDXSet writes s as an image file and a label file (gzip-compressed
// when a name ends in ".gz"). It fails if a label does not fit in one byte.
func WriteIDXSet(imagesPath, labelsPath string, s *Set) error {
	if len(s.Pix) != s.N*s.H*s.W || len(s.Labels) != s.N {
		return fmt.Errorf("datasets: set %q is inconsistent: %d pixels and %d labels for %d images of %d×%d", s.Name, len(s.Pix), len(s.Labels), s.N, s.H, s.W)
	}
	lb := make([]byte, s.N)
	for i, l := range s.Labels {
		if l < 0 || l > 255 {
			return fmt.Errorf("datasets: label %d of set %q is %d; IDX u8 labels must lie in 0..255", i, s.Name, l)
		}
		lb[i] = byte(l)
	}
	if err := WriteIDXFile(imagesPath, &IDX{Type: IDXUint8, Dims: []int{s.N, s.H, s.W}, Data: s.Pix}); err != nil {
		return err
	}
	return WriteIDXFile(labelsPath, &IDX{Type: IDXUint8, Dims: []int{s.N}, Data: lb})
}

// ClassNamesFile is the optional file beside the IDX files of a folder that
// names its classes (LoadIDXFolder). The format is our own plain text:
// UTF-8, one class name per line in label order (the first name is label
// 0); blank lines and lines whose first non-blank character is '#' are
// ignored; spaces around a name and a trailing carriage return are
// dropped. A name holds no tab, is unique in the file, and there are at most
// 256 names (IDX labels are one byte).
//
//	# garments of the sorting station, label order
//	T-shirt/top
//	Trouser
//	Pullover
const ClassNamesFile = "classes.txt"

// className is one name of a class-names file with its 1-based line.
type className struct {
	name string
	line int
}

// ReadClassNames reads a class-names file (format of ClassNamesFile).
// Errors name the file and line.
func ReadClassNames(path string) ([]string, error) {
	cn, err := readClassNames(path)
	if err != nil {
		return nil, err
	}
	out := make([]string, len(cn))
	for i, c := range cn {
		out[i] = c.name
	}
	return out, nil
}

func readClassNames(path string) ([]className, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("datasets: class names: %v", err)
	}
	var out []className
	first := map[string]int{}
	for i, line := range strings.Split(string(b), "\n") {
		n := i + 1
		name := strings.TrimSpace(strings.TrimSuffix(line, "\r"))
		if name == "" || strings.HasPrefix(name, "#") {
			continue
		}
		if !utf8.ValidString(name) {
			return nil, fmt.Errorf("datasets: %s:%d: the class name is not valid UTF-8; save the file as UTF-8", path, n)
		}
		if strings.ContainsAny(name, "\t\r") {
			return nil, fmt.Errorf("datasets: %s:%d: class name %q holds a tab or carriage return; names are one per line with no tabs", path, n, name)
		}
		if l, dup := first[name]; dup {
			return nil, fmt.Errorf("datasets: %s:%d: class name %q repeats line %d; each class needs its own name", path, n, name, l)
		}
		first[name] = n
		out = append(out, className{name, n})
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("datasets: %s: no class names (only blank or # lines); write one name per line in label order", path)
	}
	if len(out) > 256 {
		return nil, fmt.Errorf("datasets: %s:%d: %d class names, but IDX labels are one byte (0..255); at most 256 names", path, out[256].line, len(out))
	}
	return out, nil
}

// WriteClassNames writes classes in the format of ClassNamesFile, after a
// one-line # comment. It refuses names that the format cannot carry
// (empty, tab or newline inside, spaces around, a leading '#', repeats, or
// more than 256).
func WriteClassNames(path string, classes []string) error {
	if len(classes) == 0 || len(classes) > 256 {
		return fmt.Errorf("datasets: write %s: %d class names, want 1..256", path, len(classes))
	}
	seen := map[string]int{}
	var sb strings.Builder
	sb.WriteString("# class names in label order (label 0 first), one per line\n")
	for i, c := range classes {
		if c == "" || c != strings.TrimSpace(c) || strings.HasPrefix(c, "#") || strings.ContainsAny(c, "\t\r\n") || !utf8.ValidString(c) {
			return fmt.Errorf("datasets: write %s: class %d name %q cannot be stored: names are non-empty UTF-8 with no tab or newline, no spaces around and no leading '#'", path, i, c)
		}
		if j, dup := seen[c]; dup {
			return fmt.Errorf("datasets: write %s: classes %d and %d are both named %q", path, j, i, c)
		}
		seen[c] = i
		sb.WriteString(c)
		sb.WriteByte('\n')
	}
	if err := os.WriteFile(path, []byte(sb.String()), 0o644); err != nil {
		return fmt.Errorf("datasets: write class names: %v", err)
	}
	return nil
}

// LoadIDXFolder reads a split of a folder holding IDX files under the MNIST
// file names (train-images-idx3-ubyte, train-labels-idx1-ubyte,
// t10k-images-idx3-ubyte, t10k-labels-idx1-ubyte, each optionally .gz). The
// classes are named by the folder's ClassNamesFile when there is one, else
// by MNISTClasses (the digits). Every label present must have a name. The
// set is named after the folder and the split.
func LoadIDXFolder(dir string, split Split) (*Set, error) {
	if split != Train && split != Test {
		return nil, fmt.Errorf("datasets: split %v is neither Train nor Test", split)
	}
	var names []className
	cpath := filepath.Join(dir, ClassNamesFile)
	if _, err := os.Stat(cpath); err == nil {
		if names, err = readClassNames(cpath); err != nil {
			return nil, err
		}
	}
	if names == nil {
		s, err := loadSplit(dir, split, filepath.Base(dir), MNISTClasses)
		if errors.Is(err, errNoData) {
			return nil, fmt.Errorf("datasets: %v; fix: name the folder that holds them, or write them with WriteIDXSet", err)
		}
		return s, err
	}
	all := make([]string, 256)
	for i := range all {
		all[i] = fmt.Sprint(i)
	}
	s, err := loadSplit(dir, split, filepath.Base(dir), all)
	if errors.Is(err, errNoData) {
		return nil, fmt.Errorf("datasets: %v; fix: name the folder that holds them, or write them with WriteIDXSet", err)
	}
	if err != nil {
		return nil, err
	}
	top := 0
	for _, l := range s.Labels {
		top = max(top, l)
	}
	if top >= len(names) {
		last := names[len(names)-1]
		return nil, fmt.Errorf("datasets: %s:%d: %d class names end here, but the labels of %s reach %d; add a name for every label 0..%d", cpath, last.line, len(names), s.Source, top, top)
	}
	s.Classes = make([]string, len(names))
	for i, c := range names {
		s.Classes[i] = c.name
	}
	return s, nil
}
