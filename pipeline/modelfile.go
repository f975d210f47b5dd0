package pipeline

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/json"
	"errors"
	"fmt"
	"hash"
	"io"
	"math"
	"strings"
)

// The model file layout (format versions 1 to 4). All integers little-endian.
//
//	offset  size  field
//	0       8     magic "STRIATEM"
//	8       4     format version (uint32): 2, 3 with an integer section, 4 with a scan section
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
// versions 1..2 rejects it as written by a newer striate. Version 4 reads as
// version 2 (float tensors only) or 3 (with int8 tensors) and adds the
// header key "scan", required there and refused in older versions: the
// chosen "no item" threshold and the scan settings it was chosen with
// (StoredScan, decoded strictly and checked as NewScanner checks a
// ScanConfig). A reader of versions 1..3 rejects it as written by a newer
// striate; models without a scan section keep version 2 or 3.
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
	// FormatVersionScan is the version of a file holding a scan section
	// (Model.WithScan), float or int8.
	FormatVersionScan = 4
	// minReadVersion..maxReadVersion is the range this build reads.
	minReadVersion = 1
	maxReadVersion = 4

	prefixLen   = 16
	checksumLen = sha256.Size
	dataAlign   = 8
)

// Hard limits checked before any allocation the file asks for. They are far
// above any model striate builds (the default model is a few MB) and low enough
// that a hostile header cannot make a reader allocate more than about 1 GiB,
// and every product fits a 32-bit int (GOARCH=arm). Beyond these container
// limits, Load checks the configuration in the header against the memory
// budget (Limits, Plan.PredictWork) and the tensor table against what that
// configuration's stages can hold, both before the payload is read.
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
	Scan    json.RawMessage `json:"scan,omitempty"` // version 4 only: StoredScan
}

const formatName = "striate-model"

// fileContents is a decoded model file before the model is rebuilt from it.
type fileContents struct {
	Version uint32 // format version; 0 means FormatVersion when encoding
	Config  json.RawMessage
	Classes []string
	Tensors []tensor
	Scan    json.RawMessage // the scan section (version 4); nil without one
}

// hasInt8 reports whether the file holds an int8 tensor (an integer
// section).
func (c *fileContents) hasInt8() bool {
	for i := range c.Tensors {
		if c.Tensors[i].DType == Int8 {
			return true
		}
	}
	return false
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
	if len(c.Scan) > 0 {
		ver = FormatVersionScan
	}
	if ver < minReadVersion || ver > maxReadVersion {
		return fmt.Errorf("pipeline: cannot save format version %d; this build writes versions %d..%d", ver, minReadVersion, maxReadVersion)
	}
	h := fileHeader{Format: formatName, Config: c.Config, Classes: c.Classes, Scan: c.Scan}
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

// decodeFile parses and checks a whole model file held in b (decodeStream
// of b).
func decodeFile(b []byte) (*fileContents, error) {
	return decodeStream(bytes.NewReader(b), int64(len(b)), nil, nil)
}

// hashReader hashes and counts what it reads.
type hashReader struct {
	r   io.Reader
	sum hash.Hash
	n   int64
}

func (h *hashReader) Read(p []byte) (int, error) {
	n, err := h.r.Read(p)
	h.sum.Write(p[:n])
	h.n += int64(n)
	return n, err
}

// streamChunk is the most a reader holds of the payload at once besides the
// tensors it is building.
const streamChunk = 1 << 20

// decodeStream reads one model file from r and checks it as it goes. size
// is the file's length when known (a file's stat), else -1. The checks run
// in this order, so the error names the first thing wrong: the magic (from
// the first 8 bytes: /dev/zero is refused after reading them), the version,
// the header length against MaxHeaderBytes, the header's JSON and every
// tensor entry against the hard limits (a bad header is reported after the
// checksum when size is known, so that damage reads as ErrChecksum, and at
// once from a stream of unknown length), the file length the header implies
// (against size when known, and MaxFileBytes), then early(h) — a caller's
// check of the header, such as the work-size budget of its configuration —
// before a byte of the payload is read; then the payload is streamed through
// the SHA-256 in chunks (memory grows with bytes actually delivered, never
// with sizes a header claims, unless size confirms them), the checksum, the
// padding and finally each tensor's values (float32 must be finite).
//
// When info is not nil it receives the file's version, size, raw header and
// checksum (its Config, Classes and Tensors are filled by the caller).
func decodeStream(r io.Reader, size int64, early func(h *fileHeader, ver uint32) error, info *FileInfo) (*fileContents, error) {
	if size > MaxFileBytes {
		return nil, fileErr(ErrLimit, -1, "file size", "%d bytes, more than %d (MaxFileBytes)", size, MaxFileBytes)
	}
	hr := &hashReader{r: r, sum: sha256.New()}
	short := func(err error, want int64, format string) error {
		if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
			return fileErr(ErrTruncated, -1, "", format, hr.n, want)
		}
		return fmt.Errorf("pipeline: reading model file: %w", err)
	}
	var pre [prefixLen]byte
	if n, err := io.ReadFull(hr, pre[:8]); err != nil {
		if !errors.Is(err, io.EOF) && !errors.Is(err, io.ErrUnexpectedEOF) {
			return nil, short(err, 0, "")
		}
		if bytes.HasPrefix([]byte(fileMagic), pre[:n]) {
			return nil, short(err, prefixLen+checksumLen, "file has %d bytes; a model file has at least %d")
		}
		return nil, fileErr(ErrNotModelFile, 0, "magic", "file has %d bytes and does not start with %q", n, fileMagic)
	}
	if string(pre[:8]) != fileMagic {
		return nil, fileErr(ErrNotModelFile, 0, "magic", "file starts with %q; a striate model starts with %q", printable(pre[:8]), fileMagic)
	}
	if _, err := io.ReadFull(hr, pre[8:]); err != nil {
		return nil, short(err, prefixLen+checksumLen, "file has %d bytes; a model file has at least %d")
	}
	ver := binary.LittleEndian.Uint32(pre[8:])
	if ver < minReadVersion || ver > maxReadVersion {
		hint := "the file is damaged or was written by another program"
		if ver > maxReadVersion && ver < 1000 {
			hint = "it was written by a newer striate; upgrade striate to read it"
		}
		return nil, fileErr(ErrUnsupportedVersion, 8, "format version", "file has version %d; this build reads versions %d..%d; %s", ver, minReadVersion, maxReadVersion, hint)
	}
	hlen := int64(binary.LittleEndian.Uint32(pre[12:]))
	if hlen > MaxHeaderBytes {
		return nil, fileErr(ErrLimit, 12, "header length", "%d bytes, above the %d-byte limit (MaxHeaderBytes)", hlen, MaxHeaderBytes)
	}
	if hlen == 0 {
		return nil, fileErr(ErrMalformed, 12, "header length", "0; want a JSON header")
	}
	dataStart := prefixLen + hlen + pad(prefixLen+hlen)
	if size >= 0 && size < dataStart+checksumLen {
		return nil, fileErr(ErrTruncated, -1, "", "file has %d bytes; its header alone needs %d", size, dataStart+checksumLen)
	}
	hb := make([]byte, dataStart-prefixLen)
	if _, err := io.ReadFull(hr, hb); err != nil {
		return nil, short(err, dataStart+checksumLen, "file has %d bytes; its header alone needs %d")
	}
	h, herr := parseHeader(hb[:hlen])
	if herr != nil && size < 0 {
		// A stream of unknown length may not end: refuse it now.
		herr.Offset = prefixLen
		herr.Detail += " (checksum not checked: the stream's length is unknown)"
		return nil, herr
	}
	if herr != nil {
		// Without a header the layout is unknown: stream the rest of the
		// file (its size is known and bounded) through the hash, keeping
		// only its last 32 bytes, so that a damaged file is told from a
		// malformed one.
		stored, err := hashRest(hr)
		if err != nil {
			return nil, err
		}
		if got := hr.sum.Sum(nil); !bytes.Equal(got, stored) {
			return nil, fileErr(ErrChecksum, hr.n-checksumLen, "SHA-256", "stored %x, computed %x", stored, got)
		}
		herr.Offset = prefixLen
		return nil, herr
	}
	var dataLen int64
	for _, t := range h.Tensors {
		dataLen += t.Length // each ≤ 4·MaxTensorElems, count ≤ MaxTensors: no overflow
	}
	want := dataStart + dataLen + checksumLen
	if size >= 0 && size < want {
		return nil, fileErr(ErrTruncated, -1, "", "file has %d bytes; its header describes %d", size, want)
	}
	if size > want {
		return nil, fileErr(ErrMalformed, want-checksumLen, "", "file has %d bytes; its header describes %d (trailing data)", size, want)
	}
	if want > MaxFileBytes {
		return nil, fileErr(ErrLimit, -1, "file size", "its header describes %d bytes, more than %d (MaxFileBytes)", want, MaxFileBytes)
	}
	if early != nil {
		if err := early(h, ver); err != nil {
			return nil, err
		}
	}

	c := &fileContents{Version: ver, Config: h.Config, Classes: h.Classes, Tensors: make([]tensor, len(h.Tensors)), Scan: h.Scan}
	var late error                                                   // the first bad value, reported once the checksum holds
	chunk := make([]byte, min(streamChunk, (max(dataLen, 4)+3)/4*4)) // whole 4-byte elements
	for i, ti := range h.Tensors {
		t := tensor{Name: ti.Name, DType: ti.DType, Shape: ti.Shape}
		m := int(ti.Length / 4)
		if size >= 0 { // the file's length confirms the header's sizes
			switch ti.DType {
			case Float32:
				t.F = make([]float32, 0, m)
			case Int32:
				t.I = make([]int32, 0, m)
			case Int8:
				t.B = make([]int8, 0, ti.Length)
			}
		}
		for done := int64(0); done < ti.Length; {
			b := chunk[:min(int64(len(chunk)), ti.Length-done)]
			if _, err := io.ReadFull(hr, b); err != nil {
				return nil, short(err, want, "file has %d bytes; its header describes %d")
			}
			if ti.DType == Int8 {
				for _, v := range b {
					t.B = append(t.B, int8(v))
				}
				done += int64(len(b))
				continue
			}
			for j := 0; j < len(b); j += 4 {
				u := binary.LittleEndian.Uint32(b[j:])
				if ti.DType == Int32 {
					t.I = append(t.I, int32(u))
					continue
				}
				v := math.Float32frombits(u)
				if late == nil && (math.IsNaN(float64(v)) || math.IsInf(float64(v), 0)) {
					k := (done + int64(j)) / 4
					late = fileErr(ErrMalformed, dataStart+ti.Offset+4*k, fmt.Sprintf("tensor %q", ti.Name), "element %d is %v; want a finite number", k, v)
				}
				t.F = append(t.F, v)
			}
			done += int64(len(b))
		}
		c.Tensors[i] = t
	}
	got := hr.sum.Sum(nil)
	var stored [checksumLen]byte
	if _, err := io.ReadFull(r, stored[:]); err != nil {
		return nil, fileErr(ErrTruncated, -1, "", "file ends inside its %d-byte checksum; its header describes %d bytes", checksumLen, want)
	}
	if size < 0 {
		var one [1]byte
		if n, _ := io.ReadFull(r, one[:]); n > 0 {
			return nil, fileErr(ErrMalformed, want-checksumLen, "", "file has more than the %d bytes its header describes (trailing data)", want)
		}
	}
	if !bytes.Equal(got, stored[:]) {
		return nil, fileErr(ErrChecksum, want-checksumLen, "SHA-256", "stored %x, computed %x", stored[:], got)
	}
	for k, v := range hb[hlen:] {
		if v != 0 {
			return nil, fileErr(ErrMalformed, prefixLen+hlen+int64(k), "padding", "byte is %#x; want 0", v)
		}
	}
	if late != nil {
		return nil, late
	}
	if info != nil {
		*info = FileInfo{Version: ver, Size: want, Header: append(json.RawMessage(nil), hb[:hlen]...), Config: h.Config, Classes: h.Classes}
		copy(info.Checksum[:], stored[:])
		for _, t := range h.Tensors {
			info.Tensors = append(info.Tensors, TensorInfo(t))
		}
	}
	return c, nil
}

// hashRest reads the rest of hr (the file is at most MaxFileBytes) through
// its hash, all but the last checksumLen bytes, which it returns.
func hashRest(hr *hashReader) ([]byte, error) {
	r := hr.r
	var tail []byte
	buf := make([]byte, 1<<16)
	total := hr.n
	for {
		n, err := r.Read(buf)
		tail = append(tail, buf[:n]...)
		total += int64(n)
		if total > MaxFileBytes {
			return nil, fileErr(ErrLimit, -1, "file size", "more than %d bytes (MaxFileBytes)", MaxFileBytes)
		}
		if k := len(tail) - checksumLen; k > 0 {
			hr.sum.Write(tail[:k])
			tail = append(tail[:0], tail[k:]...)
		}
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("pipeline: reading model file: %w", err)
		}
	}
	hr.n = total
	if len(tail) < checksumLen {
		return nil, fileErr(ErrTruncated, -1, "", "file has %d bytes; too short for its checksum", total)
	}
	return tail, nil
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
