package learn

import (
	"bytes"
	"encoding/binary"
	"errors"
	"runtime"
	"testing"
)

// TestDictCheckpointHugeClaim: a 200-byte checkpoint whose header claims
// the largest allowed sizes (4096 atoms of dimension 65536, 2^28 rows) is
// refused as truncated while allocating little: the arrays grow with the
// bytes present (before, 1 GiB was allocated for the atoms before the
// first read).
func TestDictCheckpointHugeClaim(t *testing.T) {
	b := []byte(ckMagic)
	for _, v := range []uint64{0, MaxAtoms, 1 << 16, maxCheckpointN, 1, 0, 0, 0, 0, 0} {
		b = binary.LittleEndian.AppendUint64(b, v)
	}
	b = append(b, make([]byte, 100)...)
	var m0, m1 runtime.MemStats
	runtime.GC()
	runtime.ReadMemStats(&m0)
	_, err := LoadDictCheckpoint(bytes.NewReader(b))
	runtime.ReadMemStats(&m1)
	if !errors.Is(err, ErrDictCheckpoint) {
		t.Fatalf("LoadDictCheckpoint: %v; want ErrDictCheckpoint", err)
	}
	if d := m1.TotalAlloc - m0.TotalAlloc; d > 16<<20 {
		t.Errorf("refusing a 200-byte checkpoint allocated %d bytes; want under 16 MiB", d)
	}
}
