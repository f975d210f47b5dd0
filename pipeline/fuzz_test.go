package pipeline

import (
	"bytes"
	"os"
	"path/filepath"
	"reflect"
	"testing"
)

// FuzzModelFile feeds arbitrary bytes to the model-file reader. Invariants:
// it never panics; whatever it accepts re-encodes to a file it reads back to
// the same contents (round trip is the identity). Seeds: every file in
// testdata/pipeline/ plus a fresh encoding of a small sample.
func FuzzModelFile(f *testing.F) {
	seeds, _ := filepath.Glob("../testdata/pipeline/*.bin")
	more, _ := filepath.Glob("../testdata/pipeline/*.stm")
	seeds = append(seeds, more...)
	more, _ = filepath.Glob("../testdata/pipeline/*.striate") // the int8 model (version 3)
	seeds = append(seeds, more...)
	for _, p := range seeds {
		b, err := os.ReadFile(p)
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	var buf bytes.Buffer
	if err := encodeFile(&buf, sampleContents()); err != nil {
		f.Fatal(err)
	}
	f.Add(buf.Bytes())
	f.Fuzz(func(t *testing.T, b []byte) {
		c, err := decodeFile(b)
		if err != nil {
			return
		}
		var out bytes.Buffer
		if err := encodeFile(&out, c); err != nil {
			t.Fatalf("accepted file does not re-encode: %v", err)
		}
		c2, err := decodeFile(out.Bytes())
		if err != nil {
			t.Fatalf("re-encoded file rejected: %v", err)
		}
		if !reflect.DeepEqual(c, c2) {
			t.Fatal("round trip changed the contents")
		}
		fuzzModel(t, b)
	})
}

// fuzzModel rebuilds a model from an accepted container: it must not panic,
// and a model it accepts must save to a file that loads back to the same
// bytes.
func fuzzModel(t *testing.T, b []byte) {
	m, err := Load(bytes.NewReader(b))
	if err != nil {
		return
	}
	var out bytes.Buffer
	if err := m.Save(&out); err != nil {
		t.Fatalf("loaded model does not save: %v", err)
	}
	m2, err := Load(bytes.NewReader(out.Bytes()))
	if err != nil {
		t.Fatalf("saved model does not load: %v", err)
	}
	var out2 bytes.Buffer
	if err := m2.Save(&out2); err != nil || !bytes.Equal(out.Bytes(), out2.Bytes()) {
		t.Fatalf("save → load → save is not the identity (%v)", err)
	}
}
