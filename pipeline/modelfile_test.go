package pipeline

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

func sampleContents() *fileContents {
	return &fileContents{
		Config:  json.RawMessage(`{"x":1}`),
		Classes: []string{"t-shirt", "dress", "sneaker"},
		Tensors: []tensor{
			{Name: "w", DType: Float32, Shape: []int{2, 3}, F: []float32{1, -2, 3.5, 0, 1e-30, -7}},
			{Name: "idx", DType: Int32, Shape: []int{3}, I: []int32{-1, 0, 1 << 30}},
			{Name: "b", DType: Float32, Shape: []int{1}, F: []float32{0.25}},
		},
	}
}

func encodeBytes(t *testing.T, c *fileContents) []byte {
	t.Helper()
	var buf bytes.Buffer
	if err := encodeFile(&buf, c); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// resum rewrites the trailing SHA-256 so that a deliberately edited file
// passes the checksum and reaches the later checks (a hostile file).
func resum(b []byte) []byte {
	s := sha256.Sum256(b[:len(b)-checksumLen])
	copy(b[len(b)-checksumLen:], s[:])
	return b
}

// withHeader builds a file around a hand-written header and data section,
// with a correct checksum.
func withHeader(hdr string, data []byte) []byte {
	var b []byte
	b = append(b, fileMagic...)
	b = binary.LittleEndian.AppendUint32(b, 1)
	b = binary.LittleEndian.AppendUint32(b, uint32(len(hdr)))
	b = append(b, hdr...)
	for len(b)%dataAlign != 0 {
		b = append(b, 0)
	}
	b = append(b, data...)
	b = append(b, make([]byte, checksumLen)...)
	return resum(b)
}

func wantKind(t *testing.T, err, kind error, substr string) {
	t.Helper()
	if err == nil {
		t.Fatalf("decode succeeded; want %v", kind)
	}
	if !errors.Is(err, kind) {
		t.Fatalf("error %q is not %v", err, kind)
	}
	var fe *FileError
	if !errors.As(err, &fe) {
		t.Fatalf("error %q is not a *FileError", err)
	}
	if !strings.HasPrefix(err.Error(), "pipeline: ") {
		t.Errorf("error %q lacks the package prefix", err)
	}
	if substr != "" && !strings.Contains(err.Error(), substr) {
		t.Errorf("error %q does not mention %q", err, substr)
	}
}

func TestModelFileRoundTrip(t *testing.T) {
	c := sampleContents()
	b := encodeBytes(t, c)
	got, err := decodeFile(b)
	if err != nil {
		t.Fatal(err)
	}
	want := *c
	want.Version = FormatVersion // 0 in c means the current version
	if !reflect.DeepEqual(got, &want) {
		t.Fatalf("round trip changed the contents:\n got %+v\nwant %+v", got, &want)
	}
	// Encoding is a pure function of the contents: bit-identical bytes.
	if b2 := encodeBytes(t, got); !bytes.Equal(b, b2) {
		t.Fatal("re-encoding a decoded file gave different bytes")
	}
	// The data section starts on an 8-byte boundary.
	hlen := int(binary.LittleEndian.Uint32(b[12:]))
	if d := len(b) - checksumLen - 4*(6+3+1); d%dataAlign != 0 || d < prefixLen+hlen {
		t.Errorf("data section starts at %d; want a multiple of %d after the header", d, dataAlign)
	}
}

// TestModelFilePythonWriter reads a file written by an independent writer of
// the documented layout (testdata/pipeline/gen_container.py: CPython 3.11
// struct + json + hashlib) and checks every value the script recorded.
func TestModelFilePythonWriter(t *testing.T) {
	b, err := os.ReadFile("../testdata/pipeline/python_container.bin")
	if err != nil {
		t.Fatal(err)
	}
	var want struct {
		Classes []string
		Tensors []struct {
			Name   string
			DType  string
			Shape  []int
			Values []float64
		}
		SHA256 string
	}
	js, err := os.ReadFile("../testdata/pipeline/python_container.json")
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(js, &want); err != nil {
		t.Fatal(err)
	}
	c, err := decodeFile(b)
	if err != nil {
		t.Fatal(err)
	}
	if hex.EncodeToString(b[len(b)-checksumLen:]) != want.SHA256 {
		t.Errorf("stored checksum differs from hashlib's %s", want.SHA256)
	}
	if !reflect.DeepEqual(c.Classes, want.Classes) {
		t.Errorf("classes %v; want %v", c.Classes, want.Classes)
	}
	if len(c.Tensors) != len(want.Tensors) {
		t.Fatalf("%d tensors; want %d", len(c.Tensors), len(want.Tensors))
	}
	for i, wt := range want.Tensors {
		gt := c.Tensors[i]
		if gt.Name != wt.Name || string(gt.DType) != wt.DType || !reflect.DeepEqual(gt.Shape, wt.Shape) {
			t.Errorf("tensor %d is %s %s %v; want %s %s %v", i, gt.Name, gt.DType, gt.Shape, wt.Name, wt.DType, wt.Shape)
		}
		for j, v := range wt.Values {
			var g float64
			if gt.DType == Int32 {
				g = float64(gt.I[j])
			} else {
				g = float64(gt.F[j])
			}
			// Exact: both sides hold the same float32 / int32 bit patterns.
			if g != v || math.Signbit(g) != math.Signbit(v) {
				t.Errorf("tensor %s[%d] = %v; want %v", wt.Name, j, g, v)
			}
		}
	}
}

func TestModelFileBadMagic(t *testing.T) {
	b := encodeBytes(t, sampleContents())
	copy(b, "PK\x03\x04")
	_, err := decodeFile(b)
	wantKind(t, err, ErrNotModelFile, "STRIATEM")
	_, err = decodeFile([]byte("hi"))
	wantKind(t, err, ErrNotModelFile, "")
	_, err = decodeFile(nil)
	wantKind(t, err, ErrTruncated, "")
}

func TestModelFileUnknownVersion(t *testing.T) {
	b := encodeBytes(t, sampleContents())
	binary.LittleEndian.PutUint32(b[8:], maxReadVersion+1)
	_, err := decodeFile(resum(b))
	wantKind(t, err, ErrUnsupportedVersion, "upgrade striate")
	binary.LittleEndian.PutUint32(b[8:], 0)
	_, err = decodeFile(resum(b))
	wantKind(t, err, ErrUnsupportedVersion, "version 0")
}

func TestModelFileTruncated(t *testing.T) {
	b := encodeBytes(t, sampleContents())
	for _, n := range []int{3, 8, 12, 15, 16, 40, len(b) - checksumLen - 5, len(b) - 1} {
		_, err := decodeFile(b[:n])
		wantKind(t, err, ErrTruncated, "")
	}
}

func TestModelFileTrailingData(t *testing.T) {
	b := encodeBytes(t, sampleContents())
	b = append(b[:len(b):len(b)], 0, 0, 0, 0)
	_, err := decodeFile(b)
	wantKind(t, err, ErrMalformed, "trailing")
}

func TestModelFileCorruptedByte(t *testing.T) {
	b := encodeBytes(t, sampleContents())
	for _, at := range []int{20, len(b) - checksumLen - 3, len(b) - 1} {
		c := bytes.Clone(b)
		c[at] ^= 0x10
		_, err := decodeFile(c)
		wantKind(t, err, ErrChecksum, "SHA-256")
	}
}

func TestModelFileHugeHeaderLength(t *testing.T) {
	b := encodeBytes(t, sampleContents())
	binary.LittleEndian.PutUint32(b[12:], math.MaxUint32)
	_, err := decodeFile(b)
	wantKind(t, err, ErrLimit, "MaxHeaderBytes")
}

func TestModelFileHostileShape(t *testing.T) {
	// Checksummed, well-formed JSON asking for 2^48 elements: rejected by the
	// limits before any allocation.
	hdr := `{"format":"striate-model","config":{},"classes":[],"tensors":[{"name":"w","dtype":"float32","shape":[16777216,16777216],"offset":0,"length":4}]}`
	_, err := decodeFile(withHeader(hdr, make([]byte, 4)))
	wantKind(t, err, ErrLimit, "MaxTensorElems")

	hdr = `{"format":"striate-model","config":{},"classes":[],"tensors":[{"name":"w","dtype":"float32","shape":[1,1,1,1,1],"offset":0,"length":4}]}`
	_, err = decodeFile(withHeader(hdr, make([]byte, 4)))
	wantKind(t, err, ErrLimit, "MaxRank")

	hdr = `{"format":"striate-model","config":{},"classes":[],"tensors":[{"name":"w","dtype":"float32","shape":[0],"offset":0,"length":0}]}`
	_, err = decodeFile(withHeader(hdr, nil))
	wantKind(t, err, ErrLimit, "dimension 0 is 0")

	hdr = `{"format":"striate-model","config":{},"classes":[],"tensors":[{"name":"w","dtype":"float32","shape":[-3],"offset":0,"length":4}]}`
	_, err = decodeFile(withHeader(hdr, make([]byte, 4)))
	wantKind(t, err, ErrLimit, "-3")
}

func TestModelFileLengthMismatch(t *testing.T) {
	// A header that claims more data than the file holds is truncation.
	hdr := `{"format":"striate-model","config":{},"classes":[],"tensors":[{"name":"w","dtype":"float32","shape":[1000000],"offset":0,"length":4000000}]}`
	_, err := decodeFile(withHeader(hdr, make([]byte, 8)))
	wantKind(t, err, ErrTruncated, "describes")

	// Length inconsistent with the shape.
	hdr = `{"format":"striate-model","config":{},"classes":[],"tensors":[{"name":"w","dtype":"float32","shape":[2],"offset":0,"length":4}]}`
	_, err = decodeFile(withHeader(hdr, make([]byte, 4)))
	wantKind(t, err, ErrMalformed, "needs 8")
}

func TestModelFileOverlappingTensors(t *testing.T) {
	hdr := `{"format":"striate-model","config":{},"classes":[],"tensors":[` +
		`{"name":"a","dtype":"float32","shape":[2],"offset":0,"length":8},` +
		`{"name":"b","dtype":"float32","shape":[2],"offset":4,"length":8}]}`
	_, err := decodeFile(withHeader(hdr, make([]byte, 16)))
	wantKind(t, err, ErrMalformed, "back to back")
}

func TestModelFileDuplicateTensor(t *testing.T) {
	hdr := `{"format":"striate-model","config":{},"classes":[],"tensors":[` +
		`{"name":"a","dtype":"float32","shape":[1],"offset":0,"length":4},` +
		`{"name":"a","dtype":"float32","shape":[1],"offset":4,"length":4}]}`
	_, err := decodeFile(withHeader(hdr, make([]byte, 8)))
	wantKind(t, err, ErrMalformed, "twice")
}

func TestModelFileUnknownDType(t *testing.T) {
	hdr := `{"format":"striate-model","config":{},"classes":[],"tensors":[{"name":"a","dtype":"float64","shape":[1],"offset":0,"length":8}]}`
	_, err := decodeFile(withHeader(hdr, make([]byte, 8)))
	wantKind(t, err, ErrMalformed, "dtype")
}

func TestModelFileUnknownHeaderKey(t *testing.T) {
	hdr := `{"format":"striate-model","config":{},"classes":[],"tensors":[],"exec":"rm -rf /"}`
	_, err := decodeFile(withHeader(hdr, nil))
	wantKind(t, err, ErrMalformed, "exec")
}

func TestModelFileBadJSON(t *testing.T) {
	_, err := decodeFile(withHeader(`{"format":`, nil))
	wantKind(t, err, ErrMalformed, "invalid JSON")
	_, err = decodeFile(withHeader(`{"format":"striate-model","config":{},"classes":[],"tensors":[]} {}`, nil))
	wantKind(t, err, ErrMalformed, "extra data")
	_, err = decodeFile(withHeader(`{"format":"other","config":{},"classes":[],"tensors":[]}`, nil))
	wantKind(t, err, ErrMalformed, "header.format")
	_, err = decodeFile(withHeader(`{"format":"striate-model","classes":[],"tensors":[]}`, nil))
	wantKind(t, err, ErrMalformed, "header.config")
}

func TestModelFileNaN(t *testing.T) {
	c := sampleContents()
	c.Tensors[0].F[4] = float32(math.NaN())
	_, err := decodeFile(encodeBytes(t, c))
	wantKind(t, err, ErrMalformed, "finite")
}

func TestModelFileNonZeroPadding(t *testing.T) {
	hdr := `{"format":"striate-model","config":{ },"classes":[],"tensors":[]}`
	b := withHeader(hdr, nil)
	if (prefixLen+len(hdr))%dataAlign == 0 {
		t.Fatal("test header needs padding; change its length")
	}
	b[prefixLen+len(hdr)] = 7
	_, err := decodeFile(resum(b))
	wantKind(t, err, ErrMalformed, "padding")
}

func TestModelFileTooManyClasses(t *testing.T) {
	var sb strings.Builder
	sb.WriteString(`{"format":"striate-model","config":{},"classes":[`)
	for i := 0; i <= MaxClasses; i++ {
		if i > 0 {
			sb.WriteByte(',')
		}
		sb.WriteString(`""`)
	}
	sb.WriteString(`],"tensors":[]}`)
	_, err := decodeFile(withHeader(sb.String(), nil))
	wantKind(t, err, ErrLimit, "MaxClasses")
}

func TestModelFileSaveRejectsBadTensor(t *testing.T) {
	c := sampleContents()
	c.Tensors[0].Shape = []int{7}
	var buf bytes.Buffer
	if err := encodeFile(&buf, c); err == nil || !strings.Contains(err.Error(), "shape") {
		t.Fatalf("encode with a wrong shape: %v; want an error naming the shape", err)
	}
}

// TestSaveFileReplacesAtomically: SaveFile over an existing model writes a
// new file and renames it into place (POSIX rename(2) replaces the name in
// one step; common practice for crash-safe saves), so the old file is never
// truncated and rewritten in place: the path ends up naming a different
// inode, the model loads, no temporary file is left, and a failed save (a
// folder that does not exist) leaves the existing file as it was.
func TestSaveFileReplacesAtomically(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "model.bin")
	old := []byte("previous model bytes")
	if err := os.WriteFile(path, old, 0o644); err != nil {
		t.Fatal(err)
	}
	before, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	m, err := LoadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	if err := m.SaveFile(filepath.Join(dir, "missing", "model.bin")); err == nil {
		t.Fatal("save into a missing folder succeeded")
	}
	if b, _ := os.ReadFile(path); !bytes.Equal(b, old) {
		t.Fatal("a failed save changed another file")
	}
	if err := m.SaveFile(path); err != nil {
		t.Fatal(err)
	}
	after, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if os.SameFile(before, after) {
		t.Error("SaveFile rewrote the existing file in place; want a new file renamed over it")
	}
	got, err := LoadFile(path)
	if err != nil {
		t.Fatalf("saved model does not load: %v", err)
	}
	if got.NumClasses() != m.NumClasses() {
		t.Errorf("reloaded model has %d classes, want %d", got.NumClasses(), m.NumClasses())
	}
	if left, _ := filepath.Glob(filepath.Join(dir, ".*")); len(left) != 0 {
		t.Errorf("temporary files left behind: %v", left)
	}
}
