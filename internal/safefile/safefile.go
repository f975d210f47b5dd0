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
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
)

// Perm is the permission of every file striate writes and DirPerm that of
// every folder it creates, each less the user's umask as the kernel applies
// it (so files are 0644 and folders 0755 under the usual umask 022, 0640
// and 0750 under 027): the modes os.WriteFile and os.MkdirAll are commonly
// given (common practice). Write creates its temporary file with Perm, so
// the renamed file has the same mode as one os.WriteFile(path, b, Perm)
// creates.
const (
	Perm    = 0o644
	DirPerm = 0o755
)

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

// createTemp creates the temporary file .<base>.tmp-<random> beside path,
// with mode Perm less the umask (os.CreateTemp would make it 0600), and
// returns it with path's folder.
func createTemp(path string) (*os.File, string, error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	for range 1000 {
		name := filepath.Join(dir, "."+base+".tmp-"+strconv.FormatUint(rand.Uint64(), 36))
		f, err := os.OpenFile(name, os.O_RDWR|os.O_CREATE|os.O_EXCL, Perm)
		if !errors.Is(err, fs.ErrExist) {
			return f, dir, err
		}
	}
	return nil, dir, fmt.Errorf("no free temporary name .%s.tmp-* in %s", base, dir)
}
