package datasets

import (
	"fmt"
	"io/fs"
	"os"
	"path/filepath"
)

// walker reads folder trees for LoadFolder and ListImages. Unlike
// filepath.WalkDir it follows symbolic links, to folders and to files, and
// guards against loops: each folder is known by its real path (all links
// resolved), and a folder met again, whether through a link back to a
// folder that holds it (a loop) or through a second link to a folder
// already read, is reported and not read twice, so no image is listed
// twice and no walk runs for ever.
type walker struct {
	seen map[string]string // real path → the path it was first read as
	open map[string]bool   // real paths of the folders being read (the current branch)
	// file receives every regular file and every link that does not lead
	// to a folder (a broken link too: opening it reports why it fails).
	file func(path string)
	// skip receives an entry left out: a loop, a repeated folder, a device,
	// socket or pipe.
	skip func(path, reason string)
	// fail receives a folder that cannot be read; a non-nil result ends the
	// walk with that error.
	fail func(path string, err error) error
}

func newWalker(file func(string), skip func(path, reason string), fail func(string, error) error) *walker {
	return &walker{seen: map[string]string{}, open: map[string]bool{}, file: file, skip: skip, fail: fail}
}

// realPath is p with every link resolved, as an absolute path.
func realPath(p string) (string, error) {
	r, err := filepath.EvalSymlinks(p)
	if err != nil {
		return "", err
	}
	return filepath.Abs(r)
}

// enter marks the folder p as being read (for a root whose entries the
// caller reads itself, so that a link back to it is seen as a loop); leave
// with the returned function.
func (w *walker) enter(p string) (leave func(), err error) {
	real, err := realPath(p)
	if err != nil {
		return nil, err
	}
	w.seen[real], w.open[real] = p, true
	return func() { delete(w.open, real) }, nil
}

// entry reads one directory entry q: a folder is walked, a link followed,
// a regular file passed to file.
func (w *walker) entry(q string, d fs.DirEntry) error {
	switch t := d.Type(); {
	case t.IsDir():
		return w.dir(q)
	case t&fs.ModeSymlink != 0:
		st, err := os.Stat(q)
		if err != nil || !st.IsDir() {
			if err == nil && !st.Mode().IsRegular() {
				w.skip(q, "link to "+st.Mode().Type().String()+", not a regular file")
				return nil
			}
			w.file(q)
			return nil
		}
		return w.dir(q)
	case t.IsRegular():
		w.file(q)
	default:
		w.skip(q, "not a regular file ("+t.String()+")")
	}
	return nil
}

// isDirEntry reports whether d is a folder or a link to one.
func isDirEntry(q string, d fs.DirEntry) bool {
	if d.IsDir() {
		return true
	}
	if d.Type()&fs.ModeSymlink == 0 {
		return false
	}
	st, err := os.Stat(q)
	return err == nil && st.IsDir()
}

// dir reads the folder p (reached by that path) and everything under it in
// name order.
func (w *walker) dir(p string) error {
	real, err := realPath(p)
	if err != nil {
		return w.fail(p, err)
	}
	if first, ok := w.seen[real]; ok {
		if w.open[real] {
			w.skip(p, fmt.Sprintf("symbolic link loop: leads back to %s, which holds it; not followed", first))
		} else {
			w.skip(p, fmt.Sprintf("the same folder as %s, already read; not read twice", first))
		}
		return nil
	}
	w.seen[real], w.open[real] = p, true
	defer delete(w.open, real)
	entries, err := os.ReadDir(p)
	if err != nil {
		return w.fail(p, err)
	}
	for _, e := range entries {
		if err := w.entry(filepath.Join(p, e.Name()), e); err != nil {
			return err
		}
	}
	return nil
}
