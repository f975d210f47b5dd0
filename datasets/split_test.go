package datasets

import (
	"math"
	"slices"
	"testing"
)

func testLabels() []int {
	// 3 classes of 50, 30 and 7 members, interleaved.
	var l []int
	for i := 0; i < 50; i++ {
		l = append(l, 0)
		if i < 30 {
			l = append(l, 1)
		}
		if i < 7 {
			l = append(l, 2)
		}
	}
	return l
}

// TestStratifiedSplit: each class c puts round(f·n_c) members into test (the
// allocation rule of stratified sampling, common practice), the parts are
// disjoint, cover everything, are sorted, and depend only on the seed.
func TestStratifiedSplit(t *testing.T) {
	labels := testLabels()
	tr, te := StratifiedSplit(labels, 0.2, 7)
	if len(tr)+len(te) != len(labels) || !slices.IsSorted(tr) || !slices.IsSorted(te) {
		t.Fatalf("sizes %d+%d of %d", len(tr), len(te), len(labels))
	}
	seen := map[int]bool{}
	counts := make([]int, 3)
	for _, i := range append(append([]int(nil), tr...), te...) {
		if seen[i] {
			t.Fatalf("index %d in both parts", i)
		}
		seen[i] = true
	}
	for _, i := range te {
		counts[labels[i]]++
	}
	for c, n := range []int{50, 30, 7} {
		if want := int(math.Round(0.2 * float64(n))); counts[c] != want {
			t.Errorf("class %d: %d in test, want %d", c, counts[c], want)
		}
	}
	tr2, te2 := StratifiedSplit(labels, 0.2, 7)
	if !slices.Equal(tr, tr2) || !slices.Equal(te, te2) {
		t.Error("same seed, different split")
	}
	_, te3 := StratifiedSplit(labels, 0.2, 8)
	if slices.Equal(te, te3) {
		t.Error("different seeds gave the same split")
	}
	if _, te := StratifiedSplit(labels, -1, 1); len(te) != 0 {
		t.Error("testFrac < 0 not clamped")
	}
	if tr, _ := StratifiedSplit(labels, 2, 1); len(tr) != 0 {
		t.Error("testFrac > 1 not clamped")
	}
}

// TestPerClass: min(k, n_c) per class, nested across k for one seed.
func TestPerClass(t *testing.T) {
	labels := testLabels()
	prev := []int{}
	for _, k := range []int{0, 1, 5, 10, 40, 100} {
		sub := PerClass(labels, k, 3)
		counts := make([]int, 3)
		for _, i := range sub {
			counts[labels[i]]++
		}
		for c, n := range []int{50, 30, 7} {
			if counts[c] != min(k, n) {
				t.Errorf("k=%d class %d: %d, want %d", k, c, counts[c], min(k, n))
			}
		}
		for _, i := range prev {
			if _, ok := slices.BinarySearch(sub, i); !ok {
				t.Fatalf("k=%d subset does not contain the smaller one (index %d)", k, i)
			}
		}
		prev = sub
	}
	if slices.Equal(PerClass(labels, 5, 3), PerClass(labels, 5, 4)) {
		t.Error("seed ignored")
	}
	if len(PerClass(labels, -2, 1)) != 0 {
		t.Error("negative perClass not treated as 0")
	}
}

func TestSetBasics(t *testing.T) {
	s := &Set{Name: "s", N: 3, H: 1, W: 2, Pix: []uint8{0, 255, 51, 102, 1, 2}, Labels: []int{1, 0, 1}, Classes: []string{"a", "b"}}
	if err := s.Validate(); err != nil {
		t.Fatal(err)
	}
	f := s.Float(nil, 1)
	if f[0] != 0.2 || f[1] != 0.4 {
		t.Errorf("Float %v", f)
	}
	buf := make([]float32, 10)
	if g := s.Float(buf, 0); &g[0] != &buf[0] || len(g) != 2 || g[1] != 1 {
		t.Error("Float did not reuse dst")
	}
	sub := s.Subset([]int{2, 0})
	if sub.N != 2 || sub.Pix[0] != 1 || sub.Labels[1] != 1 || !equalInts(sub.ClassCounts(), []int{0, 2}) {
		t.Errorf("Subset %+v", sub)
	}
	sub.Pix[0] = 9
	if s.Pix[4] != 1 {
		t.Error("Subset shares pixels")
	}
	for _, bad := range []*Set{
		{N: -1},
		{N: 1, H: 1, W: 1, Pix: nil},
		{N: 1, H: 1, W: 1, Pix: []uint8{0}},
		{N: 1, H: 1, W: 1, Pix: []uint8{0}, Labels: []int{3}, Classes: []string{"a"}},
	} {
		if bad.Validate() == nil {
			t.Errorf("Validate accepted %+v", bad)
		}
	}
	defer func() {
		if recover() == nil {
			t.Error("Image(3) did not panic")
		}
	}()
	s.Image(3)
}
