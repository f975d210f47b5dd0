package pipeline

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"
)

// The model file layout (format versions 1 to 3). All integers little-endian.
//
//	offset  size  field
//	0       8     magic "STRIATEM"
//	8       4     format version (uint32): 2, or 3 with an integer section
//	12      4     header length H in bytes (uint32), at most MaxHeaderBytes
//	16      H     header: UTF-8 JSON object (see fileHeader), no unknown keys
//	16+H    P     zero padding so that the data section starts on a multiple of 8
//	D       Σ     data section: the tensors back to back, in header order,
//	              each at the offset (relative to D) and length the header gives
//	end-32  32    SHA-256 of every byte before it
//
// The header describes itself: the pipeline configuration, the class names,
// and per tensor its name, dtype, shape, offset and length. A reader needs
// nothing else to walk the file, and nothing in it is executed.
//
// Versions 1 and 2 share the layout; they differ in how the configuration in
// the header reads. Version 2 (this build) fills defaults field by field
// (see Config). In version 1 a head with any field set took learn's default
// for every other zero field, and an absent pool.keep meant false; Load
// spells those meanings out (see configFromV1), so a version-1 model loads
// and predicts as it did. Version 3 reads as version 2 and adds the dtype
// int8 and the integer section of a quantised model (Model.Quantize; tensor
// names int8.*, see modelio.go): its template layer and head are stored as
// integers only, the float configuration stays in the header. A reader of
// versions 1..2 rejects it as written by a newer striate.
const (
	// FileExt is the file-name extension striate gives model files (older
	// builds used ".stm"). Readers go by the file's magic bytes, never by
	// its name, so a model of either name loads.
	FileExt = ".striate"

	fileMagic = "STRIATEM"
	// FormatVersion is the model-file format version this build writes.
	FormatVersion = 2
	// FormatVersionInt8 is the version of a file holding an integer section
	// (Model.Quantize); float models keep FormatVersion, so that older
	// readers still read them.
	FormatVersionInt8 = 3
	// minReadVersion..maxReadVersion is the range this build reads.
	minReadVersion = 1
	maxReadVersion = 3

	prefixLen   = 16
	checksumLen = sha256.Size
	dataAlign   = 8
)

// Hard limits checked before any allocation the file asks for. They are far
// above any model striate builds (the default model is a few MB) and low enough
// that a hostile header cannot make a reader allocate more than about 1 GiB,
// and every product fits a 32-bit int (GOARCH=arm).
const (
	// MaxHeaderBytes bounds the JSON header; the default header is a few kB.
	MaxHeaderBytes = 4 << 20
	// MaxFileBytes bounds the whole file.
	MaxFileBytes = 1 << 30
	// MaxTensors bounds the number of tensors in one file.
	MaxTensors = 4096
	// MaxRank bounds the number of dimensions of one tensor.
	MaxRank = 4
	// MaxDim bounds each dimension of a tensor.
	MaxDim = 1 << 24
	// MaxTensorElems bounds the element count of one tensor (1 GiB of float32).
	MaxTensorElems = 1 << 28
	// MaxClasses bounds the number of class names.
	MaxClasses = 1 << 16
	// MaxNameLen bounds tensor and class names.
	MaxNameLen = 256
)

// Sentinel errors; every *FileError unwraps to exactly one of them, so callers
// can test the kind of failure with errors.Is.
var (
	ErrNotModelFile       = errors.New("not a striate model file")
	ErrUnsupportedVersion = errors.New("unsupported model-file format version")
	ErrTruncated          = errors.New("model file is truncated")
	ErrChecksum           = errors.New("model file checksum mismatch (the file is corrupted)")
	ErrLimit              = errors.New("model file exceeds a hard limit")
	ErrMalformed          = errors.New("model file is malformed")
)

// FileError reports what is wrong with a model file: the kind (one of the
// Err... sentinels), the byte offset where the problem was found (-1 when it
// concerns the whole file), the field concerned and a description.
type FileError struct {
	Kind   error
	Offset int64
	Field  string
	Detail string
}

func (e *FileError) Error() string {
	var b strings.Builder
	b.WriteString("pipeline: ")
	b.WriteString(e.Kind.Error())
	if e.Field != "" {
		b.WriteString(": ")
		b.WriteString(e.Field)
	}
	if e.Offset >= 0 {
		fmt.Fprintf(&b, " (at byte %d)", e.Offset)
	}
	if e.Detail != "" {
		b.WriteString(": ")
		b.WriteString(e.Detail)
	}
	return b.String()
}

func (e *FileError) Unwrap() error { return e.Kind }

func fileErr(kind error, off int64, field, format string, a ...any) *FileError {
	return &FileError{Kind: kind, Offset: off, Field: field, Detail: fmt.Sprintf(format, a...)}
}

// DType names the element type of a stored tensor.
type DType string

const (
	Float32 DType = "float32"
	Int32   DType = "int32"
	// Int8 is a tensor of the integer section (format version 3 only).
	Int8 DType = "int8"
)

func (d DType) size() int {
	switch d {
	case Float32, Int32:
		return 4
	case Int8:
		return 1
	}
	return 0
}

// tensor is one named array held in a model file. Exactly one of F, I or
// B is set, according to DType.
type tensor struct {
	Name  string
	DType DType
	Shape []int
	F     []float32
	I     []int32
	B     []int8
}

func (t *tensor) elems() int {
	switch t.DType {
	case Int32:
		return len(t.I)
	case Int8:
		return len(t.B)
	}
	return len(t.F)
}

// tensorInfo is a tensor's entry in the header.
type tensorInfo struct {
	Name   string `json:"name"`
	DType  DType  `json:"dtype"`
	Shape  []int  `json:"shape"`
	Offset int64  `json:"offset"`
	Length int64  `json:"length"`
}

// fileHeader is the JSON header.
type fileHeader struct {
	Format  string          `json:"format"` // always "striate-model"
	Config  json.RawMessage `json:"config"`
	Classes []string        `json:"classes"`
	Tensors []tensorInfo    `json:"tensors"`
}

const formatName = "striate-model"

// fileContents is a decoded model file before the model is rebuilt from it.
type fileContents struct {
	Version uint32 // format version; 0 means FormatVersion when encoding
	Config  json.RawMessage
	Classes []string
	Tensors []tensor
}

func (c *fileContents) tensor(name string) *tensor {
	for i := range c.Tensors {
		if c.Tensors[i].Name == name {
			return &c.Tensors[i]
		}
	}
	return nil
}

func pad(n int64) int64 { return (dataAlign - n%dataAlign) % dataAlign }

// encodeFile writes c in format version c.Version (0 means FormatVersion:
// a decoded file re-encodes with its own version, since its config reads
// by that version's rules). The output is a pure function of c, so equal
// models give bit-identical files.
func encodeFile(w io.Writer, c *fileContents) error {
	ver := c.Version
	if ver == 0 {
		ver = FormatVersion
	}
	if ver < minReadVersion || ver > maxReadVersion {
		return fmt.Errorf("pipeline: cannot save format version %d; this build writes versions %d..%d", ver, minReadVersion, maxReadVersion)
	}
	h := fileHeader{Format: formatName, Config: c.Config, Classes: c.Classes}
	if h.Classes == nil {
		h.Classes = []string{}
	}
	h.Tensors = make([]tensorInfo, len(c.Tensors))
	var off int64
	for i := range c.Tensors {
		t := &c.Tensors[i]
		if err := checkTensorShape(t.Name, t.DType, t.Shape); err != nil {
			return fmt.Errorf("pipeline: cannot save tensor %q: %v", t.Name, err.Detail)
		}
		n := int64(t.DType.size()) * int64(t.elems())
		if want := product(t.Shape); int64(t.elems()) != want {
			return fmt.Errorf("pipeline: cannot save tensor %q: %d elements for shape %v (want %d)", t.Name, t.elems(), t.Shape, want)
		}
		h.Tensors[i] = tensorInfo{Name: t.Name, DType: t.DType, Shape: t.Shape, Offset: off, Length: n}
		off += n
	}
	var hb bytes.Buffer
	enc := json.NewEncoder(&hb)
	enc.SetEscapeHTML(false)
	if err := enc.Encode(&h); err != nil {
		return fmt.Errorf("pipeline: encoding model header: %v", err)
	}
	hdr := bytes.TrimRight(hb.Bytes(), "\n")
	if len(hdr) > MaxHeaderBytes {
		return fmt.Errorf("pipeline: model header is %d bytes, above the %d-byte limit; store large arrays as tensors", len(hdr), MaxHeaderBytes)
	}
	total := prefixLen + int64(len(hdr)) + pad(prefixLen+int64(len(hdr))) + off + checksumLen
	if total > MaxFileBytes {
		return fmt.Errorf("pipeline: model would be %d bytes, above the %d-byte limit", total, MaxFileBytes)
	}

	sum := sha256.New()
	out := io.MultiWriter(w, sum)
	var pre [prefixLen]byte
	copy(pre[:8], fileMagic)
	binary.LittleEndian.PutUint32(pre[8:], ver)
	binary.LittleEndian.PutUint32(pre[12:], uint32(len(hdr)))
	if _, err := out.Write(pre[:]); err != nil {
		return err
	}
	if _, err := out.Write(hdr); err != nil {
		return err
	}
	var zeros [dataAlign]byte
	if _, err := out.Write(zeros[:pad(prefixLen+int64(len(hdr)))]); err != nil {
		return err
	}
	buf := make([]byte, 0, 1<<16)
	for i := range c.Tensors {
		t := &c.Tensors[i]
		if t.DType == Int8 {
			for _, v := range t.B {
				buf = append(buf, byte(v))
				if len(buf) == cap(buf) {
					if _, err := out.Write(buf); err != nil {
						return err
					}
					buf = buf[:0]
				}
			}
			continue
		}
		for j := 0; j < t.elems(); j++ {
			var u uint32
			if t.DType == Int32 {
				u = uint32(t.I[j])
			} else {
				u = math.Float32bits(t.F[j])
			}
			buf = binary.LittleEndian.AppendUint32(buf, u)
			if len(buf) == cap(buf) {
				if _, err := out.Write(buf); err != nil {
					return err
				}
				buf = buf[:0]
			}
		}
	}
	if _, err := out.Write(buf); err != nil {
		return err
	}
	_, err := w.Write(sum.Sum(nil))
	return err
}

func product(shape []int) int64 {
	p := int64(1)
	for _, d := range shape {
		p *= int64(d)
	}
	return p
}

// checkTensorShape checks one header entry against the hard limits. It never
// overflows: each dimension is bounded before the product is formed.
func checkTensorShape(name string, dt DType, shape []int) *FileError {
	field := fmt.Sprintf("tensor %q", name)
	if name == "" || len(name) > MaxNameLen {
		return fileErr(ErrMalformed, -1, field, "name length %d; want 1..%d bytes", len(name), MaxNameLen)
	}
	if dt.size() == 0 {
		return fileErr(ErrMalformed, -1, field, "dtype %q; want %q, %q or %q", dt, Float32, Int32, Int8)
	}
	if len(shape) == 0 || len(shape) > MaxRank {
		return fileErr(ErrLimit, -1, field, "rank %d; want 1..%d (MaxRank)", len(shape), MaxRank)
	}
	p := int64(1)
	for i, d := range shape {
		if d < 1 || d > MaxDim {
			return fileErr(ErrLimit, -1, field, "dimension %d is %d; want 1..%d (MaxDim)", i, d, MaxDim)
		}
		p *= int64(d)
		if p > MaxTensorElems {
			return fileErr(ErrLimit, -1, field, "shape %v has more than %d elements (MaxTensorElems)", shape, MaxTensorElems)
		}
	}
	return nil
}

// readAllLimited reads r to the end, refusing more than MaxFileBytes. Memory
// grows only with bytes actually delivered, never with sizes a header claims.
func readAllLimited(r io.Reader) ([]byte, error) {
	b, err := io.ReadAll(io.LimitReader(r, MaxFileBytes+1))
	if err != nil {
		return nil, fmt.Errorf("pipeline: reading model file: %w", err)
	}
	if len(b) > MaxFileBytes {
		return nil, fileErr(ErrLimit, -1, "file size", "more than %d bytes (MaxFileBytes)", MaxFileBytes)
	}
	return b, nil
}

// decodeFile parses and checks a whole model file held in b. Checks run in
// this order, so the error names the first thing wrong: magic, version,
// header length against the limit and the file, the header's JSON and every
// tensor entry against the hard limits, the file length the header implies,
// the checksum, and finally each tensor's values (float32 must be finite).
func decodeFile(b []byte) (*fileContents, error) {
	n := int64(len(b))
	if n < int64(len(fileMagic)) {
		if bytes.HasPrefix([]byte(fileMagic), b) {
			return nil, fileErr(ErrTruncated, -1, "", "file has %d bytes; a model file has at least %d", n, prefixLen+checksumLen)
		}
		return nil, fileErr(ErrNotModelFile, 0, "magic", "file has %d bytes and does not start with %q", n, fileMagic)
	}
	if string(b[:8]) != fileMagic {
		return nil, fileErr(ErrNotModelFile, 0, "magic", "file starts with %q; a striate model starts with %q", printable(b[:8]), fileMagic)
	}
	if n < prefixLen {
		return nil, fileErr(ErrTruncated, -1, "", "file has %d bytes; a model file has at least %d", n, prefixLen+checksumLen)
	}
	ver := binary.LittleEndian.Uint32(b[8:])
	if ver < minReadVersion || ver > maxReadVersion {
		hint := "the file is damaged or was written by another program"
		if ver > maxReadVersion && ver < 1000 {
			hint = "it was written by a newer striate; upgrade striate to read it"
		}
		return nil, fileErr(ErrUnsupportedVersion, 8, "format version", "file has version %d; this build reads versions %d..%d; %s", ver, minReadVersion, maxReadVersion, hint)
	}
	hlen := int64(binary.LittleEndian.Uint32(b[12:]))
	if hlen > MaxHeaderBytes {
		return nil, fileErr(ErrLimit, 12, "header length", "%d bytes, above the %d-byte limit (MaxHeaderBytes)", hlen, MaxHeaderBytes)
	}
	if hlen == 0 {
		return nil, fileErr(ErrMalformed, 12, "header length", "0; want a JSON header")
	}
	dataStart := prefixLen + hlen + pad(prefixLen+hlen)
	if n < dataStart+checksumLen {
		return nil, fileErr(ErrTruncated, -1, "", "file has %d bytes; its header alone needs %d", n, dataStart+checksumLen)
	}

	h, herr := parseHeader(b[prefixLen : prefixLen+hlen])
	if herr == nil {
		var dataLen int64
		for _, t := range h.Tensors {
			dataLen += t.Length // each ≤ 4·MaxTensorElems, count ≤ MaxTensors: no overflow
		}
		want := dataStart + dataLen + checksumLen
		if n < want {
			return nil, fileErr(ErrTruncated, -1, "", "file has %d bytes; its header describes %d", n, want)
		}
		if n > want {
			return nil, fileErr(ErrMalformed, want-checksumLen, "", "file has %d bytes; its header describes %d (trailing data)", n, want)
		}
	}
	got := sha256.Sum256(b[:n-checksumLen])
	if !bytes.Equal(got[:], b[n-checksumLen:]) {
		return nil, fileErr(ErrChecksum, n-checksumLen, "SHA-256", "stored %x, computed %x", b[n-checksumLen:], got[:])
	}
	if herr != nil {
		herr.Offset = prefixLen
		return nil, herr
	}
	for i := prefixLen + hlen; i < dataStart; i++ {
		if b[i] != 0 {
			return nil, fileErr(ErrMalformed, i, "padding", "byte is %#x; want 0", b[i])
		}
	}

	c := &fileContents{Version: ver, Config: h.Config, Classes: h.Classes, Tensors: make([]tensor, len(h.Tensors))}
	for i, ti := range h.Tensors {
		off := dataStart + ti.Offset
		raw := b[off : off+ti.Length]
		t := tensor{Name: ti.Name, DType: ti.DType, Shape: ti.Shape}
		m := len(raw) / 4
		switch ti.DType {
		case Int8:
			t.B = make([]int8, len(raw))
			for j, v := range raw {
				t.B[j] = int8(v)
			}
		case Float32:
			t.F = make([]float32, m)
			for j := range t.F {
				v := math.Float32frombits(binary.LittleEndian.Uint32(raw[4*j:]))
				if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
					return nil, fileErr(ErrMalformed, off+int64(4*j), fmt.Sprintf("tensor %q", ti.Name), "element %d is %v; want a finite number", j, v)
				}
				t.F[j] = v
			}
		case Int32:
			t.I = make([]int32, m)
			for j := range t.I {
				t.I[j] = int32(binary.LittleEndian.Uint32(raw[4*j:]))
			}
		}
		c.Tensors[i] = t
	}
	return c, nil
}

// parseHeader decodes the JSON header strictly and checks every entry
// against the limits and the layout rules (tensors back to back in order,
// names unique). It allocates only in proportion to the header's own bytes.
func parseHeader(hb []byte) (*fileHeader, *FileError) {
	dec := json.NewDecoder(bytes.NewReader(hb))
	dec.DisallowUnknownFields()
	var h fileHeader
	if err := dec.Decode(&h); err != nil {
		return nil, fileErr(ErrMalformed, -1, "header", "invalid JSON: %v", err)
	}
	if dec.More() {
		return nil, fileErr(ErrMalformed, -1, "header", "extra data after the JSON object")
	}
	if h.Format != formatName {
		return nil, fileErr(ErrMalformed, -1, "header.format", "%q; want %q", h.Format, formatName)
	}
	if len(h.Config) == 0 || h.Config[0] != '{' {
		return nil, fileErr(ErrMalformed, -1, "header.config", "missing; want a JSON object")
	}
	if len(h.Classes) > MaxClasses {
		return nil, fileErr(ErrLimit, -1, "header.classes", "%d classes; want at most %d (MaxClasses)", len(h.Classes), MaxClasses)
	}
	for i, s := range h.Classes {
		if len(s) > MaxNameLen {
			return nil, fileErr(ErrLimit, -1, fmt.Sprintf("header.classes[%d]", i), "name of %d bytes; want at most %d (MaxNameLen)", len(s), MaxNameLen)
		}
	}
	if len(h.Tensors) > MaxTensors {
		return nil, fileErr(ErrLimit, -1, "header.tensors", "%d tensors; want at most %d (MaxTensors)", len(h.Tensors), MaxTensors)
	}
	seen := make(map[string]bool, len(h.Tensors))
	var off int64
	for _, t := range h.Tensors {
		if err := checkTensorShape(t.Name, t.DType, t.Shape); err != nil {
			return nil, err
		}
		if seen[t.Name] {
			return nil, fileErr(ErrMalformed, -1, fmt.Sprintf("tensor %q", t.Name), "name appears twice")
		}
		seen[t.Name] = true
		want := product(t.Shape) * int64(t.DType.size())
		if t.Length != want {
			return nil, fileErr(ErrMalformed, -1, fmt.Sprintf("tensor %q", t.Name), "length %d bytes; shape %v of %s needs %d", t.Length, t.Shape, t.DType, want)
		}
		if t.Offset != off {
			return nil, fileErr(ErrMalformed, -1, fmt.Sprintf("tensor %q", t.Name), "offset %d; tensors are stored back to back, so want %d", t.Offset, off)
		}
		off += t.Length
	}
	return &h, nil
}

func printable(b []byte) string {
	r := []rune(string(b))
	for i, c := range r {
		if c < 0x20 || c > 0x7e {
			r[i] = '.'
		}
	}
	return string(r)
}
