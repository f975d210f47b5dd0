package datasets

import (
	"encoding/json"
	"math"
	"os"
	"slices"
	"strings"
	"testing"
)

// resizeTol bounds |ours − scikit-image| for the bilinear item scaling: both
// compute the same weighted sum of four bytes/255, ours in float64 rounded to
// float32 (relative error 6e-8), the reference rounded to 1e-10.
const resizeTol = 1e-6

// TestScaleItemMatchesSkimage compares the item scaling and its ink box with
// scikit-image 0.19.3's transform.resize(order=1, mode='edge',
// anti_aliasing=False) and a NumPy tight box of the pixels > InkLevel
// (testdata/datasets/gen_scene.py).
func TestScaleItemMatchesSkimage(t *testing.T) {
	raw, err := os.ReadFile("../testdata/datasets/scene/resize.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref map[string]json.RawMessage
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	var bytes []uint8
	var ink float64
	if err := json.Unmarshal(ref["bytes"], &bytes); err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(ref["ink_level"], &ink); err != nil || ink != InkLevel {
		t.Fatalf("reference ink level %v, ours %v (%v)", ink, InkLevel, err)
	}
	set := &Set{Name: "ref", N: 1, H: 28, W: 28, Pix: bytes, Labels: []int{0}, Classes: []string{"a"}}
	for _, c := range []struct {
		key  string
		h, w int
	}{{"22", 22, 22}, {"28", 28, 28}, {"31", 31, 31}, {"35", 35, 35}, {"45", 45, 45}, {"31x22", 31, 22}} {
		var want []float64
		var box [4]int
		if err := json.Unmarshal(ref["resize-"+c.key], &want); err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(ref["box-"+c.key], &box); err != nil {
			t.Fatal(err)
		}
		got := scaleItem(nil, set, 0, c.h, c.w)
		if len(got) != len(want) {
			t.Fatalf("%s: %d pixels, skimage %d", c.key, len(got), len(want))
		}
		worst := 0.0
		for i := range want {
			worst = max(worst, math.Abs(float64(got[i])-want[i]))
		}
		if worst > resizeTol {
			t.Errorf("%s: max |ours − skimage| = %g > %g", c.key, worst, resizeTol)
		}
		if b, ok := inkBox(got, c.h, c.w); !ok || b != box {
			t.Errorf("%s: ink box %v, NumPy %v", c.key, b, box)
		}
	}
}

// inkSet returns n synthetic 28×28 items: image i is a filled rectangle of
// grey 255 whose size and place depend on i, on black; labels i mod 3.
func inkSet(n int) *Set {
	s := &Set{Name: "rects", N: n, H: 28, W: 28, Pix: make([]uint8, n*784), Labels: make([]int, n), Classes: []string{"a", "b", "c"}}
	for i := range n {
		x0, y0 := 2+i%7, 3+(i/7)%5
		x1, y1 := x0+6+i%13, y0+8+i%11
		for y := y0; y < min(y1, 28); y++ {
			for x := x0; x < min(x1, 28); x++ {
				s.Pix[i*784+y*28+x] = 255
			}
		}
		s.Labels[i] = i % 3
	}
	return s
}

// sceneSet is MNIST's test split when present, else the synthetic items.
func sceneSet(t *testing.T) *Set {
	t.Helper()
	s, err := LoadMNIST(Test, "")
	if err != nil {
		t.Logf("MNIST absent (%v); using synthetic items", err)
		return inkSet(500)
	}
	return s
}

func mustBuilder(t testing.TB, set *Set, cfg SceneConfig) *SceneBuilder {
	t.Helper()
	b, err := NewSceneBuilder(set, cfg)
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// TestSceneBoxesHoldAllInk checks the ground truth against the frame itself:
// on a black belt without lint, every pixel above InkLevel lies in some
// item's box; a single item's box is exactly the tight box of the frame's
// ink; and each box's size is the source item's ink box scaled by 0.8-1.6
// (within one pixel per edge of resampling).
func TestSceneBoxesHoldAllInk(t *testing.T) {
	set := sceneSet(t)
	multi := mustBuilder(t, set, SceneConfig{Seed: 3})
	single := mustBuilder(t, set, SceneConfig{MaxItems: 1, Seed: 4})
	var s Scene
	for k := range 60 {
		multi.Scene(&s, k)
		if len(s.Items) < 1 || len(s.Items) > DefaultSceneMaxItems {
			t.Fatalf("scene %d holds %d items, want 1 … %d", k, len(s.Items), DefaultSceneMaxItems)
		}
		for y := range s.H {
			for x := range s.W {
				if s.Pix[y*s.W+x] <= InkLevel {
					continue
				}
				if !slices.ContainsFunc(s.Items, func(it SceneItem) bool {
					return it.Box[0] <= x && x < it.Box[2] && it.Box[1] <= y && y < it.Box[3]
				}) {
					t.Fatalf("scene %d: ink at (%d,%d) = %v outside every box %v", k, x, y, s.Pix[y*s.W+x], s.Items)
				}
			}
		}
		for _, it := range s.Items {
			if it.Class != set.Labels[it.Source] {
				t.Errorf("scene %d: class %d, source %d has label %d", k, it.Class, it.Source, set.Labels[it.Source])
			}
			src, _ := inkBox(scaleItem(nil, set, it.Source, 28, 28), 28, 28)
			for d, got := range []int{it.Width(), it.Height()} {
				n := float64(src[d+2] - src[d])
				if lo, hi := math.Floor(0.8*n)-2, math.Ceil(1.6*n)+2; float64(got) < lo || float64(got) > hi {
					t.Errorf("scene %d: box side %d, source ink side %v: outside the scales 0.8-1.6 [%v, %v]", k, got, n, lo, hi)
				}
			}
		}

		single.Scene(&s, k)
		if len(s.Items) != 1 {
			t.Fatalf("single scene %d holds %d items", k, len(s.Items))
		}
		var tight [4]int
		frame := make([]float32, len(s.Pix))
		copy(frame, s.Pix)
		tight, _ = inkBoxRect(frame, s.W, s.H)
		if tight != s.Items[0].Box {
			t.Errorf("single scene %d: box %v, tight box of the frame's ink %v", k, s.Items[0].Box, tight)
		}
	}
}

// inkBoxRect is the tight box of the pixels above InkLevel of a w×h frame,
// written independently of inkBox.
func inkBoxRect(p []float32, w, h int) ([4]int, bool) {
	x0, y0, x1, y1 := w, h, -1, -1
	for i, v := range p {
		if v > InkLevel {
			x, y := i%w, i/w
			x0, y0, x1, y1 = min(x0, x), min(y0, y), max(x1, x), max(y1, y)
		}
	}
	return [4]int{x0, y0, x1 + 1, y1 + 1}, x1 >= 0
}

// TestSceneOverlapLimit checks that no two boxes overlap more than the set
// limit, including "no shared pixel", on crowded frames.
func TestSceneOverlapLimit(t *testing.T) {
	set := sceneSet(t)
	for _, lim := range []float64{0.1, 0.3, -1} {
		b := mustBuilder(t, set, SceneConfig{W: 96, H: 96, MinItems: 4, MaxItems: 6, MaxOverlap: lim, Seed: 11})
		var s Scene
		crowded := 0
		for k := range 80 {
			b.Scene(&s, k)
			crowded += len(s.Items)
			for i := range s.Items {
				for j := i + 1; j < len(s.Items); j++ {
					if o := Overlap(s.Items[i].Box, s.Items[j].Box); o > max(lim, 0) {
						t.Errorf("limit %v scene %d: boxes %v and %v overlap %.3f", lim, k, s.Items[i].Box, s.Items[j].Box, o)
					}
				}
			}
		}
		if crowded < 80*3 {
			t.Errorf("limit %v: only %d items in 80 frames; the frames should stay crowded", lim, crowded)
		}
	}
}

// TestOverlap checks Overlap on hand-worked boxes: [0,0,10,10) and
// [5,5,15,15) share 5×5 = 25 px of the smaller 100 → 0.25; a 2×2 box inside
// a 10×10 → 1; touching edges share nothing → 0.
func TestOverlap(t *testing.T) {
	for _, c := range []struct {
		a, b [4]int
		want float64
	}{
		{[4]int{0, 0, 10, 10}, [4]int{5, 5, 15, 15}, 0.25},
		{[4]int{0, 0, 10, 10}, [4]int{3, 3, 5, 5}, 1},
		{[4]int{0, 0, 10, 10}, [4]int{10, 0, 20, 10}, 0},
		{[4]int{0, 0, 10, 4}, [4]int{2, 1, 4, 30}, 6.0 / 40},
	} {
		if got := Overlap(c.a, c.b); math.Abs(got-c.want) > 1e-15 {
			t.Errorf("Overlap(%v, %v) = %v, want %v", c.a, c.b, got, c.want)
		}
	}
}

// TestSceneDeterminism checks that scene k depends only on (set, config, k):
// two builders, any order, reused buffers give identical frames; another
// seed gives other frames.
func TestSceneDeterminism(t *testing.T) {
	set := sceneSet(t)
	cfg := SceneConfig{Background: Texture, Lint: 6, EmptyFrac: 0.2, Seed: 42}
	a, b := mustBuilder(t, set, cfg), mustBuilder(t, set, cfg)
	fwd := a.Scenes(0, 12)
	var s Scene
	for k := 11; k >= 0; k-- {
		b.Scene(&s, k)
		if !slices.Equal(s.Pix, fwd[k].Pix) || !slices.Equal(s.Items, fwd[k].Items) {
			t.Fatalf("scene %d differs between builders or orders", k)
		}
	}
	cfg.Seed = 43
	other := mustBuilder(t, set, cfg).Scenes(0, 12)
	same := 0
	for k := range other {
		if slices.Equal(other[k].Pix, fwd[k].Pix) {
			same++
		}
	}
	if same > 0 {
		t.Errorf("%d of 12 scenes equal under another seed", same)
	}
	c1, _ := Clutter(nil, set, 5, Clutter60)
	c2, _ := Clutter(nil, set, 5, Clutter60)
	if !slices.Equal(c1.Pix, c2.Pix) || !slices.Equal(c1.Items, c2.Items) {
		t.Error("Clutter is not deterministic")
	}
}

// TestSceneBackgrounds checks the belts: a Texture belt is a stretched photo
// crop spanning exactly [0, TextureLevel] with real texture (not flat), a
// Flat belt is its Level, EmptyFrac near its rate gives frames without items.
func TestSceneBackgrounds(t *testing.T) {
	set := inkSet(40)
	b := mustBuilder(t, set, SceneConfig{Background: Texture, EmptyFrac: 1, Seed: 1})
	var s Scene
	for k := range 10 {
		b.Scene(&s, k)
		if len(s.Items) != 0 {
			t.Fatalf("EmptyFrac 1 gave %d items", len(s.Items))
		}
		lo, hi := slices.Min(s.Pix), slices.Max(s.Pix)
		if lo != 0 || math.Abs(float64(hi)-DefaultTextureLevel) > 1e-6 {
			t.Errorf("texture spans [%v, %v], want [0, %v]", lo, hi, DefaultTextureLevel)
		}
		var m, v float64
		for _, p := range s.Pix {
			m += float64(p)
		}
		m /= float64(len(s.Pix))
		for _, p := range s.Pix {
			v += (float64(p) - m) * (float64(p) - m)
		}
		if sd := math.Sqrt(v / float64(len(s.Pix))); sd < 0.02 {
			t.Errorf("texture scene %d is nearly flat (sd %v)", k, sd)
		}
	}
	flat := mustBuilder(t, set, SceneConfig{Level: 0.25, EmptyFrac: 0.5, Seed: 2})
	empty := 0
	for k := range 200 {
		flat.Scene(&s, k)
		if len(s.Items) == 0 {
			empty++
			if slices.Min(s.Pix) != 0.25 || slices.Max(s.Pix) != 0.25 {
				t.Fatalf("empty flat frame spans [%v, %v], want 0.25", slices.Min(s.Pix), slices.Max(s.Pix))
			}
		}
	}
	// Binomial(200, 0.5): sd 7.1, so 100 ± 30 fails by chance with p < 1e-5.
	if empty < 70 || empty > 130 {
		t.Errorf("EmptyFrac 0.5 gave %d empty frames of 200", empty)
	}
}

// TestSceneLintFromSplit checks lint: fragments come only from the split
// given (a split whose every image is grey 200 can only leave pixels of
// 0 or 200/255 outside the boxes), there are at most Lint·LintSize² of them
// per frame, and they do appear.
func TestSceneLintFromSplit(t *testing.T) {
	set := &Set{Name: "grey", N: 10, H: 28, W: 28, Pix: make([]uint8, 10*784), Labels: make([]int, 10), Classes: []string{"a"}}
	for i := range set.Pix {
		set.Pix[i] = 200
	}
	b := mustBuilder(t, set, SceneConfig{EmptyFrac: 1, Lint: 5, LintSize: 6, Seed: 9})
	var s Scene
	total := 0
	for k := range 20 {
		b.Scene(&s, k)
		n := 0
		for _, v := range s.Pix {
			switch v {
			case 0:
			case 200.0 / 255:
				n++
			default:
				t.Fatalf("scene %d: pixel %v is neither belt nor lint of the split", k, v)
			}
		}
		if n > 5*36 {
			t.Errorf("scene %d: %d lint pixels, at most %d", k, n, 5*36)
		}
		total += n
	}
	if total == 0 {
		t.Error("no lint in 20 frames")
	}
}

// TestClutterProtocol checks the published layout of cluttered translated
// MNIST (Mnih et al. 2014): a 60×60 (or 100×100) canvas, the digit unscaled
// and entirely inside it, one item whose box is the digit's ink, and no more
// than Fragments·8² clutter pixels outside the digit's square; with no
// fragments the canvas is exactly the translated digit.
func TestClutterProtocol(t *testing.T) {
	set := sceneSet(t)
	for _, cfg := range []ClutterConfig{Clutter60, Clutter100, {}} {
		c := cfg.withDefaults()
		for k := range 40 {
			s, err := Clutter(nil, set, k, cfg)
			if err != nil {
				t.Fatal(err)
			}
			if s.W != c.Size || s.H != c.Size || len(s.Items) != 1 || s.Items[0].Class != set.Labels[k] {
				t.Fatalf("%+v image %d: %d×%d with %v", c, k, s.W, s.H, s.Items)
			}
			src, _ := inkBox(scaleItem(nil, set, k, 28, 28), 28, 28)
			box := s.Items[0].Box
			ox, oy := box[0]-src[0], box[1]-src[1]
			if box[2]-box[0] != src[2]-src[0] || box[3]-box[1] != src[3]-src[1] || ox < 0 || oy < 0 || ox+28 > c.Size || oy+28 > c.Size {
				t.Fatalf("%+v image %d: box %v, source ink %v", c, k, box, src)
			}
			clutter := 0
			for y := range s.H {
				for x := range s.W {
					inDigit := x >= ox && x < ox+28 && y >= oy && y < oy+28
					if !inDigit && s.Pix[y*s.W+x] > 0 {
						clutter++
					}
					if inDigit && s.Pix[y*s.W+x] < float32(set.Image(k)[(y-oy)*28+x-ox])/255 {
						t.Fatalf("image %d: the clutter darkened the digit at (%d,%d)", k, x, y)
					}
				}
			}
			if clutter > c.Fragments*64 {
				t.Errorf("%+v image %d: %d clutter pixels > %d", c, k, clutter, c.Fragments*64)
			}
		}
	}
	none, err := Clutter(nil, set, 7, ClutterConfig{Size: 40, Fragments: -1})
	if err != nil {
		t.Fatal(err)
	}
	box := none.Items[0].Box
	src, _ := inkBox(scaleItem(nil, set, 7, 28, 28), 28, 28)
	ox, oy := box[0]-src[0], box[1]-src[1]
	for y := range 40 {
		for x := range 40 {
			want := float32(0)
			if x >= ox && x < ox+28 && y >= oy && y < oy+28 {
				want = float32(set.Image(7)[(y-oy)*28+x-ox]) / 255
			}
			if none.Pix[y*40+x] != want {
				t.Fatalf("no fragments: canvas (%d,%d) = %v, translated digit %v", x, y, none.Pix[y*40+x], want)
			}
		}
	}
}

// TestSceneConfigErrors checks that each bad configuration is refused with
// an error naming the field and its range.
func TestSceneConfigErrors(t *testing.T) {
	set := inkSet(20)
	for _, c := range []struct {
		cfg  SceneConfig
		want string
	}{
		{SceneConfig{W: -1}, "size"},
		{SceneConfig{W: 40, H: 40}, "cannot hold"},
		{SceneConfig{MinItems: 4, MaxItems: 2}, "MinItems"},
		{SceneConfig{EmptyFrac: 1.5}, "EmptyFrac"},
		{SceneConfig{MinScale: -1}, "MinScale"},
		{SceneConfig{MaxOverlap: 1}, "MaxOverlap"},
		{SceneConfig{Background: 7}, "Background"},
		{SceneConfig{Level: 1}, "Level"},
		{SceneConfig{TextureLevel: 2}, "TextureLevel"},
		{SceneConfig{Lint: 1, LintSize: 29}, "LintSize"},
	} {
		if _, err := NewSceneBuilder(set, c.cfg); err == nil || !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), "datasets: ") {
			t.Errorf("%+v: error %v, want one naming %q", c.cfg, err, c.want)
		}
	}
	if _, err := NewSceneBuilder(&Set{}, SceneConfig{}); err == nil {
		t.Error("empty set accepted")
	}
	for _, c := range []ClutterConfig{{Size: 20}, {Size: 1 << 13}, {FragmentSize: 30}} {
		if _, err := Clutter(nil, set, 0, c); err == nil || !strings.HasPrefix(err.Error(), "datasets: ") {
			t.Errorf("%+v: error %v", c, err)
		}
	}
	if _, err := Clutter(nil, set, 20, ClutterConfig{}); err == nil {
		t.Error("image index 20 of 20 accepted")
	}
}
