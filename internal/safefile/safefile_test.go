package safefile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestWriteReplaces: a second Write replaces the content whole and leaves
// no temporary file behind.
func TestWriteReplaces(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "model.striate")
	for _, s := range []string{"first version", "second"} {
		if err := WriteBytes(p, []byte(s)); err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(p)
		if err != nil || string(b) != s {
			t.Fatalf("read %q, %v; want %q", b, err, s)
		}
	}
	assertOnly(t, dir, "model.striate")
	st, err := os.Stat(p)
	if err != nil || st.Mode().Perm()&^0o022 != Perm&^0o022 {
		t.Errorf("mode %v, %v; want %v (less the umask)", st.Mode(), err, os.FileMode(Perm))
	}
}

// TestPathUntouchedDuringWrite: while fill runs, the destination still holds
// the previous complete file, so a kill at that moment loses nothing.
func TestPathUntouchedDuringWrite(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "report.md")
	if err := WriteBytes(p, []byte("old report")); err != nil {
		t.Fatal(err)
	}
	err := Write(p, func(w io.Writer) error {
		if _, err := io.WriteString(w, strings.Repeat("new ", 1<<16)); err != nil {
			return err
		}
		b, err := os.ReadFile(p)
		if err != nil || string(b) != "old report" {
			t.Errorf("during the write the path holds %d bytes (%v); want the old file", len(b), err)
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if st, _ := os.Stat(p); st.Size() != 4<<16 {
		t.Errorf("new file has %d bytes; want %d", st.Size(), 4<<16)
	}
}

// TestFailedFillKeepsOld: an error from fill (standing in for a full disk
// half-way through) keeps the previous file and removes the temporary one.
func TestFailedFillKeepsOld(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "predictions.npy")
	if err := WriteBytes(p, []byte("complete")); err != nil {
		t.Fatal(err)
	}
	boom := errors.New("no space left on device")
	err := Write(p, func(w io.Writer) error {
		io.WriteString(w, "partial")
		return boom
	})
	if !errors.Is(err, boom) || !strings.Contains(err.Error(), p) {
		t.Fatalf("err %v; want the fill error naming %s", err, p)
	}
	if b, _ := os.ReadFile(p); string(b) != "complete" {
		t.Errorf("after a failed write the path holds %q", b)
	}
	assertOnly(t, dir, "predictions.npy")
}

// TestMissingFolder: a folder that does not exist is an error naming the
// path, and nothing is created.
func TestMissingFolder(t *testing.T) {
	p := filepath.Join(t.TempDir(), "no", "such", "x.json")
	err := WriteBytes(p, []byte("{}"))
	if err == nil || !strings.Contains(err.Error(), p) {
		t.Fatalf("err %v; want an error naming %s", err, p)
	}
}

func assertOnly(t *testing.T, dir string, names ...string) {
	t.Helper()
	es, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, e := range es {
		got = append(got, e.Name())
	}
	if strings.Join(got, ",") != strings.Join(names, ",") {
		t.Errorf("folder holds %v; want %v", got, names)
	}
}

// TestCheckDir: a writable folder passes and is left as it was; a missing
// one fails naming the path.
func TestCheckDir(t *testing.T) {
	dir := t.TempDir()
	if err := CheckDir(filepath.Join(dir, "m.striate")); err != nil {
		t.Fatal(err)
	}
	assertOnly(t, dir)
	p := filepath.Join(dir, "missing", "m.striate")
	if err := CheckDir(p); err == nil || !strings.Contains(err.Error(), p) {
		t.Errorf("missing folder: %v", err)
	}
}
