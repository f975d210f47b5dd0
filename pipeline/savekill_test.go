package pipeline

import (
	"bytes"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/striate/striate/internal/hostiletest"
)

// saveChildEnv makes the test binary, re-executed by TestSaveFileKilled,
// load the model named by its value and save it over saveChildOut forever.
const (
	saveChildEnv = "STRIATE_SAVE_CHILD_MODEL"
	saveChildOut = "STRIATE_SAVE_CHILD_OUT"
)

func TestMain(m *testing.M) {
	if src := os.Getenv(saveChildEnv); src != "" {
		saveForever(src, os.Getenv(saveChildOut))
		return
	}
	os.Exit(m.Run())
}

func saveForever(src, dst string) {
	m, err := LoadFile(src)
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(3)
	}
	fmt.Println("ready")
	for {
		if err := m.SaveFile(dst); err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(3)
		}
	}
}

// TestSaveFileKilled: a child process saving a 17 MB model over an existing
// one in a loop is killed with SIGKILL at random moments; each time the
// path holds the complete model, byte for byte (every save writes the same
// bytes), and it loads. (Before saves went through a temporary file, a kill
// left a truncated model.)
func TestSaveFileKilled(t *testing.T) {
	if testing.Short() {
		t.Skip("re-executes the test binary")
	}
	src := writeStackedModel(t, 40)
	m, err := LoadFile(src)
	if err != nil {
		t.Fatal(err)
	}
	dst := filepath.Join(t.TempDir(), "sorter.striate")
	if err := m.SaveFile(dst); err != nil {
		t.Fatal(err)
	}
	want, err := os.ReadFile(dst)
	if err != nil {
		t.Fatal(err)
	}
	midSave := 0
	hostiletest.KillAtRandom(t, []string{saveChildEnv + "=" + src, saveChildOut + "=" + dst}, 6, 150*time.Millisecond, 3, func(i int) {
		got, err := os.ReadFile(dst)
		if err != nil || !bytes.Equal(got, want) {
			t.Fatalf("kill %d: the path holds %d bytes (%v); want the complete %d-byte model", i, len(got), err, len(want))
		}
		tmps, _ := filepath.Glob(filepath.Join(filepath.Dir(dst), ".*.tmp-*"))
		for _, p := range tmps { // a kill inside a save leaves its temporary file
			midSave++
			os.Remove(p)
		}
	})
	t.Logf("%d of 6 kills landed inside a save", midSave)
	if midSave == 0 {
		t.Errorf("no kill landed inside a save; the test did not exercise the interruption")
	}
	if _, err := LoadFile(dst); err != nil {
		t.Fatal(err)
	}
}

// failAfter accepts n bytes, then fails every write, as a full disk does.
type failAfter struct{ n int }

var errDiskFull = errors.New("no space left on device")

func (f *failAfter) Write(p []byte) (int, error) {
	if len(p) > f.n {
		k := f.n
		f.n = 0
		return k, errDiskFull
	}
	f.n -= len(p)
	return len(p), nil
}

// TestSaveFullDisk: Save to a writer that fails part-way returns the
// write's error (wherever it fails: prefix, header, tensors, checksum)
// instead of panicking or reporting success.
func TestSaveFullDisk(t *testing.T) {
	m, err := LoadFile(smallModel)
	if err != nil {
		t.Fatal(err)
	}
	var full bytes.Buffer
	if err := m.Save(&full); err != nil {
		t.Fatal(err)
	}
	for _, n := range []int{0, 10, 100, 5000, full.Len() / 2, full.Len() - 1} {
		if err := m.Save(&failAfter{n}); !errors.Is(err, errDiskFull) {
			t.Errorf("disk full after %d of %d bytes: Save returned %v", n, full.Len(), err)
		}
	}
}
