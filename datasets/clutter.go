package datasets

import "fmt"

// ClutterConfig describes the "cluttered translated MNIST" protocol of Mnih,
// Heess, Graves & Kavukcuoglu (2014, "Recurrent Models of Visual
// Attention", NIPS 27): each image of a split is placed, unscaled, at a
// uniformly random position of a black square canvas, and Fragments squares
// of FragmentSize px, cut from random places of other random images of the
// same split, are pasted at random places. The paper's two variants are
// Clutter60 (60×60, four 8×8 fragments) and Clutter100 (100×100, eight).
// Every zero field means the Clutter60 value (so Fragments < 0 asks for
// none); Seed 0 is a seed like any other.
//
// Digit and fragments are composited with max (bright ink on black), the
// rule of SceneConfig, so a fragment never erases the digit's strokes.
type ClutterConfig struct {
	Size         int // canvas side in px; default 60
	Fragments    int // fragments per canvas; default 4, negative for none
	FragmentSize int // fragment side in px; default 8
	Seed         uint64
}

// The two published variants of the protocol (Mnih et al. 2014).
var (
	Clutter60  = ClutterConfig{Size: 60, Fragments: 4, FragmentSize: 8}
	Clutter100 = ClutterConfig{Size: 100, Fragments: 8, FragmentSize: 8}
)

func (c ClutterConfig) withDefaults() ClutterConfig {
	if c.Size == 0 {
		c.Size = Clutter60.Size
	}
	if c.Fragments == 0 {
		c.Fragments = Clutter60.Fragments
	}
	if c.FragmentSize == 0 {
		c.FragmentSize = Clutter60.FragmentSize
	}
	return c
}

// Clutter builds the cluttered canvas of image k of set into dst (reusing
// its buffers) and returns it, with one SceneItem: the image's class and the
// tight box of its ink (pixels above InkLevel) on the canvas. Canvas k
// depends only on (set, cfg, k), so the whole split gives one canvas per
// image in any order. As with SceneBuilder, canvases for testing must come
// from a test split. It returns an error for a bad configuration or an
// image index outside the set.
func Clutter(dst *Scene, set *Set, k int, cfg ClutterConfig) (*Scene, error) {
	c := cfg.withDefaults()
	if set == nil || set.N == 0 {
		return nil, fmt.Errorf("datasets: Clutter needs a non-empty Set; load a split first (LoadMNIST)")
	}
	if k < 0 || k >= set.N {
		return nil, fmt.Errorf("datasets: Clutter image %d is outside the set's [0,%d)", k, set.N)
	}
	switch {
	case c.Size < max(set.H, set.W) || c.Size*c.Size > MaxScenePixels:
		return nil, fmt.Errorf("datasets: ClutterConfig.Size %d must hold the %d×%d image and stay within %d pixels (0 means %d)", c.Size, set.H, set.W, MaxScenePixels, Clutter60.Size)
	case c.FragmentSize < 0 || c.FragmentSize > min(set.H, set.W):
		return nil, fmt.Errorf("datasets: ClutterConfig.FragmentSize %d is outside 1 … %d (0 means %d)", c.FragmentSize, min(set.H, set.W), Clutter60.FragmentSize)
	}
	r := newRand(c.Seed^uint64(k)*0xD1B54A32D192ED03, tagClutter)
	if dst == nil {
		dst = new(Scene)
	}
	dst.W, dst.H = c.Size, c.Size
	dst.Pix = resize(dst.Pix, c.Size*c.Size)
	clear(dst.Pix)
	dst.Items = dst.Items[:0]

	ox, oy := r.IntN(c.Size-set.W+1), r.IntN(c.Size-set.H+1)
	img := set.Image(k)
	box := [4]int{set.W, set.H, 0, 0}
	for y := range set.H {
		row := dst.Pix[(oy+y)*dst.W+ox:]
		for x := range set.W {
			v := float32(img[y*set.W+x]) / 255
			row[x] = v
			if v > InkLevel {
				box[0], box[1] = min(box[0], x), min(box[1], y)
				box[2], box[3] = max(box[2], x+1), max(box[3], y+1)
			}
		}
	}
	if box[2] > box[0] {
		dst.Items = append(dst.Items, SceneItem{Box: [4]int{box[0] + ox, box[1] + oy, box[2] + ox, box[3] + oy},
			Class: set.Labels[k], Source: k})
	}
	skip := []int{k}
	for range c.Fragments {
		pasteFragment(dst, set, r, c.FragmentSize, skip)
	}
	return dst, nil
}

// Fragmented returns a new Set in which image k of s is Clutter's canvas of
// image k at the image's own size: the image in place, unmoved, with
// cfg.Fragments fragments of cfg.FragmentSize px, cut from random places of
// other random images of s, pasted with max at random places (the issue-11
// condition "single 28×28 items with four fragments pasted in": Clutter60's
// fragments without its larger canvas). cfg.Size must be 0 (the image side)
// or the image side, and the images square. Labels, classes and source are
// kept; canvases hold pixels of s, so they are stored exactly. As with
// Clutter, image k depends only on (s, cfg, k), and a test condition must be
// built from a test split.
func (s *Set) Fragmented(cfg ClutterConfig) (*Set, error) {
	if err := s.Validate(); err != nil {
		return nil, err
	}
	if s.N == 0 || s.H != s.W {
		return nil, fmt.Errorf("datasets: Fragmented needs a non-empty set of square images, not %d of %d×%d", s.N, s.H, s.W)
	}
	if cfg.Size == 0 {
		cfg.Size = s.H
	}
	if cfg.Size != s.H {
		return nil, fmt.Errorf("datasets: Fragmented keeps the image size: ClutterConfig.Size %d must be 0 or %d", cfg.Size, s.H)
	}
	out := &Set{Name: s.Name + " (fragments)", N: s.N, H: s.H, W: s.W, Pix: make([]uint8, len(s.Pix)),
		Labels: append([]int(nil), s.Labels...), Classes: append([]string(nil), s.Classes...), Source: s.Source}
	n := s.H * s.W
	var sc *Scene
	for k := range s.N {
		var err error
		if sc, err = Clutter(sc, s, k, cfg); err != nil {
			return nil, err
		}
		px := out.Pix[k*n : (k+1)*n]
		for i, v := range sc.Pix {
			px[i] = uint8(v*255 + 0.5)
		}
	}
	return out, nil
}
