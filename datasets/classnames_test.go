package datasets

import (
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// garmentFolder writes a small IDX test split whose labels are 0..9 (two
// images per class) and returns its folder.
func garmentFolder(t *testing.T) string {
	t.Helper()
	dir := t.TempDir()
	s := &Set{Name: "garments", N: 20, H: 2, W: 3, Pix: make([]uint8, 20*6), Labels: make([]int, 20), Classes: FashionClasses}
	for i := range s.Labels {
		s.Labels[i] = i % 10
		s.Pix[i*6] = uint8(i)
	}
	im, lb := idxNames(Test)
	if err := WriteIDXSet(filepath.Join(dir, im+".gz"), filepath.Join(dir, lb+".gz"), s); err != nil {
		t.Fatal(err)
	}
	return dir
}

func writeText(t *testing.T, path, text string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
}

// With a classes.txt beside the IDX files (comments, blank lines, CRLF
// endings and spaces around names allowed), the set carries those names in
// label order; without one it carries the digits.
func TestLoadIDXFolderClassNames(t *testing.T) {
	dir := garmentFolder(t)
	s, err := LoadIDXFolder(dir, Test)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(s.Classes, MNISTClasses) || s.N != 20 || s.Name != filepath.Base(dir)+"-test" {
		t.Fatalf("without %s: classes %v, %d images, name %q; want the digits, 20, %q", ClassNamesFile, s.Classes, s.N, s.Name, filepath.Base(dir)+"-test")
	}
	text := "# garment classes, label order\r\n\r\n" + strings.Join(FashionClasses[:3], "\r\n") + "\r\n  # a comment  \n" +
		"  " + strings.Join(FashionClasses[3:], "  \n") + "\n\n"
	writeText(t, filepath.Join(dir, ClassNamesFile), text)
	s, err = LoadIDXFolder(dir, Test)
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(s.Classes, FashionClasses) {
		t.Errorf("classes %q, want %q", s.Classes, FashionClasses)
	}
	if s.Labels[9] != 9 || s.Classes[s.Labels[9]] != "Ankle boot" {
		t.Errorf("image 9 has label %d named %q, want 9 (Ankle boot)", s.Labels[9], s.Classes[s.Labels[9]])
	}
	if _, err := LoadIDXFolder(dir, Train); err == nil || !strings.Contains(err.Error(), "train-images-idx3-ubyte") {
		t.Errorf("missing train split: err %v, want one naming train-images-idx3-ubyte", err)
	}
}

// Fashion-MNIST's test split, read as a plain IDX folder with a
// classes.txt of the names of Xiao, Rasul & Vollgraf (2017, Table 1):
// 10,000 images of 28×28, 1,000 per class (the data set's published
// split), and the first test image is an ankle boot (label 9; from memory,
// it is the data set's best-known first image).
func TestLoadIDXFolderFashionMNIST(t *testing.T) {
	src := FashionDefaultDir
	im, lb := idxNames(Test)
	if _, err := os.Stat(filepath.Join(src, im+".gz")); err != nil {
		t.Skipf("Fashion-MNIST not installed: %v", err)
	}
	dir := t.TempDir()
	for _, n := range []string{im + ".gz", lb + ".gz"} {
		if err := os.Symlink(filepath.Join(src, n), filepath.Join(dir, n)); err != nil {
			t.Fatal(err)
		}
	}
	if err := WriteClassNames(filepath.Join(dir, ClassNamesFile), FashionClasses); err != nil {
		t.Fatal(err)
	}
	s, err := LoadIDXFolder(dir, Test)
	if err != nil {
		t.Fatal(err)
	}
	if s.N != 10000 || s.H != 28 || s.W != 28 || !slices.Equal(s.Classes, FashionClasses) {
		t.Fatalf("%d images of %d×%d, classes %v", s.N, s.H, s.W, s.Classes)
	}
	per := make([]int, 10)
	for _, l := range s.Labels {
		per[l]++
	}
	for c, n := range per {
		if n != 1000 {
			t.Errorf("class %s: %d test images, want 1,000", s.Classes[c], n)
		}
	}
	if s.Classes[s.Labels[0]] != "Ankle boot" {
		t.Errorf("first test image is %q, want Ankle boot", s.Classes[s.Labels[0]])
	}
}

// Bad class-names files are refused with an error naming the file and the
// line: too few names for the labels present, a repeated name, a tab.
func TestLoadIDXFolderBadClassNames(t *testing.T) {
	for _, c := range []struct {
		name, text string
		want       []string
	}{
		{"too few", "# three names\nT-shirt/top\nTrouser\n\nPullover\n", []string{ClassNamesFile + ":5:", "3 class names", "reach 9", "0..9"}},
		{"duplicate", "T-shirt/top\nTrouser\n# x\nT-shirt/top\n", []string{ClassNamesFile + ":4:", `"T-shirt/top"`, "line 1"}},
		{"tab", "T-shirt/top\nAnkle\tboot\n", []string{ClassNamesFile + ":2:", "tab"}},
		{"empty", "# nothing\n\n", []string{ClassNamesFile + ":", "no class names"}},
		{"not UTF-8", "Trouser\nPull\xffover\n", []string{ClassNamesFile + ":2:", "UTF-8"}},
		{"too many", manyNames(257), []string{ClassNamesFile + ":257:", "256"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			dir := garmentFolder(t)
			writeText(t, filepath.Join(dir, ClassNamesFile), c.text)
			_, err := LoadIDXFolder(dir, Test)
			if err == nil {
				t.Fatal("accepted")
			}
			for _, w := range append(c.want, "datasets: ", filepath.Join(dir, ClassNamesFile)) {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q lacks %q", err, w)
				}
			}
		})
	}
}

func manyNames(n int) string {
	var sb strings.Builder
	for i := 0; i < n; i++ {
		sb.WriteString("class ")
		sb.WriteString(string(rune('a'+i%26)) + string(rune('a'+i/26)))
		sb.WriteByte('\n')
	}
	return sb.String()
}

// WriteClassNames writes what ReadClassNames reads back, and refuses names
// the format cannot carry.
func TestWriteClassNames(t *testing.T) {
	p := filepath.Join(t.TempDir(), ClassNamesFile)
	if err := WriteClassNames(p, FashionClasses); err != nil {
		t.Fatal(err)
	}
	got, err := ReadClassNames(p)
	if err != nil || !slices.Equal(got, FashionClasses) {
		t.Fatalf("read back %q, %v", got, err)
	}
	for _, bad := range [][]string{nil, {""}, {"a\tb"}, {"a\nb"}, {" a"}, {"#a"}, {"a", "a"}, {"\xff"}, make([]string, 257)} {
		if err := WriteClassNames(p, bad); err == nil || !strings.HasPrefix(err.Error(), "datasets: write ") {
			t.Errorf("WriteClassNames(%q): err %v, want a refusal", bad, err)
		}
	}
}
