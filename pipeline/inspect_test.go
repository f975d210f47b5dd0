package pipeline

import (
	"bytes"
	"crypto/sha256"
	"errors"
	"testing"
)

// TestInspectDescribesTheFile saves a model and checks Inspect's account of
// the file against the bytes themselves: the version and length, the stored
// SHA-256 equal to crypto/sha256 over everything before it (FIPS 180-4, the
// checksum the format names), the tensor table tiling the data region back
// to back, and the same model as Load. A flipped byte fails as in Load.
func TestInspectDescribesTheFile(t *testing.T) {
	m := quickModel(t)
	var buf bytes.Buffer
	if err := m.Save(&buf); err != nil {
		t.Fatal(err)
	}
	b := buf.Bytes()
	got, info, err := Inspect(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	if info.Version != FormatVersion || info.Size != int64(len(b)) {
		t.Errorf("version %d, size %d; want %d, %d", info.Version, info.Size, FormatVersion, len(b))
	}
	if sum := sha256.Sum256(b[:len(b)-sha256.Size]); sum != info.Checksum {
		t.Errorf("checksum %x, want %x", info.Checksum, sum)
	}
	var off int64
	for _, ti := range info.Tensors {
		if ti.Offset != off || ti.Length != 4*ti.Elems() {
			t.Fatalf("tensor %s at %d, %d bytes for %d elements; want offset %d, 4 bytes each", ti.Name, ti.Offset, ti.Length, ti.Elems(), off)
		}
		off += ti.Length
	}
	start := int64(prefixLen + len(info.Header))
	start += pad(start)
	if start+off+sha256.Size != int64(len(b)) {
		t.Errorf("header %d + padding + %d data + checksum != %d bytes", len(info.Header), off, len(b))
	}
	if len(info.Tensors) == 0 || len(info.Classes) != m.NumClasses() || len(info.Config) == 0 {
		t.Errorf("tensors %d, classes %v, config %d bytes", len(info.Tensors), info.Classes, len(info.Config))
	}
	if got.FeatureLen() != m.FeatureLen() || got.NumClasses() != m.NumClasses() {
		t.Errorf("inspected model differs from the saved one")
	}
	bad := append([]byte(nil), b...)
	bad[len(bad)/2] ^= 1
	_, _, ierr := Inspect(bytes.NewReader(bad))
	_, lerr := Load(bytes.NewReader(bad))
	if ierr == nil || lerr == nil || ierr.Error() != lerr.Error() || !errors.Is(ierr, ErrChecksum) {
		t.Errorf("corrupt file: Inspect %v, Load %v; want the same checksum error", ierr, lerr)
	}
}
