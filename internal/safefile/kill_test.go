package safefile

import (
	"bytes"
	"crypto/sha256"
	"fmt"
	"io"
	"os"
	"os/exec"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/striate/striate/internal/hostiletest"
)

// childEnv makes the test binary, re-executed by TestKillDuringWrite, run
// writeForever on the path it names instead of the tests.
const childEnv = "SAFEFILE_KILL_CHILD"

// fullEnv makes the re-executed binary run writeFull on the path it names.
const fullEnv = "SAFEFILE_FULL_CHILD"

func TestMain(m *testing.M) {
	if p := os.Getenv(childEnv); p != "" {
		writeForever(p)
		return
	}
	if p := os.Getenv(fullEnv); p != "" {
		writeFull(p)
		return
	}
	os.Exit(m.Run())
}

// versionLen is the size of one version's pattern.
const versionLen = 2 << 20

// version is a self-checking file content: a pattern that differs with v,
// then its SHA-256, so a reader can tell a complete file from a partial or
// mixed one.
func version(v int) []byte {
	b := make([]byte, versionLen)
	for i := range b {
		b[i] = byte(i*(2*v+1) + i>>10)
	}
	s := sha256.Sum256(b)
	return append(b, s[:]...)
}

func complete(b []byte) bool {
	if len(b) != versionLen+sha256.Size {
		return false
	}
	s := sha256.Sum256(b[:versionLen])
	return bytes.Equal(s[:], b[versionLen:])
}

// writeForever replaces path with new versions until it is killed, in
// chunks with short pauses so that a kill usually lands inside a write.
func writeForever(path string) {
	vs := [2][]byte{version(1), version(2)} // made before "ready": the kills land in writes
	fmt.Println("ready")
	for v := 0; ; v++ {
		b := vs[v%2]
		err := Write(path, func(w io.Writer) error {
			for len(b) > 0 {
				n := min(len(b), 64<<10)
				if _, err := w.Write(b[:n]); err != nil {
					return err
				}
				b = b[n:]
				time.Sleep(time.Millisecond)
			}
			return nil
		})
		if err != nil {
			fmt.Fprintln(os.Stderr, err)
			os.Exit(3)
		}
	}
}

// TestKillDuringWrite: a child process replacing a file in a loop is
// killed with SIGKILL at random moments; each time the path holds a
// complete version (the first one or a later one), never a partial file.
// Temporary files a kill leaves behind are counted as the sign that the
// kill landed inside a write.
func TestKillDuringWrite(t *testing.T) {
	if testing.Short() {
		t.Skip("re-executes the test binary")
	}
	dir := t.TempDir()
	path := filepath.Join(dir, "model.striate")
	if err := WriteBytes(path, version(0)); err != nil {
		t.Fatal(err)
	}
	const trials = 8
	midWrite := 0
	hostiletest.KillAtRandom(t, []string{childEnv + "=" + path}, trials, 65*time.Millisecond, 5, func(i int) {
		b, err := os.ReadFile(path)
		if err != nil || !complete(b) {
			t.Fatalf("trial %d: after SIGKILL the path holds %d bytes (%v), not a complete version", i, len(b), err)
		}
		es, _ := os.ReadDir(dir)
		for _, e := range es {
			if strings.Contains(e.Name(), ".tmp-") {
				midWrite++
				os.Remove(filepath.Join(dir, e.Name()))
			}
		}
	})
	t.Logf("%d of %d kills landed inside a write", midWrite, trials)
	if midWrite == 0 {
		t.Errorf("no kill landed inside a write; the test did not exercise the interruption")
	}
}

// writeFull limits the process's file size to 1 MiB (RLIMIT_FSIZE; the
// kernel then fails a write past it with EFBIG, as a full disk fails it
// with ENOSPC) and tries to replace path with a 2 MiB version. It prints
// the error Write returned.
func writeFull(path string) {
	signal.Ignore(syscall.SIGXFSZ)
	lim := syscall.Rlimit{Cur: 1 << 20, Max: 1 << 20}
	if err := syscall.Setrlimit(syscall.RLIMIT_FSIZE, &lim); err != nil {
		fmt.Println("setrlimit:", err)
		os.Exit(4)
	}
	fmt.Println(WriteBytes(path, version(1)))
}

// TestFullDiskKeepsOld: when the file system refuses the bytes half-way
// (a child process whose file-size limit is below the new file's size),
// Write fails naming the path, the previous file stays whole and no
// temporary file is left.
func TestFullDiskKeepsOld(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "report.md")
	old := version(0)[:512<<10]
	if err := WriteBytes(path, old); err != nil {
		t.Fatal(err)
	}
	cmd := exec.Command(os.Args[0], "-test.run=^$")
	cmd.Env = append(os.Environ(), fullEnv+"="+path)
	out, err := cmd.Output()
	if err != nil {
		t.Fatalf("child: %v (%s)", err, out)
	}
	if msg := string(out); !strings.Contains(msg, path) || !strings.Contains(msg, "file too large") {
		t.Errorf("child's Write returned %q; want the write error naming the path", msg)
	}
	if b, _ := os.ReadFile(path); !bytes.Equal(b, old) {
		t.Errorf("after the failed write the path holds %d bytes; want the previous %d", len(b), len(old))
	}
	assertOnly(t, dir, "report.md")
}
