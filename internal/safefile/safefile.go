// Package safefile writes files so that a reader never sees a partial one:
// the content goes to a temporary file in the destination's folder, which is
// flushed, synced to stable storage and then renamed over the destination.
// A rename within one folder replaces the name in one step on POSIX file
// systems (rename(2)), so after a crash, a kill or a full disk the path holds
// either the previous file (or nothing, if there was none) or the complete
// new one — never a truncated mixture. The folder itself is synced after the
// rename so that the new name survives a power cut. This is the usual
// write-temp-sync-rename pattern (common practice; see the rename(2) and
// fsync(2) manual pages).
//
// Every file striate's command writes (models, reports, NPY arrays,
// predictions, shard metadata) goes through Write.
package safefile

import (
	"bufio"
	"fmt"
	"io"
	"os"
	"path/filepath"
)

// Perm is the permission of the files Write creates (before the umask),
// the same as os.WriteFile's usual 0644.
const Perm = 0o644

// Write creates or replaces path with what fill writes. fill receives a
// buffered writer on a temporary file beside path (named .<base>.tmp-*);
// when fill returns nil the data is flushed, synced and renamed to path.
// When fill, a write, the sync or the rename fails, the temporary file is
// removed, path is left as it was, and the error names path. The folder of
// path must exist.
func Write(path string, fill func(w io.Writer) error) (err error) {
	tmp, dir, err := createTemp(path)
	if err != nil {
		return fmt.Errorf("safefile: writing %s: %w", path, err)
	}
	defer func() {
		if err != nil {
			tmp.Close()
			os.Remove(tmp.Name())
			err = fmt.Errorf("safefile: writing %s: %w", path, err)
		}
	}()
	bw := bufio.NewWriterSize(tmp, 1<<16)
	if err = fill(bw); err != nil {
		return err
	}
	if err = bw.Flush(); err != nil {
		return err
	}
	if err = tmp.Chmod(Perm); err != nil {
		return err
	}
	if err = tmp.Sync(); err != nil {
		return err
	}
	if err = tmp.Close(); err != nil {
		return err
	}
	if err = os.Rename(tmp.Name(), path); err != nil {
		return err
	}
	// Sync the folder so the rename itself is durable. Some file systems
	// refuse to sync a directory; the file is complete either way.
	if d, derr := os.Open(dir); derr == nil {
		_ = d.Sync()
		d.Close()
	}
	return nil
}

// WriteBytes is Write of a byte slice.
func WriteBytes(path string, b []byte) error {
	return Write(path, func(w io.Writer) error {
		_, err := w.Write(b)
		return err
	})
}

// CheckDir reports whether a file can be created in path's folder, by
// creating and removing an empty temporary file there: a cheap check to run
// before long work whose result Write will save to path.
func CheckDir(path string) error {
	tmp, _, err := createTemp(path)
	if err != nil {
		return fmt.Errorf("safefile: cannot write %s: %w", path, err)
	}
	tmp.Close()
	return os.Remove(tmp.Name())
}

// createTemp creates the temporary file .<base>.tmp-* beside path and
// returns it with path's folder.
func createTemp(path string) (*os.File, string, error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	return f, dir, err
}
