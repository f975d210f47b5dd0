package datasets

import (
	"slices"
	"testing"
)

// TestMirrored checks the left–right mirror (pixel (y, x) from (y, W−1−x),
// the usual horizontal flip; common practice) on a 2×2×3 set, and that
// mirroring twice gives the set back.
func TestMirrored(t *testing.T) {
	s := &Set{Name: "t", N: 2, H: 2, W: 3, Pix: []uint8{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12},
		Labels: []int{0, 1}, Classes: []string{"a", "b"}}
	m := s.Mirrored()
	if want := []uint8{3, 2, 1, 6, 5, 4, 9, 8, 7, 12, 11, 10}; !slices.Equal(m.Pix, want) {
		t.Errorf("mirrored pixels %v; want %v", m.Pix, want)
	}
	if !slices.Equal(m.Labels, s.Labels) || m.N != 2 || m.H != 2 || m.W != 3 {
		t.Errorf("mirrored set changed labels or size: %+v", m)
	}
	if err := m.Validate(); err != nil {
		t.Error(err)
	}
	if !slices.Equal(m.Mirrored().Pix, s.Pix) {
		t.Error("mirroring twice does not give the set back")
	}
	m.Pix[0] = 99
	if s.Pix[2] == 99 {
		t.Error("the mirrored set shares pixels with the original")
	}
}

// TestFirst: First(n) is the unshuffled prefix — the images and labels of
// Subset(0 … n−1) — and First of 0 or ≥ N is the set itself.
func TestFirst(t *testing.T) {
	s := &Set{Name: "t", N: 4, H: 1, W: 2, Pix: []uint8{1, 2, 3, 4, 5, 6, 7, 8}, Labels: []int{0, 1, 0, 1}, Classes: []string{"a", "b"}}
	f := s.First(3)
	if f.N != 3 || string(f.Pix) != string([]uint8{1, 2, 3, 4, 5, 6}) || f.Labels[2] != 0 || len(f.Classes) != 2 {
		t.Errorf("First(3) = %+v", f)
	}
	if s.First(0) != s || s.First(4) != s || s.First(9) != s {
		t.Error("First of 0 or ≥ N should return the set itself")
	}
}
