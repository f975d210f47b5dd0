//go:build unix

package safefile

import (
	"os"
	"path/filepath"
	"syscall"
	"testing"
)

// TestModeFollowsUmask: under umask 027 a written file has mode 0640 —
// Perm less the umask, as open(2) applies it — the same as the file
// os.WriteFile(…, Perm) creates beside it, and a replaced file takes the
// new mode. (The test sets the process umask, so it must not run in
// parallel with tests that create files.)
func TestModeFollowsUmask(t *testing.T) {
	old := syscall.Umask(0o027)
	defer syscall.Umask(old)
	dir := t.TempDir()
	ref := filepath.Join(dir, "ref")
	if err := os.WriteFile(ref, nil, Perm); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, "results.json")
	if err := os.WriteFile(p, []byte("{}"), 0o600); err != nil {
		t.Fatal(err)
	}
	if err := WriteBytes(p, []byte("{}\n")); err != nil {
		t.Fatal(err)
	}
	a, _ := os.Stat(ref)
	b, err := os.Stat(p)
	if err != nil || b.Mode().Perm() != 0o640 || b.Mode() != a.Mode() {
		t.Errorf("mode %v (%v); want -rw-r----- like os.WriteFile's %v", b.Mode(), err, a.Mode())
	}
}
