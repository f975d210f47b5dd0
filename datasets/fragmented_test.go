package datasets

import (
	"bytes"
	"strings"
	"testing"
)

// TestFragmentedProtocol checks Set.Fragmented against the clutter protocol
// of Mnih et al. (2014, "Recurrent Models of Visual Attention": 8×8
// fragments of other images of the split pasted at random places), here at
// the image's own size: every image keeps its label, no pixel of the item is
// darkened (fragments are pasted with max), at most Fragments·8² pixels
// change, and most images do change; the result is the same on a second
// call, and with no fragments it is the set itself.
func TestFragmentedProtocol(t *testing.T) {
	set := inkSet(60)
	f, err := set.Fragmented(ClutterConfig{Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	if f.N != set.N || f.H != 28 || f.W != 28 || len(f.Labels) != set.N {
		t.Fatalf("fragmented set %d of %d×%d", f.N, f.H, f.W)
	}
	changedImages := 0
	for k := range set.N {
		if f.Labels[k] != set.Labels[k] {
			t.Fatalf("image %d: label %d, want %d", k, f.Labels[k], set.Labels[k])
		}
		a, b := set.Image(k), f.Image(k)
		changed := 0
		for i := range a {
			if b[i] < a[i] {
				t.Fatalf("image %d pixel %d darkened: %d < %d", k, i, b[i], a[i])
			}
			if b[i] != a[i] {
				changed++
			}
		}
		if changed > Clutter60.Fragments*Clutter60.FragmentSize*Clutter60.FragmentSize {
			t.Errorf("image %d: %d pixels changed, more than four 8×8 fragments", k, changed)
		}
		if changed > 0 {
			changedImages++
		}
	}
	if changedImages < set.N/2 {
		t.Errorf("only %d of %d images got fragments", changedImages, set.N)
	}
	g, err := set.Fragmented(ClutterConfig{Seed: 3})
	if err != nil || !bytes.Equal(g.Pix, f.Pix) {
		t.Fatalf("second call differs (%v)", err)
	}
	none, err := set.Fragmented(ClutterConfig{Fragments: -1})
	if err != nil || !bytes.Equal(none.Pix, set.Pix) {
		t.Fatalf("no fragments: the set changed (%v)", err)
	}
}

// TestFragmentedErrors checks that a canvas size other than the image's and
// non-square images are refused with an error naming the cause.
func TestFragmentedErrors(t *testing.T) {
	set := inkSet(10)
	if _, err := set.Fragmented(ClutterConfig{Size: 60}); err == nil || !strings.Contains(err.Error(), "Size 60") {
		t.Errorf("Size 60: error %v", err)
	}
	rect := &Set{Name: "r", N: 1, H: 20, W: 28, Pix: make([]uint8, 560), Labels: []int{0}, Classes: []string{"a"}}
	if _, err := rect.Fragmented(ClutterConfig{}); err == nil || !strings.HasPrefix(err.Error(), "datasets: ") {
		t.Errorf("20×28 images: error %v", err)
	}
}
