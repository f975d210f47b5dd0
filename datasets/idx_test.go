package datasets

import (
	"bytes"
	"compress/gzip"
	"encoding/binary"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"
)

// idxDir holds the small IDX files written by NumPy (testdata/datasets/gen_idx.py).
const idxDir = "../testdata/datasets/idx"

// idxHeader builds a header with the given type and dims (no payload).
func idxHeader(t IDXType, dims ...uint32) []byte {
	b := []byte{0, 0, byte(t), byte(len(dims))}
	for _, d := range dims {
		b = binary.BigEndian.AppendUint32(b, d)
	}
	return b
}

func asIDXError(t *testing.T, err error) *IDXError {
	t.Helper()
	var e *IDXError
	if !errors.As(err, &e) {
		t.Fatalf("want *IDXError, got %T: %v", err, err)
	}
	return e
}

func gz(b []byte) []byte {
	var buf bytes.Buffer
	zw := gzip.NewWriter(&buf)
	zw.Write(b)
	zw.Close()
	return buf.Bytes()
}

// TestIDXNumPyFiles checks the reader against files written by NumPy, an
// independent implementation of the format (testdata/datasets/gen_idx.py,
// NumPy 1.24.2): every type, its dims and every value.
func TestIDXNumPyFiles(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join(idxDir, "expected.json"))
	if err != nil {
		t.Fatal(err)
	}
	var exp struct {
		Arrays map[string]struct {
			Type   int
			Dims   []int
			Values []float64
		}
	}
	if err := json.Unmarshal(raw, &exp); err != nil {
		t.Fatal(err)
	}
	if len(exp.Arrays) != 7 {
		t.Fatalf("expected.json lists %d arrays, want 7", len(exp.Arrays))
	}
	for name, e := range exp.Arrays {
		x, err := ReadIDXFile(filepath.Join(idxDir, name+".idx"))
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		if int(x.Type) != e.Type || !equalInts(x.Dims, e.Dims) {
			t.Errorf("%s: type %s dims %v, want %02X %v", name, x.Type, x.Dims, e.Type, e.Dims)
		}
		got := x.Float64s(nil)
		for i := range e.Values {
			// JSON carries NumPy's float64 repr exactly; IDX values decode exactly.
			if got[i] != e.Values[i] {
				t.Errorf("%s[%d] = %v, want %v (NumPy)", name, i, got[i], e.Values[i])
			}
		}
		// Round trip: our writer reproduces NumPy's bytes exactly.
		var buf bytes.Buffer
		if err := WriteIDX(&buf, x); err != nil {
			t.Fatal(err)
		}
		want, _ := os.ReadFile(filepath.Join(idxDir, name+".idx"))
		if !bytes.Equal(buf.Bytes(), want) {
			t.Errorf("%s: WriteIDX bytes differ from NumPy's file", name)
		}
	}
	// The gzip twin decodes to the same array.
	a, err := ReadIDXFile(filepath.Join(idxDir, "images_u8.idx.gz"))
	if err != nil {
		t.Fatal(err)
	}
	b, _ := ReadIDXFile(filepath.Join(idxDir, "images_u8.idx"))
	if !bytes.Equal(a.Data, b.Data) || !equalInts(a.Dims, []int{3, 4, 5}) {
		t.Errorf("gzip twin differs: dims %v", a.Dims)
	}
	s, err := ReadIDXSet(filepath.Join(idxDir, "images_u8.idx.gz"), filepath.Join(idxDir, "labels_u8.idx"), "tiny", []string{"a", "b", "c"})
	if err != nil {
		t.Fatal(err)
	}
	if s.N != 3 || s.H != 4 || s.W != 5 || !equalInts(s.Labels, []int{2, 0, 1}) || s.Validate() != nil {
		t.Errorf("ReadIDXSet: %d×%d×%d labels %v", s.N, s.H, s.W, s.Labels)
	}
}

func equalInts(a, b []int) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

func TestIDXEmptyFile(t *testing.T) {
	_, err := ReadIDX(bytes.NewReader(nil), "empty.idx")
	e := asIDXError(t, err)
	if e.Field != "magic number" || !strings.Contains(e.Got, "empty") || e.File != "empty.idx" {
		t.Errorf("empty file: %v", err)
	}
	// An empty gzip stream is empty too.
	_, err = ReadIDX(bytes.NewReader(gz(nil)), "empty.idx.gz")
	if e := asIDXError(t, err); !strings.Contains(e.Got, "empty") {
		t.Errorf("empty gzip: %v", err)
	}
}

func TestIDXWrongMagic(t *testing.T) {
	for _, b := range [][]byte{
		[]byte("\x89PNG\r\n\x1a\n"),
		{0, 1, 8, 1, 0, 0, 0, 0},
	} {
		_, err := ReadIDX(bytes.NewReader(b), "x.idx")
		if e := asIDXError(t, err); e.Field != "magic number" || e.Offset != 0 {
			t.Errorf("% X: %v", b, err)
		}
	}
	_, err := ReadIDX(bytes.NewReader([]byte{0, 0, 0x0A, 1, 0, 0, 0, 0}), "x.idx")
	if e := asIDXError(t, err); e.Field != "element type" || e.Offset != 2 {
		t.Errorf("type 0x0A: %v", err)
	}
	for _, rank := range []byte{0, MaxIDXRank + 1} {
		_, err := ReadIDX(bytes.NewReader([]byte{0, 0, 8, rank}), "x.idx")
		if e := asIDXError(t, err); e.Field != "rank" || e.Offset != 3 {
			t.Errorf("rank %d: %v", rank, err)
		}
	}
}

func TestIDXTruncated(t *testing.T) {
	full, err := os.ReadFile(filepath.Join(idxDir, "images_u8.idx"))
	if err != nil {
		t.Fatal(err)
	}
	for _, n := range []int{2, 6, 10, 16, len(full) - 1} {
		for _, z := range []bool{false, true} {
			b := full[:n]
			if z {
				b = gz(b)
			}
			_, err := ReadIDX(bytes.NewReader(b), "cut.idx")
			e := asIDXError(t, err)
			if !strings.Contains(e.Got, "truncated") {
				t.Errorf("cut at %d (gzip %v): %v", n, z, err)
			}
			if n >= 16 && (e.Field != "data" || e.Offset != int64(n)) {
				t.Errorf("cut at %d: field %q offset %d, want data at %d", n, e.Field, e.Offset, n)
			}
		}
	}
	// A plain file is checked against its size before the payload is read.
	p := filepath.Join(t.TempDir(), "cut.idx")
	os.WriteFile(p, full[:len(full)-7], 0o644)
	_, err = ReadIDXFile(p)
	if e := asIDXError(t, err); e.Field != "file size" || !strings.Contains(e.Got, "truncated") {
		t.Errorf("short plain file: %v", err)
	}
	// A gzip stream cut inside the compressed bytes is a truncation as well.
	zb := gz(full)
	_, err = ReadIDX(bytes.NewReader(zb[:len(zb)-10]), "cut.idx.gz")
	asIDXError(t, err)
}

func TestIDXTrailingBytes(t *testing.T) {
	full, _ := os.ReadFile(filepath.Join(idxDir, "labels_u8.idx"))
	b := append(append([]byte(nil), full...), 9)
	_, err := ReadIDX(bytes.NewReader(b), "long.idx")
	if e := asIDXError(t, err); e.Field != "end of data" || e.Offset != int64(len(full)) {
		t.Errorf("trailing byte: %v", err)
	}
	p := filepath.Join(t.TempDir(), "long.idx")
	os.WriteFile(p, b, 0o644)
	_, err = ReadIDXFile(p)
	if e := asIDXError(t, err); e.Field != "file size" || !strings.Contains(e.Got, "too long") {
		t.Errorf("long plain file: %v", err)
	}
}

// TestIDXDimensionOverflow: headers whose dimensions exceed the limits (or
// whose product would overflow) are refused from the header alone, before
// anything is allocated.
func TestIDXDimensionOverflow(t *testing.T) {
	cases := []struct {
		hdr   []byte
		field string
	}{
		{idxHeader(IDXUint8, MaxIDXDim+1), "dimension 0"},
		{idxHeader(IDXUint8, 0xFFFFFFFF, 0xFFFFFFFF, 0xFFFFFFFF), "dimension 0"},
		{idxHeader(IDXUint8, 1<<16, 1<<16, 1<<16), "dimension product"},
		{idxHeader(IDXFloat64, 1<<14, 1<<14), "dimension product"}, // 2 GiB of f64
	}
	for _, c := range cases {
		_, err := ReadIDX(bytes.NewReader(c.hdr), "big.idx")
		if e := asIDXError(t, err); e.Field != c.field {
			t.Errorf("% X: field %q, want %q (%v)", c.hdr, e.Field, c.field, err)
		}
	}
	// A header claiming 1 GiB followed by a few bytes fails as truncated
	// without allocating the claimed size.
	hdr := idxHeader(IDXUint8, 1<<10, 1<<10, 1<<10)
	b := append(hdr, make([]byte, 100)...)
	for _, in := range [][]byte{b, gz(b)} {
		var m0, m1 runtime.MemStats
		runtime.ReadMemStats(&m0)
		_, err := ReadIDX(bytes.NewReader(in), "claim.idx")
		runtime.ReadMemStats(&m1)
		if e := asIDXError(t, err); e.Field != "data" {
			t.Errorf("1 GiB claim: %v", err)
		}
		// readChunk (64 KiB) plus gzip and bufio state (~50 KB) is the most
		// it may take; 1 MiB leaves margin and is 1000× below the claim.
		if d := m1.TotalAlloc - m0.TotalAlloc; d > 1<<20 {
			t.Errorf("reading a 1 GiB claim with 100 bytes present allocated %d bytes", d)
		}
	}
}

// TestIDXCountMismatch: an image file and a label file that disagree on N.
func TestIDXCountMismatch(t *testing.T) {
	dir := t.TempDir()
	im := &IDX{Type: IDXUint8, Dims: []int{3, 2, 2}, Data: make([]byte, 12)}
	lb := &IDX{Type: IDXUint8, Dims: []int{4}, Data: []byte{0, 1, 0, 1}}
	ip, lp := filepath.Join(dir, "im.idx"), filepath.Join(dir, "lb.idx.gz")
	if err := WriteIDXFile(ip, im); err != nil {
		t.Fatal(err)
	}
	if err := WriteIDXFile(lp, lb); err != nil {
		t.Fatal(err)
	}
	_, err := ReadIDXSet(ip, lp, "m", []string{"a", "b"})
	if e := asIDXError(t, err); e.Field != "label count" || e.File != lp {
		t.Errorf("count mismatch: %v", err)
	}
}

func TestIDXSetErrors(t *testing.T) {
	dir := t.TempDir()
	ip, lp := filepath.Join(dir, "im.idx"), filepath.Join(dir, "lb.idx")
	s := &Set{Name: "s", N: 2, H: 1, W: 2, Pix: []byte{1, 2, 3, 4}, Labels: []int{0, 5}, Classes: []string{"a", "b"}}
	if err := WriteIDXSet(ip, lp, s); err != nil {
		t.Fatal(err)
	}
	_, err := ReadIDXSet(ip, lp, "s", s.Classes)
	if e := asIDXError(t, err); e.Field != "label 1" || e.Offset != 9 {
		t.Errorf("label out of range: %v", err)
	}
	// Wrong ranks: labels given as images and the other way round.
	if _, err := ReadIDXSet(lp, lp, "s", s.Classes); asIDXError(t, err).Field != "image header" {
		t.Errorf("rank-1 images: %v", err)
	}
	if _, err := ReadIDXSet(ip, ip, "s", s.Classes); asIDXError(t, err).Field != "label header" {
		t.Errorf("rank-3 labels: %v", err)
	}
	if _, err := ReadIDXSet(filepath.Join(dir, "none"), lp, "s", nil); err == nil || !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing file: %v", err)
	}
	if _, err := ReadIDXSet(ip, filepath.Join(dir, "none"), "s", nil); err == nil {
		t.Error("missing label file: no error")
	}
	bad := *s
	bad.Labels = []int{0, 300}
	if err := WriteIDXSet(ip, lp, &bad); err == nil {
		t.Error("label 300 written to u8")
	}
	bad.Labels = []int{0}
	if err := WriteIDXSet(ip, lp, &bad); err == nil {
		t.Error("inconsistent set written")
	}
}

func TestWriteIDXRefusesBadArrays(t *testing.T) {
	for _, x := range []*IDX{
		{Type: 0x0A, Dims: []int{1}, Data: []byte{0}},
		{Type: IDXUint8, Dims: nil},
		{Type: IDXUint8, Dims: []int{1, 1, 1, 1, 1}, Data: []byte{0}},
		{Type: IDXUint8, Dims: []int{-1}},
		{Type: IDXUint8, Dims: []int{MaxIDXDim, MaxIDXDim}},
		{Type: IDXInt16, Dims: []int{2}, Data: []byte{0, 0, 0}},
	} {
		if err := WriteIDX(&bytes.Buffer{}, x); err == nil {
			t.Errorf("WriteIDX accepted %s %v with %d bytes", x.Type, x.Dims, len(x.Data))
		}
		if err := WriteIDXFile(filepath.Join(t.TempDir(), "x.idx"), x); err == nil {
			t.Errorf("WriteIDXFile accepted %s %v", x.Type, x.Dims)
		}
	}
	if err := WriteIDXFile(filepath.Join(t.TempDir(), "no", "dir.idx"), &IDX{Type: IDXUint8, Dims: []int{0}}); err == nil {
		t.Error("WriteIDXFile into a missing folder: no error")
	}
	if err := WriteIDX(failWriter{}, &IDX{Type: IDXUint8, Dims: []int{1}, Data: []byte{1}}); err == nil {
		t.Error("write error not reported")
	}
}

type failWriter struct{}

func (failWriter) Write([]byte) (int, error) { return 0, errors.New("disk full") }

func TestIDXTypeNames(t *testing.T) {
	want := map[IDXType]string{IDXUint8: "u8", IDXInt8: "i8", IDXInt16: "i16", IDXInt32: "i32", IDXFloat32: "f32", IDXFloat64: "f64", 0x0A: "0x0A"}
	for ty, s := range want {
		if ty.String() != s {
			t.Errorf("%02X: %q, want %q", byte(ty), ty.String(), s)
		}
	}
	e := &IDXError{File: "f", Offset: 3, Field: "rank", Want: "1..4", Got: "9", Err: errors.New("io")}
	if e.Error() != `datasets: IDX file "f", offset 3, rank: want 1..4, got 9: io` || e.Unwrap() == nil {
		t.Errorf("message %q", e.Error())
	}
}

func TestIDXDamagedGzip(t *testing.T) {
	full, _ := os.ReadFile(filepath.Join(idxDir, "images_u8.idx.gz"))
	b := append([]byte(nil), full...)
	b[3] = 0xFF // reserved flag bits set: a damaged gzip header
	if _, err := ReadIDX(bytes.NewReader(b), "bad.gz"); asIDXError(t, err).Field != "gzip header" {
		t.Errorf("damaged header: %v", err)
	}
	c := append([]byte(nil), full...)
	c[len(c)-5] ^= 0xFF // CRC-32 / size trailer damaged
	if _, err := ReadIDX(bytes.NewReader(c), "crc.gz"); err == nil {
		t.Error("damaged gzip trailer accepted")
	}
}

// FuzzIDX feeds arbitrary bytes (plain and gzip-wrapped) to the reader. It
// must never panic, and whatever it accepts must survive write-then-read
// unchanged and satisfy the header invariants.
func FuzzIDX(f *testing.F) {
	files, _ := filepath.Glob(filepath.Join(idxDir, "*.idx*"))
	for _, p := range files {
		b, err := os.ReadFile(p)
		if err == nil {
			f.Add(b)
		}
	}
	f.Add([]byte{})
	f.Add(idxHeader(IDXUint8, MaxIDXDim, MaxIDXDim))
	// One reused Huffman-only compressor: a fresh default gzip.Writer costs
	// ~1 MB of state per call and its Reset clears large hash tables, which
	// would dominate each run and make the fuzzer's minimisation of every
	// new input take its full minute. Fuzz calls within a worker are
	// sequential, so reuse is safe.
	var zbuf bytes.Buffer
	zw, _ := gzip.NewWriterLevel(&zbuf, gzip.HuffmanOnly)
	f.Fuzz(func(t *testing.T, b []byte) {
		zbuf.Reset()
		zw.Reset(&zbuf)
		zw.Write(b)
		zw.Close()
		for _, in := range [][]byte{b, zbuf.Bytes()} {
			x, err := ReadIDX(bytes.NewReader(in), "fuzz")
			if err != nil {
				var e *IDXError
				if !errors.As(err, &e) {
					t.Fatalf("error is %T, not *IDXError: %v", err, err)
				}
				continue
			}
			if len(x.Dims) < 1 || len(x.Dims) > MaxIDXRank || len(x.Data) != x.Len()*x.Type.Size() || len(x.Data) > MaxIDXBytes {
				t.Fatalf("accepted inconsistent array: %s %v, %d bytes", x.Type, x.Dims, len(x.Data))
			}
			var buf bytes.Buffer
			if err := WriteIDX(&buf, x); err != nil {
				t.Fatalf("cannot write back what was read: %v", err)
			}
			y, err := ReadIDX(&buf, "again")
			if err != nil || y.Type != x.Type || !equalInts(y.Dims, x.Dims) || !bytes.Equal(y.Data, x.Data) {
				t.Fatalf("round trip changed the array: %v", err)
			}
			v := x.Float64s(nil)
			if len(v) != x.Len() {
				t.Fatalf("Float64s gave %d values for %d elements", len(v), x.Len())
			}
		}
	})
}
