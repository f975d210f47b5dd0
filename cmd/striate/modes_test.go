//go:build unix

package main

import (
	"io/fs"
	"os/exec"
	"path/filepath"
	"testing"
)

// TestCLIOutputModes: under umask 027 every file a command writes (model,
// report, figures, NPY arrays, shard descriptions) has mode 0640 and every
// folder it creates 0750 — 0644 and 0755 less the umask, the modes of
// os.WriteFile and os.MkdirAll in common use.
func TestCLIOutputModes(t *testing.T) {
	cliFixture(t)
	out := filepath.Join(t.TempDir(), "out")
	for _, args := range [][]string{
		{"evaluate", "--model", cliModelA, "--data", cliTest, "--out", filepath.Join(out, "report", "deep"), "--quiet"},
		{"extract", "--model", cliModelA, "--data", cliTest, "--out", filepath.Join(out, "features"), "--quiet"},
		{"extract", "--model", cliModelA, "--data", cliTest, "--out", filepath.Join(out, "shards"), "--shard", "0/2", "--quiet"},
		{"train", "--data", filepath.Join(cliDir, "train"), "--out", filepath.Join(out, "m.striate"), "--quiet", "--workers", "2"},
	} {
		cmd := exec.Command("sh", append([]string{"-c", `umask 027 && exec "$0" "$@"`, cliBin}, args...)...)
		if b, err := cmd.CombinedOutput(); err != nil {
			t.Fatalf("striate %v: %v\n%s", args, err, b)
		}
	}
	files := 0
	filepath.WalkDir(out, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			t.Fatal(err)
		}
		info, _ := d.Info()
		want := fs.FileMode(0o640)
		if d.IsDir() {
			want = fs.ModeDir | 0o750
		} else {
			files++
		}
		if p != out && info.Mode() != want {
			t.Errorf("%s: mode %v; want %v", p, info.Mode(), want)
		}
		return nil
	})
	if files < 8 {
		t.Errorf("only %d output files were checked", files)
	}
}
