package datasets

import (
	"github.com/striate/striate/internal/raster"

	"fmt"
	"math"
	"math/rand/v2"
	"slices"
)

// Scene is one grey frame of W×H pixels holding zero or more items, with
// their ground truth:
//
//	pixel (y, x) = Pix[y*W+x]   values in [0,1], 0 black … 1 white
//
// A zero Scene is empty. Scene is plain data.
type Scene struct {
	W, H  int
	Pix   []float32
	Items []SceneItem
}

// SceneItem is the ground truth of one item in a Scene: its class (an index
// into the classes of the Set it came from) and its box in pixels,
//
//	Box = [x0, y0, x1, y1)   half-open: the item covers columns x0 … x1−1 and rows y0 … y1−1,
//	                         width x1−x0, height y1−y0, 0 ≤ x0 < x1 ≤ W, 0 ≤ y0 < y1 ≤ H
//
// (PASCAL VOC's inclusive pixel boxes [x0, x1] are [x0, x1+1) here). Source
// is the index of the item's image in its Set, or −1 when unknown (a scene
// read from a folder).
type SceneItem struct {
	Box    [4]int
	Class  int
	Source int
}

// Width and Height return the box's size in pixels.
func (it SceneItem) Width() int  { return it.Box[2] - it.Box[0] }
func (it SceneItem) Height() int { return it.Box[3] - it.Box[1] }

// Background chooses what the items of a scene lie on.
type Background int

const (
	// Flat fills the frame with one grey level, SceneConfig.Level.
	Flat Background = iota
	// Texture fills the frame with a crop of one of the embedded photos
	// named in BeltTextures, stretched linearly from its own minimum and
	// maximum to [0, SceneConfig.TextureLevel].
	Texture
)

func (b Background) String() string {
	switch b {
	case Flat:
		return "flat"
	case Texture:
		return "texture"
	}
	return fmt.Sprintf("Background(%d)", int(b))
}

// BeltTextures names the embedded photos (see Photos) that Texture
// backgrounds are cut from: the three that are textures rather than scenes.
var BeltTextures = []string{"brick", "grass", "gravel"}

// Defaults of SceneConfig's zero fields.
const (
	DefaultSceneSize     = 128  // frame width and height, px
	DefaultSceneMaxItems = 5    // items per frame at most
	DefaultMinItemScale  = 0.8  // smallest item, × the set's image size
	DefaultMaxItemScale  = 1.6  // largest item, × the set's image size
	DefaultMaxOverlap    = 0.1  // intersection / smaller box
	DefaultTextureLevel  = 0.35 // brightest texture grey
	DefaultLintSize      = 8    // side of a lint fragment, px
)

// InkLevel is the grey level above which a pixel of a scaled item counts as
// its ink: the ground-truth Box is the tight box of those pixels. 0.1 (about
// 26 of 255) drops the faint halo that resampling spreads around strokes but
// keeps every stroke pixel of MNIST and Fashion-MNIST (common practice: the
// boxes are meant to frame what a person would call the item).
const InkLevel = 0.1

// placeTries is how many random positions are tried for one item before it
// is left out of its frame (then the frame holds fewer items than drawn).
const placeTries = 200

// MaxScenePixels bounds W·H of a built frame (16 megapixels, 64 MiB of
// float32), so that a mistyped size fails fast instead of exhausting memory.
const MaxScenePixels = 16 << 20

// SceneConfig describes random scenes built from one split of a Set. Every
// zero field means its documented default, whatever the others hold.
//
// Items are composited with max: each frame pixel becomes the larger of the
// frame and the item (bright ink on a dark belt, as MNIST and Fashion-MNIST
// are drawn), so an item never darkens what lies under it and a box
// overlapping another keeps both items' ink.
type SceneConfig struct {
	W, H int // frame size in pixels; default DefaultSceneSize each

	// MinItems and MaxItems bound the number of items per frame, drawn
	// uniformly from MinItems … MaxItems; defaults 1 and DefaultSceneMaxItems.
	// Use EmptyFrac for frames with no item.
	MinItems, MaxItems int

	// EmptyFrac is the probability that a frame holds no item at all (only
	// background and lint), in [0,1]; default 0.
	EmptyFrac float64

	// MinScale and MaxScale bound each item's size as a factor of the set's
	// image size (28 px for MNIST), drawn uniformly; defaults 0.8 and 1.6.
	MinScale, MaxScale float64

	// MaxOverlap bounds the overlap of any two items' boxes, measured as
	// intersection area / area of the smaller box, in [0,1); default 0.1.
	// A negative value allows no shared pixel at all.
	MaxOverlap float64

	Background Background // default Flat
	// Level is the grey of a Flat background, in [0,1); default 0 (black).
	Level float64
	// TextureLevel is the brightest grey of a Texture background, in (0,1];
	// default DefaultTextureLevel.
	TextureLevel float64

	// Lint is the number of lint fragments per frame (default 0): squares of
	// LintSize px cut from random places of other random images of the same
	// split, pasted with max at random places anywhere in the frame.
	Lint     int
	LintSize int // default DefaultLintSize

	Seed uint64
}

// withDefaults returns c with every zero field replaced by its default.
func (c SceneConfig) withDefaults() SceneConfig {
	if c.W == 0 {
		c.W = DefaultSceneSize
	}
	if c.H == 0 {
		c.H = DefaultSceneSize
	}
	if c.MinItems == 0 {
		c.MinItems = 1
	}
	if c.MaxItems == 0 {
		c.MaxItems = max(DefaultSceneMaxItems, c.MinItems)
	}
	if c.MinScale == 0 {
		c.MinScale = DefaultMinItemScale
	}
	if c.MaxScale == 0 {
		c.MaxScale = max(DefaultMaxItemScale, c.MinScale)
	}
	if c.MaxOverlap == 0 {
		c.MaxOverlap = DefaultMaxOverlap
	}
	if c.TextureLevel == 0 {
		c.TextureLevel = DefaultTextureLevel
	}
	if c.LintSize == 0 {
		c.LintSize = DefaultLintSize
	}
	return c
}

// validate checks c (after defaults) against the set it will draw from.
func (c SceneConfig) validate(set *Set) error {
	if set == nil || set.N == 0 || set.H == 0 || set.W == 0 {
		return fmt.Errorf("datasets: scenes need a non-empty Set of items; load a split first (LoadMNIST, LoadFashionMNIST, LoadFolder)")
	}
	if err := set.Validate(); err != nil {
		return err
	}
	switch {
	case c.W < 0 || c.H < 0 || int64(c.W)*int64(c.H) > MaxScenePixels:
		return fmt.Errorf("datasets: SceneConfig size %d×%d is outside 1 … %d pixels; choose W and H ≥ 1 (0 means %d)", c.W, c.H, MaxScenePixels, DefaultSceneSize)
	case c.MinItems < 0 || c.MaxItems < c.MinItems:
		return fmt.Errorf("datasets: SceneConfig items %d … %d: need 1 ≤ MinItems ≤ MaxItems (0 means 1 and %d); use EmptyFrac for empty frames", c.MinItems, c.MaxItems, DefaultSceneMaxItems)
	case !(c.EmptyFrac >= 0 && c.EmptyFrac <= 1):
		return fmt.Errorf("datasets: SceneConfig.EmptyFrac %v is outside [0,1]", c.EmptyFrac)
	case !(c.MinScale > 0 && c.MaxScale >= c.MinScale && !math.IsInf(c.MaxScale, 0)):
		return fmt.Errorf("datasets: SceneConfig scales %v … %v: need 0 < MinScale ≤ MaxScale (0 means %v and %v)", c.MinScale, c.MaxScale, DefaultMinItemScale, DefaultMaxItemScale)
	case !(c.MaxOverlap < 1) || math.IsNaN(c.MaxOverlap):
		return fmt.Errorf("datasets: SceneConfig.MaxOverlap %v must be below 1 (0 means %v, negative means no shared pixel)", c.MaxOverlap, DefaultMaxOverlap)
	case c.Background != Flat && c.Background != Texture:
		return fmt.Errorf("datasets: SceneConfig.Background %v is unknown; use Flat or Texture", c.Background)
	case !(c.Level >= 0 && c.Level < 1):
		return fmt.Errorf("datasets: SceneConfig.Level %v is outside [0,1)", c.Level)
	case !(c.TextureLevel > 0 && c.TextureLevel <= 1):
		return fmt.Errorf("datasets: SceneConfig.TextureLevel %v is outside (0,1]", c.TextureLevel)
	case c.Lint < 0 || c.LintSize < 0 || c.LintSize > min(set.H, set.W):
		return fmt.Errorf("datasets: SceneConfig lint %d fragments of %d px: need Lint ≥ 0 and 1 ≤ LintSize ≤ %d (the item size; 0 means %d)", c.Lint, c.LintSize, min(set.H, set.W), DefaultLintSize)
	}
	if bh, bw := itemSide(set.H, c.MaxScale), itemSide(set.W, c.MaxScale); bw > c.W || bh > c.H {
		return fmt.Errorf("datasets: SceneConfig frame %d×%d cannot hold an item of %d×%d px (%v × %d×%d); enlarge W and H or lower MaxScale", c.W, c.H, bw, bh, c.MaxScale, set.W, set.H)
	}
	return nil
}

// itemSide returns the scaled length of an item side of n px at scale s.
func itemSide(n int, s float64) int { return max(1, int(math.Round(float64(n)*s))) }

// Stream tags of the scene builders (distinct from the package's other tags).
const (
	tagScene   uint64 = 0x5C3E_0001
	tagClutter uint64 = 0x5C3E_0002
)

// SceneBuilder builds seeded random scenes from one split of a Set. Scene k
// depends only on the Set, the configuration and k, never on which other
// scenes were built or in which order, so any split of the work over
// goroutines gives the same frames. Build training scenes only from a
// training split and test scenes only from a test split: the builder uses
// exactly the Set it is given, for items and lint alike.
//
// An item drawn for a frame is left out when it has no ink or finds no
// place within the overlap limit in placeTries (200) random tries; Items
// lists exactly what was placed. (With the defaults, 128×128 frames with
// five items drawn from MNIST keep all five.)
//
// A SceneBuilder is immutable and safe for concurrent use.
type SceneBuilder struct {
	set *Set
	cfg SceneConfig
	tex []Photo
}

// NewSceneBuilder validates cfg for set and returns a builder.
func NewSceneBuilder(set *Set, cfg SceneConfig) (*SceneBuilder, error) {
	cfg = cfg.withDefaults()
	if err := cfg.validate(set); err != nil {
		return nil, err
	}
	b := &SceneBuilder{set: set, cfg: cfg}
	if cfg.Background == Texture {
		photos, err := Photos()
		if err != nil {
			return nil, err
		}
		for _, p := range photos {
			for _, n := range BeltTextures {
				if p.Name == n {
					b.tex = append(b.tex, p)
				}
			}
		}
		if len(b.tex) == 0 {
			return nil, fmt.Errorf("datasets: none of the BeltTextures %v is an embedded photo", BeltTextures)
		}
	}
	return b, nil
}

// Config returns the builder's configuration with its defaults filled in.
func (b *SceneBuilder) Config() SceneConfig { return b.cfg }

// Classes returns the class names of the builder's Set.
func (b *SceneBuilder) Classes() []string { return b.set.Classes }

// Scene builds scene k into dst (reusing dst.Pix and dst.Items) and returns
// it. The items are listed in the order they were placed.
func (b *SceneBuilder) Scene(dst *Scene, k int) *Scene {
	c := b.cfg
	r := newRand(c.Seed^uint64(k)*0xD1B54A32D192ED03, tagScene)
	if dst == nil {
		dst = new(Scene)
	}
	dst.W, dst.H = c.W, c.H
	dst.Pix = resize(dst.Pix, c.W*c.H)
	dst.Items = dst.Items[:0]
	switch c.Background {
	case Flat:
		for i := range dst.Pix {
			dst.Pix[i] = float32(c.Level)
		}
	case Texture:
		b.texture(dst, r)
	}

	n := 0
	if r.Float64() >= c.EmptyFrac {
		n = c.MinItems + r.IntN(c.MaxItems-c.MinItems+1)
	}
	var used []int
	var item []float32
	for range n {
		src := r.IntN(b.set.N)
		s := c.MinScale + (c.MaxScale-c.MinScale)*r.Float64()
		ih, iw := itemSide(b.set.H, s), itemSide(b.set.W, s)
		item = scaleItem(item, b.set, src, ih, iw)
		ink, ok := inkBox(item, ih, iw)
		if !ok {
			continue // an item without ink has nothing to find
		}
		for range placeTries {
			ox, oy := r.IntN(c.W-iw+1), r.IntN(c.H-ih+1)
			box := [4]int{ink[0] + ox, ink[1] + oy, ink[2] + ox, ink[3] + oy}
			if !b.fits(box, dst.Items) {
				continue
			}
			pasteMax(dst, item, ih, iw, ox, oy)
			dst.Items = append(dst.Items, SceneItem{Box: box, Class: b.set.Labels[src], Source: src})
			used = append(used, src)
			break
		}
	}
	for range c.Lint {
		pasteFragment(dst, b.set, r, c.LintSize, used)
	}
	return dst
}

// Scenes builds scenes first … first+n−1.
func (b *SceneBuilder) Scenes(first, n int) []Scene {
	out := make([]Scene, n)
	for i := range out {
		b.Scene(&out[i], first+i)
	}
	return out
}

// fits reports whether box keeps the overlap limit with every placed item.
func (b *SceneBuilder) fits(box [4]int, placed []SceneItem) bool {
	for _, it := range placed {
		// A negative limit acts as 0: no shared pixel.
		if Overlap(box, it.Box) > max(b.cfg.MaxOverlap, 0) {
			return false
		}
	}
	return true
}

// Overlap returns the intersection area of two [x0, y0, x1, y1) boxes
// divided by the area of the smaller one: 0 for disjoint boxes, 1 when one
// lies inside the other. This is the measure SceneConfig.MaxOverlap bounds.
func Overlap(a, b [4]int) float64 {
	iw := min(a[2], b[2]) - max(a[0], b[0])
	ih := min(a[3], b[3]) - max(a[1], b[1])
	if iw <= 0 || ih <= 0 {
		return 0
	}
	small := min((a[2]-a[0])*(a[3]-a[1]), (b[2]-b[0])*(b[3]-b[1]))
	return float64(iw*ih) / float64(small)
}

// texture fills dst with a crop of a random belt texture, stretched from the
// crop's own range to [0, TextureLevel]. Frames larger than the photo read
// it mirrored at its edges.
func (b *SceneBuilder) texture(dst *Scene, r *rand.Rand) {
	p := b.tex[r.IntN(len(b.tex))]
	ox, oy := r.IntN(max(1, p.W-dst.W+1)), r.IntN(max(1, p.H-dst.H+1))
	lo, hi := float32(math.Inf(1)), float32(math.Inf(-1))
	for y := range dst.H {
		sy := raster.Reflect(oy+y, p.H)
		for x := range dst.W {
			v := p.Pix[sy*p.W+raster.Reflect(ox+x, p.W)]
			dst.Pix[y*dst.W+x] = v
			lo, hi = min(lo, v), max(hi, v)
		}
	}
	k := float32(0)
	if hi > lo {
		k = float32(b.cfg.TextureLevel) / (hi - lo)
	}
	for i, v := range dst.Pix {
		dst.Pix[i] = (v - lo) * k
	}
}

// resize returns buf with length n, reusing it when its capacity suffices.
func resize(buf []float32, n int) []float32 {
	if cap(buf) < n {
		return make([]float32, n)
	}
	return buf[:n]
}

// scaleItem resamples image i of set (values /255) to h×w pixels into dst
// and returns it. Pixel centres map as in image resizing,
// source = (dst + ½)·(n/side) − ½ on each axis, sampled bilinearly with the
// edge pixels repeated (scikit-image's resize with order=1, mode='edge' and
// no anti-aliasing); shrinking uses the same sampling (the scales of
// SceneConfig stay above ½, where bilinear sampling still touches every
// source pixel).
func scaleItem(dst []float32, set *Set, i, h, w int) []float32 {
	src := set.Image(i)
	sh, sw := set.H, set.W
	dst = resize(dst, h*w)
	fy, fx := float64(sh)/float64(h), float64(sw)/float64(w)
	for y := range h {
		sy := (float64(y)+0.5)*fy - 0.5
		for x := range w {
			dst[y*w+x] = float32(raster.BilinearEdge(src, sh, sw, sy, (float64(x)+0.5)*fx-0.5) / 255)
		}
	}
	return dst
}

// inkBox returns the tight [x0, y0, x1, y1) box of the pixels above InkLevel
// of an h×w item, and false when there are none.
func inkBox(item []float32, h, w int) ([4]int, bool) {
	box := [4]int{w, h, 0, 0}
	for y := range h {
		for x, v := range item[y*w : (y+1)*w] {
			if v > InkLevel {
				box[0], box[1] = min(box[0], x), min(box[1], y)
				box[2], box[3] = max(box[2], x+1), max(box[3], y+1)
			}
		}
	}
	return box, box[2] > box[0]
}

// pasteMax composites an h×w patch into the frame at (ox, oy) with max,
// clipping what falls outside.
func pasteMax(dst *Scene, patch []float32, h, w, ox, oy int) {
	for y := max(0, -oy); y < h && oy+y < dst.H; y++ {
		row := dst.Pix[(oy+y)*dst.W:]
		for x := max(0, -ox); x < w && ox+x < dst.W; x++ {
			row[ox+x] = max(row[ox+x], patch[y*w+x])
		}
	}
}

// pasteFragment cuts a size×size square from a random place of a random
// image of set other than those in skip and pastes it with max at a random
// place of the frame (fully inside it when it fits, else clipped).
func pasteFragment(dst *Scene, set *Set, r *rand.Rand, size int, skip []int) {
	src := r.IntN(set.N)
	for t := 0; t < 16 && set.N > len(skip) && slices.Contains(skip, src); t++ {
		src = r.IntN(set.N)
	}
	fx, fy := r.IntN(set.W-size+1), r.IntN(set.H-size+1)
	ox, oy := r.IntN(max(1, dst.W-size+1)), r.IntN(max(1, dst.H-size+1))
	img := set.Image(src)
	for y := range size {
		if oy+y >= dst.H {
			break
		}
		row := dst.Pix[(oy+y)*dst.W:]
		for x := range size {
			if ox+x >= dst.W {
				break
			}
			row[ox+x] = max(row[ox+x], float32(img[(fy+y)*set.W+fx+x])/255)
		}
	}
}
