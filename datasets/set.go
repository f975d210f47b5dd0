package datasets

import "fmt"

// Split selects the training or the test part of a published dataset.
type Split int

// The two splits of MNIST and Fashion-MNIST: 60,000 training images
// (train-*-ubyte files) and 10,000 test images (t10k-*-ubyte files).
const (
	Train Split = iota
	Test
)

func (s Split) String() string {
	switch s {
	case Train:
		return "train"
	case Test:
		return "test"
	}
	return fmt.Sprintf("Split(%d)", int(s))
}

// Set is a labelled set of N grey images of H×W pixels, stored as bytes:
//
//	pixel (y, x) of image i = Pix[(i*H+y)*W+x]   (0 black … 255 white)
//	class of image i        = Labels[i], in [0, len(Classes))
//
// Source tells where the images came from (file paths or folder). A Set is
// plain data: reading it from several goroutines is safe, changing it is not.
type Set struct {
	Name    string
	N, H, W int
	Pix     []uint8
	Labels  []int
	Classes []string
	Source  string
}

// Image returns the bytes of image i, sharing memory with s.
// It panics if i is out of range.
func (s *Set) Image(i int) []uint8 {
	if i < 0 || i >= s.N {
		panic(fmt.Sprintf("datasets: image %d out of range [0,%d) in set %q", i, s.N, s.Name))
	}
	n := s.H * s.W
	return s.Pix[i*n : (i+1)*n]
}

// Float writes image i as pixel/255 (row-major, values in [0,1]) into dst,
// reusing dst when its capacity is at least H*W, and returns it.
// It panics if i is out of range.
func (s *Set) Float(dst []float32, i int) []float32 {
	src := s.Image(i)
	if cap(dst) < len(src) {
		dst = make([]float32, len(src))
	}
	dst = dst[:len(src)]
	for j, v := range src {
		dst[j] = float32(v) / 255
	}
	return dst
}

// Subset returns a new Set holding copies of the images idx (in that order),
// with the same classes. It panics if an index is out of range.
func (s *Set) Subset(idx []int) *Set {
	n := s.H * s.W
	out := &Set{Name: s.Name, N: len(idx), H: s.H, W: s.W, Pix: make([]uint8, len(idx)*n),
		Labels: make([]int, len(idx)), Classes: append([]string(nil), s.Classes...), Source: s.Source}
	for j, i := range idx {
		copy(out.Pix[j*n:(j+1)*n], s.Image(i))
		out.Labels[j] = s.Labels[i]
	}
	return out
}

// First returns the first n images of s: s itself when n is 0 or at least
// s.N, else a Subset of images 0 … n−1 (a fixed, unshuffled prefix).
func (s *Set) First(n int) *Set {
	if n <= 0 || n >= s.N {
		return s
	}
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	return s.Subset(idx)
}

// Mirrored returns a new Set holding the left–right mirror image of every
// image of s (pixel (y, x) from (y, W−1−x)), with the same labels.
func (s *Set) Mirrored() *Set {
	out := &Set{Name: s.Name + " (mirrored)", N: s.N, H: s.H, W: s.W, Pix: make([]uint8, len(s.Pix)),
		Labels: append([]int(nil), s.Labels...), Classes: append([]string(nil), s.Classes...), Source: s.Source}
	for r := 0; r+s.W <= len(s.Pix); r += s.W {
		src, dst := s.Pix[r:r+s.W], out.Pix[r:r+s.W]
		for x, v := range src {
			dst[s.W-1-x] = v
		}
	}
	return out
}

// ClassCounts returns the number of images of each class.
func (s *Set) ClassCounts() []int {
	c := make([]int, len(s.Classes))
	for _, l := range s.Labels {
		if l >= 0 && l < len(c) {
			c[l]++
		}
	}
	return c
}

// Split divides s into a training and a test Set by StratifiedSplit(s.Labels,
// testFrac, seed).
func (s *Set) Split(testFrac float64, seed uint64) (train, test *Set) {
	tr, te := StratifiedSplit(s.Labels, testFrac, seed)
	return s.Subset(tr), s.Subset(te)
}

// Validate checks that the sizes, pixels and labels agree.
func (s *Set) Validate() error {
	if s.N < 0 || s.H < 0 || s.W < 0 {
		return fmt.Errorf("datasets: set %q has negative size %d×%d×%d", s.Name, s.N, s.H, s.W)
	}
	if len(s.Pix) != s.N*s.H*s.W {
		return fmt.Errorf("datasets: set %q holds %d pixel bytes; %d images of %d×%d need %d", s.Name, len(s.Pix), s.N, s.H, s.W, s.N*s.H*s.W)
	}
	if len(s.Labels) != s.N {
		return fmt.Errorf("datasets: set %q holds %d labels for %d images", s.Name, len(s.Labels), s.N)
	}
	for i, l := range s.Labels {
		if l < 0 || l >= len(s.Classes) {
			return fmt.Errorf("datasets: set %q: label %d of image %d outside [0,%d)", s.Name, l, i, len(s.Classes))
		}
	}
	return nil
}
