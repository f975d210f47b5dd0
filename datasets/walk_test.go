package datasets

import (
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// symlink makes link point to target, skipping the test where links cannot
// be made.
func symlink(t *testing.T, target, link string) {
	t.Helper()
	if err := os.Symlink(target, link); err != nil {
		t.Skipf("cannot make symbolic links here: %v", err)
	}
}

// linkedTree writes a depot folder whose classes use symbolic links: coat
// is a plain folder holding a link to an image elsewhere and a broken link;
// shirt is a link to a folder elsewhere that holds a sub-folder, a link
// back to itself (a loop) and a second link to coat; self is a link to the
// root (a loop at the top); hat is a broken link; bag is an empty folder.
func linkedTree(t *testing.T) (root, elsewhere string) {
	base := t.TempDir()
	root, elsewhere = filepath.Join(base, "depot"), filepath.Join(base, "elsewhere")
	grey := uniform(color.RGBA{90, 90, 90, 255}, 28, 28)
	writeImage(t, filepath.Join(root, "coat", "a.png"), grey, png.Encode)
	writeImage(t, filepath.Join(elsewhere, "loose", "x.png"), grey, png.Encode)
	writeImage(t, filepath.Join(elsewhere, "shirts", "b.png"), grey, png.Encode)
	writeImage(t, filepath.Join(elsewhere, "shirts", "sub", "c.png"), grey, png.Encode)
	os.MkdirAll(filepath.Join(root, "bag"), 0o755)
	symlink(t, filepath.Join(elsewhere, "loose", "x.png"), filepath.Join(root, "coat", "d.png"))
	symlink(t, filepath.Join(root, "nowhere.png"), filepath.Join(root, "coat", "gone.png"))
	symlink(t, filepath.Join(elsewhere, "shirts"), filepath.Join(root, "shirt"))
	symlink(t, "..", filepath.Join(elsewhere, "shirts", "sub", "up"))
	symlink(t, filepath.Join(root, "coat"), filepath.Join(elsewhere, "shirts", "zz-coat"))
	symlink(t, ".", filepath.Join(root, "self"))
	symlink(t, filepath.Join(base, "gone"), filepath.Join(root, "hat"))
	return root, elsewhere
}

// TestLoadFolderFollowsLinks: linked class folders, linked folders inside
// them and linked files are read; each loop and the second path to a
// folder are reported by name and read once; a broken link is reported;
// empty class folders (bag, and self, whose only content is the loop) are
// listed in Empty and keep their labels.
func TestLoadFolderFollowsLinks(t *testing.T) {
	root, _ := linkedTree(t)
	s, rep, err := LoadFolder(root, FolderConfig{})
	if err != nil {
		t.Fatal(err)
	}
	if !equalStrings(s.Classes, []string{"bag", "coat", "self", "shirt"}) || !equalInts(s.Labels, []int{1, 1, 3, 3}) {
		t.Fatalf("classes %v labels %v; want coat's a.png and linked d.png, shirt's b.png and sub/c.png\n%s", s.Classes, s.Labels, rep)
	}
	reasons := map[string]string{}
	for _, sk := range rep.Skipped {
		reasons[strings.TrimPrefix(sk.Path, root+string(filepath.Separator))] = sk.Reason
	}
	for p, frag := range map[string]string{
		"self":          "symbolic link loop: leads back to " + root,
		"shirt/sub/up":  "symbolic link loop: leads back to " + filepath.Join(root, "shirt"),
		"shirt/zz-coat": "the same folder as " + filepath.Join(root, "coat") + ", already read",
		"coat/gone.png": "cannot open",
	} {
		if !strings.Contains(reasons[filepath.FromSlash(p)], frag) {
			t.Errorf("%s: reason %q; want it to say %q\n%s", p, reasons[p], frag, rep)
		}
	}
	if len(rep.Skipped) != 5 || !equalStrings(rep.Empty, []string{filepath.Join(root, "bag"), filepath.Join(root, "self")}) {
		t.Errorf("skipped %d, empty %v; want 5 and bag, self\n%s", len(rep.Skipped), rep.Empty, rep)
	}
}

// TestListImagesFollowsLinks: predict's listing follows the same links,
// lists each image once and returns the loops and the repeated folder as
// skipped; the broken link is listed (its decode reports it).
func TestListImagesFollowsLinks(t *testing.T) {
	root, _ := linkedTree(t)
	files, skipped, err := ListImages(root)
	if err != nil {
		t.Fatal(err)
	}
	var rel []string
	for _, f := range files {
		rel = append(rel, filepath.ToSlash(strings.TrimPrefix(f, root+string(filepath.Separator))))
	}
	if want := []string{"coat/a.png", "coat/d.png", "coat/gone.png", "shirt/b.png", "shirt/sub/c.png"}; !slices.Equal(rel, want) {
		t.Errorf("files %v; want %v", rel, want)
	}
	why := map[string]string{}
	for _, s := range skipped {
		why[filepath.Base(s.Path)] = s.Reason
	}
	for name, frag := range map[string]string{"self": "symbolic link loop", "up": "symbolic link loop",
		"zz-coat": "the same folder as " + filepath.Join(root, "coat")} {
		if !strings.Contains(why[name], frag) {
			t.Errorf("%s: skipped as %q; want %q", name, why[name], frag)
		}
	}
	if len(skipped) != 3 {
		t.Errorf("skipped %v; want the two loops and the repeated folder", skipped)
	}
	if os.Geteuid() != 0 { // root reads any folder
		locked := filepath.Join(root, "coat", "locked")
		os.Mkdir(locked, 0o000)
		defer os.Chmod(locked, 0o755)
		if _, _, err := ListImages(root); err == nil || !strings.Contains(err.Error(), "locked cannot be read") {
			t.Errorf("unreadable folder: %v", err)
		}
	}
}
