package datasets

import (
	"math"
	"slices"
	"strings"
	"testing"
)

// framed returns an h×w photo that is 1 within border pixels of an edge and
// 0 inside.
func framed(h, w, border int) Photo {
	p := Photo{Name: "frame", H: h, W: w, Pix: make([]float32, h*w)}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			if y < border || x < border || y >= h-border || x >= w-border {
				p.Pix[y*w+x] = 1
			}
		}
	}
	return p
}

func TestSamplePatches(t *testing.T) {
	ph := []Photo{framed(20, 30, 3), framed(11, 11, 3)}
	p, err := SamplePatches(ph, PatchConfig{Size: 5, Count: 500, Seed: 9, Border: 3})
	if err != nil {
		t.Fatal(err)
	}
	if p.N != 500 || p.Size != 5 || len(p.Pix) != 500*25 {
		t.Fatalf("%d patches of %d", p.N, p.Size)
	}
	// No patch touches the border.
	for i, v := range p.Pix {
		if v != 0 {
			t.Fatalf("patch %d touches the %d px border", i/25, 3)
		}
	}
	// Every position is reachable: with border 2 on the 11×11 photo, the
	// corner patches must include frame pixels at rows/cols 2 and 8.
	q, _ := SamplePatches(ph[1:], PatchConfig{Size: 5, Count: 400, Seed: 1, Border: 2})
	var edge int
	for i := 0; i < q.N; i++ {
		if slices.Contains(q.Patch(i), 1) {
			edge++
		}
	}
	if edge == 0 || edge == q.N {
		t.Errorf("%d of %d patches reach the frame ring", edge, q.N)
	}
	// Deterministic in the seed.
	a, _ := SamplePatches(ph, PatchConfig{Size: 3, Count: 50, Seed: 4})
	b, _ := SamplePatches(ph, PatchConfig{Size: 3, Count: 50, Seed: 4})
	c, _ := SamplePatches(ph, PatchConfig{Size: 3, Count: 50, Seed: 5})
	if !slices.Equal(a.Pix, b.Pix) || slices.Equal(a.Pix, c.Pix) {
		t.Error("sampling not determined by the seed")
	}
	// Defaults: 10,000 patches of 16×16.
	real, err := Photos()
	if err != nil {
		t.Fatal(err)
	}
	d, err := SamplePatches(real, PatchConfig{})
	if err != nil || d.N != 10000 || d.Size != 16 {
		t.Errorf("defaults: %v %d×%d", err, d.N, d.Size)
	}
}

func TestSamplePatchesErrors(t *testing.T) {
	ph := []Photo{framed(10, 10, 0)}
	for _, c := range []struct {
		ph   []Photo
		cfg  PatchConfig
		frag string
	}{
		{ph, PatchConfig{Size: -1}, "size"},
		{ph, PatchConfig{Border: -1}, "border"},
		{ph, PatchConfig{Size: 8, Border: 2}, "too small"},
		{nil, PatchConfig{}, "no photos"},
		{[]Photo{{Name: "bad", H: 3, W: 3, Pix: make([]float32, 8)}}, PatchConfig{Size: 2}, "holds 8"},
		{ph, PatchConfig{Size: 1 << 10, Count: 1 << 10}, "MaxPatchValues"},
	} {
		if _, err := SamplePatches(c.ph, c.cfg); err == nil || !strings.Contains(err.Error(), c.frag) {
			t.Errorf("%+v: %v, want mention of %q", c.cfg, err, c.frag)
		}
	}
}

// TestRemoveMeanAndContrast: mean removal leaves zero-mean patches; contrast
// normalisation gives zero mean and variance v/(v+eps), the formula of Coates,
// Lee & Ng (2011).
func TestRemoveMeanAndContrast(t *testing.T) {
	p := &Patches{N: 2, Size: 2, Pix: []float32{0.1, 0.2, 0.3, 0.6, 0.5, 0.5, 0.5, 0.5}}
	q := &Patches{N: 2, Size: 2, Pix: slices.Clone(p.Pix)}
	p.RemoveMean()
	want := []float32{-0.2, -0.1, 0, 0.3, 0, 0, 0, 0}
	for i := range want {
		if math.Abs(float64(p.Pix[i]-want[i])) > 1e-7 {
			t.Errorf("RemoveMean[%d] = %v, want %v", i, p.Pix[i], want[i])
		}
	}
	const eps = 0.01
	q.NormalizeContrast(eps)
	v := (0.04 + 0.01 + 0 + 0.09) / 4.0 // population variance of patch 0
	k := 1 / math.Sqrt(v+eps)
	for i := 0; i < 4; i++ {
		if math.Abs(float64(q.Pix[i])-float64(want[i])*k) > 1e-6 {
			t.Errorf("NormalizeContrast[%d] = %v, want %v", i, q.Pix[i], float64(want[i])*k)
		}
	}
	for i := 4; i < 8; i++ {
		if q.Pix[i] != 0 {
			t.Errorf("flat patch became %v", q.Pix[i])
		}
	}
	r := &Patches{N: 1, Size: 1, Pix: []float32{3}}
	r.NormalizeContrast(0) // default eps, single pixel: zero
	if r.Pix[0] != 0 {
		t.Errorf("1-pixel patch: %v", r.Pix[0])
	}
}
