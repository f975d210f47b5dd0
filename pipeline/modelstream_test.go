package pipeline

import (
	"bytes"
	"encoding/binary"
	"errors"
	"io"
	"math"
	"os"
	"strings"
	"testing"
	"testing/iotest"
)

// TestLoadDevZero: /dev/zero as a model is refused from its first 8 bytes
// (before, Load read up to MaxFileBytes first: 2.2 GB).
func TestLoadDevZero(t *testing.T) {
	if _, err := os.Stat("/dev/zero"); err != nil {
		t.Skip("no /dev/zero")
	}
	var err error
	got := allocated(func() { _, err = LoadFile("/dev/zero") })
	if !errors.Is(err, ErrNotModelFile) || !strings.Contains(err.Error(), "/dev/zero") {
		t.Fatalf("LoadFile(/dev/zero): %v", err)
	}
	t.Logf("/dev/zero refused after allocating %d bytes", got)
	if got > 1<<20 {
		t.Errorf("refusing /dev/zero allocated %d bytes; want under 1 MiB (a 64 KiB read buffer)", got)
	}
	cr := &countReader{r: zeros{}}
	if _, err := Load(cr); !errors.Is(err, ErrNotModelFile) || cr.n > 64 {
		t.Errorf("Load(zeros): %v after %d bytes; want ErrNotModelFile after a few bytes", err, cr.n)
	}
}

type zeros struct{}

func (zeros) Read(p []byte) (int, error) { clear(p); return len(p), nil }

// TestLoadEndlessTail: a valid model followed by endless zeros from a
// stream of unknown length is refused as trailing data once the declared
// length has been read, never read to the end.
func TestLoadEndlessTail(t *testing.T) {
	b, err := os.ReadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	cr := &countReader{r: io.MultiReader(bytes.NewReader(b), zeros{})}
	var lerr error
	got := allocated(func() { _, lerr = Load(cr) })
	if !errors.Is(lerr, ErrMalformed) || !strings.Contains(lerr.Error(), "trailing") {
		t.Fatalf("Load: %v; want trailing data", lerr)
	}
	if cr.n > int64(len(b))+1 || got > rejectAllocBound {
		t.Errorf("read %d bytes (file %d), allocated %d", cr.n, len(b), got)
	}
}

// TestLoadStreamChecks: from a reader of unknown length delivering one byte
// at a time, the streaming reader finds what decodeFile finds on the whole
// file: a cut file is truncated, a flipped payload byte breaks the checksum,
// a NaN with a fixed checksum is malformed, and the intact file loads.
func TestLoadStreamChecks(t *testing.T) {
	b, err := os.ReadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	load := func(b []byte) error {
		_, err := Load(iotest.OneByteReader(bytes.NewReader(b)))
		return err
	}
	if err := load(b); err != nil {
		t.Fatalf("intact model: %v", err)
	}
	hlen := int(binary.LittleEndian.Uint32(b[12:]))
	dataStart := prefixLen + hlen + int(pad(int64(prefixLen+hlen)))
	for _, n := range []int{0, 5, 12, prefixLen + 3, dataStart + 100, len(b) - 1} {
		if err := load(b[:n]); !errors.Is(err, ErrTruncated) {
			t.Errorf("cut at %d bytes: %v; want ErrTruncated", n, err)
		}
	}
	flip := bytes.Clone(b)
	flip[dataStart+41] ^= 0x10
	if err := load(flip); !errors.Is(err, ErrChecksum) {
		t.Errorf("flipped payload byte: %v; want ErrChecksum", err)
	}
	nan := bytes.Clone(b)
	binary.LittleEndian.PutUint32(nan[dataStart:], math.Float32bits(float32(math.NaN())))
	if err := load(resum(nan)); !errors.Is(err, ErrMalformed) || !strings.Contains(err.Error(), "finite") {
		t.Errorf("NaN with a fixed checksum: %v; want ErrMalformed (finite)", err)
	}
	hdr := bytes.Clone(b)
	hdr[prefixLen+1] = 'X' // breaks the header's JSON; the checksum then decides
	if err := load(hdr); !errors.Is(err, ErrMalformed) || !strings.Contains(err.Error(), "checksum not checked") {
		t.Errorf("damaged header from a stream: %v; want ErrMalformed at once", err)
	}
	if _, err := decodeFile(hdr); !errors.Is(err, ErrChecksum) {
		t.Errorf("damaged header in a file: %v; want ErrChecksum", err)
	}
	cr := &countReader{r: io.MultiReader(bytes.NewReader(hdr), zeros{})}
	if _, err := Load(cr); !errors.Is(err, ErrMalformed) || cr.n > int64(dataStart) {
		t.Errorf("damaged header, endless stream: %v after %d bytes", err, cr.n)
	}
}

// TestLoadOversizedTensorsRefusedEarly: a header declaring 800 MB of
// tensors for the default configuration (whose stages hold a few MB) is
// refused before the payload is read, from a stream that would deliver it.
func TestLoadOversizedTensorsRefusedEarly(t *testing.T) {
	hdr := `{"format":"striate-model","config":{},"classes":["a","b"],"tensors":[{"name":"head.w","dtype":"float32","shape":[2,10000,10000],"offset":0,"length":800000000}]}`
	var b []byte
	b = append(b, fileMagic...)
	b = binary.LittleEndian.AppendUint32(b, FormatVersion)
	b = binary.LittleEndian.AppendUint32(b, uint32(len(hdr)))
	b = append(b, hdr...)
	cr := &countReader{r: io.MultiReader(bytes.NewReader(b), zeros{})}
	var err error
	got := allocated(func() { _, err = Load(cr) })
	if !errors.Is(err, ErrMalformed) || !strings.Contains(err.Error(), "header.tensors") {
		t.Fatalf("Load: %v; want the tensor table refused", err)
	}
	if cr.n > int64(len(b))+dataAlign || got > rejectAllocBound {
		t.Errorf("read %d bytes, allocated %d; want the header only", cr.n, got)
	}
}
